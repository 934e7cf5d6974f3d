/* table_numeric.c — a table column converted to numbers exactly: each field parsed as a
 * decimal, a reference subtracted in integer arithmetic, one rounding to double; and the
 * messages that say why a field is not a number. */
#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "input/table_internal.h"

/* ---------------------------------------------------------------- numbers */

/* 36 significant digits stay below 10^36 < 2^127 / 100, so a difference of two such
 * mantissas cannot overflow a signed 128-bit integer. */
#define MAX_DIGITS 36
/* Exponents are clamped here; beyond it a value is out of double range anyway and the
 * clamp only keeps the scale arithmetic from overflowing. */
#define EXP_CLAMP 1000000000LL


/* value = (neg ? −1 : 1) · dig[0..ndig) · 10^exp, with no leading or trailing zeros
 * in dig; zero has ndig = 0. toolong: more than MAX_DIGITS significant digits. */
typedef struct {
    int neg, ndig, toolong;
    char dig[MAX_DIGITS];
    long long exp;
} decimal;

/* Parse s[0..n) as [sign] digits [. digits] [(e|E) [sign] digits], at least one
 * mantissa digit. Returns 1 on success. */
static int parse_decimal(const char *s, size_t n, decimal *d)
{
    size_t i = 0, nsig = 0, kept = 0, mant = 0;
    long long frac = 0, e = 0;
    int eneg = 0;
    memset(d, 0, sizeof *d);
    if (i < n && (s[i] == '+' || s[i] == '-')) d->neg = s[i++] == '-';
    for (int part = 0; part < 2; part++) {
        for (; i < n && s[i] >= '0' && s[i] <= '9'; i++, mant++) {
            if (part) frac++;
            if (nsig == 0 && s[i] == '0') continue;      /* leading zero */
            if (nsig < MAX_DIGITS) d->dig[nsig] = s[i];
            nsig++;
            if (s[i] != '0') kept = nsig;                /* up to the last nonzero */
        }
        if (part == 0) {
            if (i < n && s[i] == '.') i++;
            else break;
        }
    }
    if (mant == 0) return 0;
    if (i < n && (s[i] == 'e' || s[i] == 'E')) {
        size_t i0;
        i++;
        if (i < n && (s[i] == '+' || s[i] == '-')) eneg = s[i++] == '-';
        i0 = i;
        for (; i < n && s[i] >= '0' && s[i] <= '9'; i++)
            if (e < EXP_CLAMP) e = 10 * e + (s[i] - '0');
        if (i == i0) return 0;
        if (e > EXP_CLAMP) e = EXP_CLAMP;
        if (eneg) e = -e;
    }
    if (i != n) return 0;
    d->toolong = kept > MAX_DIGITS;
    d->ndig = (int)(kept > MAX_DIGITS ? MAX_DIGITS : kept);
    d->exp = e - frac + (long long)(nsig - kept);
    if (kept == 0) d->exp = 0;
    return 1;
}

int sturdy_parse_number(const char *s, double *v)
{
    size_t a, b;
    decimal d;
    if (!s) return 0;
    sturdy_table_trim_range(s, &a, &b);
    if (!parse_decimal(s + a, b - a, &d)) return 0;
    double x = strtod(s + a, NULL);
    if (!isfinite(x)) return 0;
    *v = x;
    return 1;
}

/* Why field `s` is not a usable number, for messages: `buf` (SHOW_LEN + 160 bytes)
 * receives the reason, with a hint at the likely cause. */
