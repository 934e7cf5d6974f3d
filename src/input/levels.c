/* levels.c — the levels of a factor: natural order (numbers numerically, digits inside
 * text as whole numbers), the user's order, merging levels equal as numbers, and
 * warnings about levels that are probably one level written two ways. */
#include <assert.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "core/core.h"
#include "input/table_layout.h"
#include "input/levels.h"
#include "sturdy/buf.h"

/* Near-duplicate pairs named in one warning; the rest are counted. */
#define PAIRS_SHOWN 3
/* Level names shown in one message before "and N more". */
#define NAMES_SHOWN 8

static int is_digit(char c) { return c >= '0' && c <= '9'; }

/* Text order with runs of digits compared as whole numbers: "N0" < "N40" < "N120".
 * Returns 0 for texts that differ only in leading zeros of a run ("N01", "N1"). */
static int natural_text_compare(const char *a, const char *b)
{
    while (*a && *b) {
        if (is_digit(*a) && is_digit(*b)) {
            while (*a == '0') a++;
            while (*b == '0') b++;
            size_t la = 0, lb = 0;
            while (is_digit(a[la])) la++;
            while (is_digit(b[lb])) lb++;
            if (la != lb) return la < lb ? -1 : 1;
            int c = memcmp(a, b, la);
            if (c) return c < 0 ? -1 : 1;
            a += la;
            b += lb;
        } else {
            if (*a != *b) return (unsigned char)*a < (unsigned char)*b ? -1 : 1;
            a++;
            b++;
        }
    }
    return *a ? 1 : *b ? -1 : 0;
}

int sturdy_level_compare(const char *a, const char *b)
{
    double x, y;
    int na = sturdy_parse_number(a, &x), nb = sturdy_parse_number(b, &y);
    if (na && nb) {
        if (x < y) return -1;
        if (x > y) return 1;
        return strcmp(a, b); /* "1" and "1.0": equal numbers, distinct levels */
    }
    if (na != nb)
        return na ? -1 : 1;
    int c = natural_text_compare(a, b);
    return c ? c : strcmp(a, b);
}

sturdy_status sturdy_levels_check_orders(const sturdy_model_spec *s, char *err)
{
    for (size_t k = 0; k < s->nlevel_orders; k++) {
        const char *name = s->level_orders[k].factor;
        int found = s->block && name && !strcmp(s->block, name);
        for (size_t f = 0; f < s->nfactors && !found; f++)
            found = !strcmp(s->factors[f], name ? name : "");
        if (!found)
            return sturdy_fail(err, STURDY_EUSAGE,
                               "an order of levels is given for '%s', which is not a "
                               "factor or the block of the model", name ? name : "");
        for (size_t j = 0; j < k; j++)
            if (!strcmp(s->level_orders[j].factor, name))
                return sturdy_fail(err, STURDY_EUSAGE,
                                   "an order of levels is given for '%s' twice", name);
    }
    return STURDY_OK;
}

static int cmp_str_bytes(const void *a, const void *b)
{
    return strcmp(*(const char *const *)a, *(const char *const *)b);
}

/* A distinct level: its text, its index in bytewise order, its group (merged levels
 * share one) and, for the near-duplicate check, its text folded to lower case and
 * trimmed of blanks. */
typedef struct {
    const char *text;
    size_t bytewise, group;
    char *folded;
} level_ref;

static int cmp_level_natural(const void *a, const void *b)
{
    return sturdy_level_compare(((const level_ref *)a)->text, ((const level_ref *)b)->text);
}

static int cmp_level_folded(const void *a, const void *b)
{
    const level_ref *x = *(const level_ref *const *)a, *y = *(const level_ref *const *)b;
    int c = strcmp(x->folded, y->folded);
    return c ? c : strcmp(x->text, y->text);
}

static char *fold(const char *s)
{
    while (*s == ' ' || *s == '\t') s++;
    size_t n = strlen(s);
    while (n && (s[n - 1] == ' ' || s[n - 1] == '\t')) n--;
    char *f = sturdy_malloc(n + 1);
    if (!f) return NULL;
    for (size_t i = 0; i < n; i++)
        f[i] = s[i] >= 'A' && s[i] <= 'Z' ? (char)(s[i] - 'A' + 'a') : s[i];
    f[n] = '\0';
    return f;
}