static const char *not_number_reason(const char *s, char *buf)
{
    size_t a, b, commas = 0, digits = 0, other = 0;
    char *end, shown[SHOW_LEN];
    sturdy_table_trim_range(s, &a, &b);
    double x = strtod(s + a, &end);
    if ((size_t)(end - s) == b && b > a && !isfinite(x)) return "is not a finite number";
    for (size_t i = a; i < b; i++) {
        if (s[i] == ',') commas++;
        else if (s[i] >= '0' && s[i] <= '9') digits++;
        else if (s[i] != '-' && s[i] != '+') other++;
    }
    if (commas == 1 && digits && !other)
        return "is not a number (the decimal separator must be '.')";
    if (b > a && (s[a] == '<' || s[a] == '>' || !digits)) {
        /* "<LOD", "n.d.", "-": a marker of an unmeasured value */
        char tok[SHOW_LEN];
        size_t n = b - a < SHOW_MAX ? b - a : SHOW_MAX;
        memcpy(tok, s + a, n);
        tok[n] = '\0';
        sturdy_table_show(shown, tok);
        snprintf(buf, SHOW_LEN + 160, "is not a number; if it marks a value that was not "
                 "measured, declare '%s' a missing-value token", shown);
        return buf;
    }
    if (end > s + a && (size_t)(end - s) < b) {
        /* a number, then text: "4.94 MPa", "12%" */
        const char *rest = end;
        while (sturdy_table_is_blank(*rest)) rest++;
        unsigned char c = (unsigned char)*rest;
        if ((c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') || c == '%' || c >= 0x80) {
            sturdy_table_show(shown, rest);
            snprintf(buf, SHOW_LEN + 160, "is not a number: text follows it ('%s'); give "
                     "units in the column name, not in the cells", shown);
            return buf;
        }
    }
    return "is not a number";
}

static sturdy_status numeric_error(const sturdy_table *t, size_t col, size_t r,
                                   const char *what, char *err)
{
    char name[SHOW_LEN], text[SHOW_LEN];
    const char *s = t->cols[col].text[r];
    sturdy_table_show(name, t->cols[col].name);
    sturdy_table_show(text, s);
    if (t->cols[col].missing[r])
        return sturdy_fail(err, STURDY_EDATA, "%s: line %zu (row %zu), column '%s': the value "
                           "is missing (%s%s%s)", t->source, t->line[r], r + 1, name,
                           s[0] ? "'" : "empty field", text, s[0] ? "'" : "");
    return sturdy_fail(err, STURDY_EDATA, "%s: line %zu (row %zu), column '%s': '%s' %s",
                       t->source, t->line[r], r + 1, name, text, what);
}

/* Decimal digits of m, most significant first, into buf (at least 40 bytes). */
static void u128_str(sturdy_u128 m, char *buf)
{
    char tmp[48];
    size_t k = 0;
    do { tmp[k++] = (char)('0' + (int)(m % 10)); m /= 10; } while (m);
    for (size_t i = 0; i < k; i++) buf[i] = tmp[k - 1 - i];
    buf[k] = '\0';
}

/* Round v · 10^(−scale) to double once. Powers 10^0..10^22 are exact doubles, so for
 * |v| < 2^53 one multiplication or division is one correct rounding; otherwise the
 * decimal string goes to strtod, which rounds correctly (glibc). */
static double scaled_to_double(sturdy_i128 v, long long scale)
{
    static const double p10[] = {1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
                                 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21,
                                 1e22};
    const long long maxp = (long long)(sizeof p10 / sizeof p10[0]) - 1;
    int neg = v < 0;
    sturdy_u128 m = neg ? (sturdy_u128)0 - (sturdy_u128)v : (sturdy_u128)v;
    char buf[96];
    if (m == 0) return 0.0;
    if (m < ((sturdy_u128)1 << 53) && scale >= -maxp && scale <= maxp) {
        double x = (double)(uint64_t)m;
        x = scale >= 0 ? x / p10[scale] : x * p10[-scale];
        return neg ? -x : x;
    }
    buf[0] = '-';
    u128_str(m, buf + 1);
    snprintf(buf + strlen(buf), 24, "e%lld", -scale);
    return strtod(neg ? buf : buf + 1, NULL);
}

/* The value of d at decimal scale `scale` (d.exp + scale ≥ 0, fits by construction). */
static sturdy_i128 scaled_mantissa(const decimal *d, long long scale)
{
    sturdy_i128 v = 0;
    for (int k = 0; k < d->ndig; k++) v = 10 * v + (d->dig[k] - '0');
    for (long long k = 0; d->ndig && k < d->exp + scale; k++) v *= 10;
    return d->neg ? -v : v;
}

static int field_decimal(const char *s, decimal *d)
{
    size_t a, b;
    sturdy_table_trim_range(s, &a, &b);
    return parse_decimal(s + a, b - a, d);
}

sturdy_status sturdy_table_numeric(const sturdy_table *t, size_t col, const size_t *rows,
                                   size_t nrows, double *values, double *ref, char *err)
{
    long long scale = LLONG_MIN, top = LLONG_MIN;   /* common scale; max ndig + exp */
    int exact = 1;
    decimal d;
    *ref = 0.0;
    if (col >= t->ncols)
        return sturdy_fail(err, STURDY_EINTERNAL, "%s: column index %zu out of range",
                           t->source, col);
    /* Pass 1: validate, and find the common scale and the largest magnitude. */
    for (size_t i = 0; i < nrows; i++) {
        size_t r = rows[i];
        if (r >= t->nrows)
            return sturdy_fail(err, STURDY_EINTERNAL, "%s: row index %zu out of range",
                               t->source, r);
        const char *s = t->cols[col].text[r];
        if (t->cols[col].missing[r]) return numeric_error(t, col, r, "", err);
        if (!field_decimal(s, &d)) {
            char why[SHOW_LEN + 160];
            return numeric_error(t, col, r, not_number_reason(s, why), err);
        }
        double x = strtod(s, NULL);
        if (!isfinite(x)) return numeric_error(t, col, r, "is out of range", err);
        if (i == 0) *ref = x;
        if (d.toolong) exact = 0;
        if (d.ndig) {
            if (-d.exp > scale) scale = -d.exp;
            if (d.ndig + d.exp > top) top = d.ndig + d.exp;
        }
    }
    if (nrows == 0) return STURDY_OK;
    if (top == LLONG_MIN) {          /* every value is zero */
        for (size_t i = 0; i < nrows; i++) values[i] = 0.0;
        return STURDY_OK;
    }
    if (top + scale > MAX_DIGITS) exact = 0;
    /* Pass 2: differences from the reference, rounded once. */
    sturdy_i128 r0 = 0;
    if (exact) {
        field_decimal(t->cols[col].text[rows[0]], &d);
        r0 = scaled_mantissa(&d, scale);
    }
    for (size_t i = 0; i < nrows; i++) {
        const char *s = t->cols[col].text[rows[i]];
        if (exact) {
            field_decimal(s, &d);
            values[i] = scaled_to_double(scaled_mantissa(&d, scale) - r0, scale);
        } else {
            values[i] = strtod(s, NULL) - *ref;
        }
        if (!isfinite(values[i]))
            return numeric_error(t, col, rows[i],
                                 "is too far from the column's first value to subtract it",
                                 err);
    }
    return STURDY_OK;
}