/* Equal once the blanks around each are removed? */
static int trimmed_equal(const char *a, const char *b)
{
    a += strspn(a, " \t");
    b += strspn(b, " \t");
    size_t la = strlen(a), lb = strlen(b);
    while (la && (a[la - 1] == ' ' || a[la - 1] == '\t')) la--;
    while (lb && (b[lb - 1] == ' ' || b[lb - 1] == '\t')) lb--;
    return la == lb && !memcmp(a, b, la);
}

static sturdy_status add_warning(sturdy_design *d, char *text, char *err)
{
    char **w = text ? sturdy_realloc(d->warnings, (d->nwarnings + 1) * sizeof *w) : NULL;
    if (!w) {
        sturdy_free(text);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    d->warnings = w;
    d->warnings[d->nwarnings++] = text;
    return STURDY_OK;
}

/* One warning per kind of near-duplicate: "ROLE 'NAME' has levels that WHAT: 'a' and
 * 'b', ...; ADVICE" for pairs[0..npairs) of level texts. */
static sturdy_status warn_pairs(sturdy_design *d, const char *role, const char *name,
                                const char *what, const char *advice, const char **pairs,
                                size_t npairs, char *err)
{
    sturdy_buf b;
    if (!npairs) return STURDY_OK;
    sturdy_buf_init(&b);
    sturdy_buf_printf(&b, "%s '%s' has levels that %s: ", role, name, what);
    for (size_t k = 0; k < npairs && k < PAIRS_SHOWN; k++)
        sturdy_buf_printf(&b, "%s'%s' and '%s'", k ? ", " : "", pairs[2 * k],
                          pairs[2 * k + 1]);
    if (npairs > PAIRS_SHOWN) sturdy_buf_printf(&b, ", and %zu more pairs", npairs - PAIRS_SHOWN);
    sturdy_buf_printf(&b, "; %s", advice);
    char *text = b.failed ? NULL : sturdy_strdup(b.data);
    sturdy_buf_free(&b);
    return add_warning(d, text, err);
}

/* Warnings about near-duplicates among nat[0..nl) (natural order, groups assigned). */
static sturdy_status near_duplicates(sturdy_design *d, const char *role, const char *name,
                                     level_ref *nat, size_t nl, int merged, char *err)
{
    sturdy_status st = STURDY_OK;
    const char **pairs = sturdy_malloc(2 * nl * sizeof *pairs);
    level_ref **by = sturdy_malloc(nl * sizeof *by);
    size_t np = 0;
    double x, y;
    if (!pairs || !by) {
        sturdy_free(pairs); sturdy_free(by);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    /* equal numbers sort next to each other in natural order */
    for (size_t j = 1; j < nl; j++)
        if (sturdy_parse_number(nat[j - 1].text, &x) && sturdy_parse_number(nat[j].text, &y) &&
            x == y) {
            assert(np < nl);            /* pairs holds nl pairs */
            pairs[2 * np] = nat[j - 1].text;
            pairs[2 * np + 1] = nat[j].text;
            np++;
        }
    if (merged)
        st = warn_pairs(d, role, name, "are equal as numbers", "each pair was merged into "
                        "one level, named by the first (levels equal as numbers are merged)",
                        pairs, np,
                        err);
    else
        st = warn_pairs(d, role, name, "are equal as numbers, yet count as different "
                        "levels", "if they are the same, merge levels equal as numbers or "
                        "correct the data", pairs, np, err);
    /* equal after folding case and trimming blanks: adjacent once sorted by the fold */
    for (int kind = 0; kind < 2 && !st; kind++) {
        for (size_t j = 0; j < nl; j++) by[j] = &nat[j];
        qsort(by, nl, sizeof *by, cmp_level_folded);
        np = 0;
        for (size_t j = 1; j < nl; j++) {
            const level_ref *a = by[j - 1], *b = by[j];
            if (strcmp(a->folded, b->folded) || a->group == b->group) continue;
            if (sturdy_parse_number(a->text, &x) && sturdy_parse_number(b->text, &y))
                continue;                       /* reported (or merged) as numbers */
            /* kind 0: only the blanks around them differ; 1: letter case (perhaps too) */
            if (trimmed_equal(a->text, b->text) != (kind == 0)) continue;
            assert(np < nl);
            pairs[2 * np] = a->text;
            pairs[2 * np + 1] = b->text;
            np++;
        }
        st = warn_pairs(d, role, name,
                        kind == 0 ? "differ only in surrounding spaces, yet count as "
                                    "different levels"
                                  : "differ only in letter case, yet count as different "
                                    "levels",
                        "correct the data if they are one level", pairs, np, err);
    }
    sturdy_free(pairs);
    sturdy_free(by);
    return st;
}

/* "'a', 'b' and 3 more" for messages. */
static void name_list(sturdy_buf *b, const char *const *names, size_t n)
{
    for (size_t k = 0; k < n && k < NAMES_SHOWN; k++)
        sturdy_buf_printf(b, "%s'%s'", k ? ", " : "", names[k]);
    if (n > NAMES_SHOWN) sturdy_buf_printf(b, " and %zu more", n - NAMES_SHOWN);
}

/* Does `want` (from --levels) name level text `have`? With merging, equal numbers do. */
static int names_level(const char *want, const char *have, int merge)
{
    double x, y;
    if (!strcmp(want, have)) return 1;
    return merge && sturdy_parse_number(want, &x) && sturdy_parse_number(have, &y) && x == y;
}

/* pos[g] = place of group g in the user's order (ngroups groups; rep[g] is a level text
 * of group g, members: nat[] with that group). */
static sturdy_status user_order(const sturdy_level_order *lo, const level_ref *nat, size_t nl,
                                size_t ngroups, int merge, const char *role, size_t *pos,
                                char *err)
{
    sturdy_status st = STURDY_OK;
    const char **unknown = sturdy_malloc((lo->nlevels + ngroups + 1) * sizeof *unknown);
    const char **left = unknown + lo->nlevels;
    size_t nunknown = 0, nleft = 0;
    sturdy_buf b;
    if (!unknown) return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    for (size_t g = 0; g < ngroups; g++) pos[g] = (size_t)-1;
    for (size_t k = 0; k < lo->nlevels; k++) {
        size_t g = (size_t)-1;
        for (size_t j = 0; j < nl && g == (size_t)-1; j++)
            if (names_level(lo->levels[k], nat[j].text, merge)) g = nat[j].group;
        if (g == (size_t)-1) { unknown[nunknown++] = lo->levels[k]; continue; }
        if (pos[g] != (size_t)-1) {
            sturdy_free(unknown);
            return sturdy_fail(err, STURDY_EUSAGE, "the order of levels given for %s '%s' "
                               "lists '%s' twice", role, lo->factor, lo->levels[k]);
        }
        pos[g] = k - nunknown;
    }
    for (size_t j = 0; j < nl; j++)
        if (pos[nat[j].group] == (size_t)-1 && (j == 0 || nat[j - 1].group != nat[j].group))
            left[nleft++] = nat[j].text;
    if (nunknown || nleft) {
        sturdy_buf_init(&b);
        sturdy_buf_printf(&b, "the order of levels given for %s '%s': ", role,
                          lo->factor);
        if (nunknown) {
            name_list(&b, unknown, nunknown);
            sturdy_buf_printf(&b, " %s not a level of it in the rows used%s",
                              nunknown == 1 ? "is" : "are", nleft ? "; " : "");
        }
        if (nleft) {
            sturdy_buf_puts(&b, "the order leaves out ");
            name_list(&b, left, nleft);
        }
        sturdy_buf_puts(&b, " (list every level once, separated by commas)");
        st = sturdy_fail(err, b.failed ? STURDY_EINTERNAL : STURDY_EUSAGE, "%s",
                         b.failed ? "out of memory" : b.data);
        sturdy_buf_free(&b);
    }
    /* without an error every group has its own place among the first ngroups */
    for (size_t g = 0; g < ngroups && !st; g++) assert(pos[g] < ngroups);
    sturdy_free(unknown);
    return st;
}

/* The first slot tried for hash h in a table of cap (a power of two) slots: the high
 * bits folded into the low ones that index it (the low k bits of an FNV-1a hash depend
 * only on the low k bits of the text's bytes). */
static size_t home_slot(uint64_t h, size_t cap)
{
    return (size_t)(h ^ (h >> 29)) & (cap - 1);
}

/* The distinct texts of column `col` over the used rows, sorted bytewise, into *vals (nl
 * of them), and each used row's place among them into which[i]. One pass hashes every
 * row's text into a table of the distinct ones (FNV-1a, open addressing, kept at most
 * half full); only the few distinct texts are then sorted, bytewise here and naturally
 * later (which parses numbers in every comparison). */
static sturdy_status distinct_values(const sturdy_table *t, long col, const sturdy_design *d,
                                     const char ***vals, size_t *nl, size_t *which, char *err)
{
    size_t n = d->n, k = 0, cap = 64;
    const char **v = sturdy_malloc((n ? n : 1) * sizeof *v);
    size_t *slot = sturdy_malloc(cap * sizeof *slot), *bytewise = NULL;
    uint64_t *code = sturdy_malloc((n ? n : 1) * sizeof *code);
    *vals = v;
    *nl = 0;
    sturdy_status st = STURDY_OK;
    if (!v || !slot || !code) st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    for (size_t c = 0; !st && c < cap; c++) slot[c] = SIZE_MAX;
    for (size_t i = 0; !st && i < n; i++) {
        const char *x = t->cols[col].text[d->row[i]];
        uint64_t h = sturdy_hash_text(x);
        size_t c = home_slot(h, cap);
        while (slot[c] != SIZE_MAX && (code[slot[c]] != h || strcmp(v[slot[c]], x)))
            c = (c + 1) & (cap - 1);
        if (slot[c] == SIZE_MAX) {               /* a new text */
            slot[c] = k;
            v[k] = x;
            code[k++] = h;
            if (2 * k > cap) {                   /* grow and place every text again */
                size_t *grown = sturdy_malloc(2 * cap * sizeof *grown);
                if (!grown) {
                    st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
                    break;
                }
                sturdy_free(slot);
                slot = grown;
                cap *= 2;
                for (size_t e = 0; e < cap; e++) slot[e] = SIZE_MAX;
                for (size_t e = 0; e < k; e++) {
                    size_t q = home_slot(code[e], cap);
                    while (slot[q] != SIZE_MAX) q = (q + 1) & (cap - 1);
                    slot[q] = e;
                }
            }
            which[i] = k - 1;
        } else {
            which[i] = slot[c];
        }
    }
    /* sort the distinct texts bytewise (a permutation of their first-seen order) */
    const char **sorted = NULL;
    if (!st && (!(sorted = sturdy_malloc((k ? k : 1) * sizeof *sorted)) ||
                !(bytewise = sturdy_malloc((k ? k : 1) * sizeof *bytewise))))
        st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    if (!st) {
        for (size_t e = 0; e < k; e++) sorted[e] = v[e];
        qsort(sorted, k, sizeof *sorted, cmp_str_bytes);
        /* first-seen index e → its place among the sorted texts, by binary search */
        for (size_t e = 0; e < k; e++) {
            size_t lo = 0, hi = k;
            while (lo < hi) {
                size_t mid = lo + (hi - lo) / 2;
                int c = strcmp(sorted[mid], v[e]);
                if (c == 0) { lo = mid; break; }
                if (c < 0) lo = mid + 1; else hi = mid;
            }
            bytewise[e] = lo;
        }
        for (size_t e = 0; e < k; e++) v[e] = sorted[e];
        for (size_t i = 0; i < n; i++) which[i] = bytewise[which[i]];
        *nl = k;
    }
    sturdy_free(sorted);
    sturdy_free(bytewise);
    sturdy_free(slot);
    sturdy_free(code);
    return st;
}

static void free_levels(level_ref *nat, size_t nl)
{
    for (size_t j = 0; nat && j < nl; j++) sturdy_free(nat[j].folded);
    sturdy_free(nat);
}

/* The distinct values vals[0..nl) in natural order as *nat (free with free_levels), each
 * with its group: one per level, or with `merge` levels equal as numbers (adjacent in
 * natural order) in one; *ng gets the number of groups. */
static sturdy_status natural_levels(const char *const *vals, size_t nl, int merge,
                                    level_ref **out, size_t *ng, char *err)
{
    level_ref *nat = sturdy_calloc(nl ? nl : 1, sizeof *nat);
    *out = NULL;
    if (!nat)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    for (size_t j = 0; j < nl; j++) {
        nat[j].text = vals[j];
        nat[j].bytewise = j;
        if (!(nat[j].folded = fold(vals[j]))) {
            free_levels(nat, nl);
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        }
    }
    qsort(nat, nl, sizeof *nat, cmp_level_natural);
    *ng = 0;
    for (size_t j = 0; j < nl; j++) {
        double x, y;
        int same = j > 0 && merge && sturdy_parse_number(nat[j - 1].text, &x) &&
                   sturdy_parse_number(nat[j].text, &y) && x == y;
        nat[j].group = same ? nat[j - 1].group : (*ng)++;
    }
    *out = nat;
    return STURDY_OK;
}

/* f's levels, level pos[g] named by the first text of group g, and rank[b] = the level
 * of the value with bytewise index b. */
static sturdy_status name_levels(sturdy_factor *f, const level_ref *nat, size_t nl,
                                 const size_t *pos, size_t ng, size_t *rank, char *err)
{
    f->nlevels = ng;
    if (!(f->levels = sturdy_calloc(ng, sizeof *f->levels)))
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    for (size_t j = 0; j < nl; j++) {
        size_t p = pos[nat[j].group];
        rank[nat[j].bytewise] = p;
        if (!f->levels[p] && !(f->levels[p] = sturdy_strdup(nat[j].text)))
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    return STURDY_OK;
}

/* lev[i * stride] = the level of used row i, whose text is vals[which[i]]. */
static void level_of_rows(const sturdy_design *d, const size_t *which, const size_t *rank,
                          size_t *lev, size_t stride)
{
    for (size_t i = 0; i < d->n; i++) lev[i * stride] = rank[which[i]];
}

sturdy_status sturdy_levels_make(const sturdy_table *t, long col, sturdy_design *d,
                                 const sturdy_model_spec *s, size_t max_levels,
                                 const char *role, sturdy_factor *f, size_t *lev,
                                 size_t stride, char *err)
{
    size_t nl = 0, ng = 0;
    const char *name = t->cols[col].name;
    const sturdy_level_order *lo = NULL;
    for (size_t k = 0; k < s->nlevel_orders; k++)
        if (!strcmp(s->level_orders[k].factor, name)) lo = &s->level_orders[k];
    const char **vals = NULL;
    level_ref *nat = NULL;
    size_t *rank = NULL, *pos = NULL, *which = sturdy_malloc((d->n ? d->n : 1) * sizeof *which);
    sturdy_status st = (f->name = sturdy_strdup(name)) && which
                           ? distinct_values(t, col, d, &vals, &nl, which, err)
                           : sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    if (!st && nl > max_levels)
        st = sturdy_fail(err, STURDY_EMODEL,
                         "%s: %s '%s' has %zu levels, more than the limit of %zu; is it "
                         "really a factor? (the limit on levels per factor can be raised)",
                         t->source, role, name, nl, max_levels);
    if (!st)
        st = natural_levels(vals, nl, s->merge_numeric_levels, &nat, &ng, err);
    if (!st && ng < 2)
        st = sturdy_fail(err, STURDY_EMODEL,
                         "%s: %s '%s' has only one level ('%s') in the rows used; a term "
                         "needs at least two", t->source, role, name, nl ? nat[0].text : "");
    if (!st)
        st = near_duplicates(d, role, name, nat, nl, s->merge_numeric_levels, err);
    if (!st && (!(pos = sturdy_malloc(ng * sizeof *pos)) ||
                !(rank = sturdy_malloc((nl ? nl : 1) * sizeof *rank))))
        st = sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    if (!st && lo)
        st = user_order(lo, nat, nl, ng, s->merge_numeric_levels, role, pos, err);
    else if (!st)
        for (size_t g = 0; g < ng; g++) pos[g] = g;
    if (!st)
        st = name_levels(f, nat, nl, pos, ng, rank, err);
    if (!st)
        level_of_rows(d, which, rank, lev, stride);
    free_levels(nat, nl);
    sturdy_free(vals); sturdy_free(rank); sturdy_free(pos); sturdy_free(which);
    return st;
}
