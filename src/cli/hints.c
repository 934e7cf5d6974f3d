/* hints.c — the command line's options named in the library's messages. The library
 * names a setting in plain words ("the order of levels given for factor 'x'"), as a
 * program that calls it has no options; the CLI adds the option that sets it after the
 * phrase: "the order of levels given (--levels) for factor 'x'". */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

/* A phrase of a library message and the option to name after it. The phrases are the
 * library's stable wording (include/sturdy/design.h and src/input, src/model); a message
 * without one is printed as it is. */
static const struct {
    const char *phrase, *option;
} hints[] = {
    { "no response column given", "-y" },
    { "no factor given", "-f" },
    { "an order of levels is given", "--levels" },
    { "the order of levels given", "--levels" },
    { "which is not a factor", "-f" },
    { "the order of terms given", "--term-order" },
    { "the interaction order", "--order" },
    { "the limit on coded columns", "--max-columns" },
    { "the limit on memory", "--max-memory" },
    { "the limit on build work", "--max-build-work" },
    { "the limit on levels per factor", "--max-levels" },
    { "set the delimiter to tab", "--delimiter tab" },
    { "set the delimiter to ';'", "--delimiter ';'" },
    { "a missing-value token", "--missing" },
    { "sums of squares of Type I or II", "--ss 1 or 2" },
    { "the type of sums of squares", "--ss" },
    { "the confidence level", "--conf" },
    { "the significance level alpha", "--alpha" },
    { "unknown resampling method", "--method" },
    { "unknown bootstrap scheme", "--bootstrap-scheme" },
    { "resampling scheme for the unequal-variance test", "--spread-scheme" },
    { "the number of rearrangements", "-B" },
    { "the number of bootstrap replicates", "--bootstrap" },
    { "the bootstrap needs", "--bootstrap" },
    { "shard I of N", "--shard" },
    { "the cells bootstrap", "--bootstrap-scheme cells" },
    { "the thread count", "--threads" },
    { "merge levels equal as numbers", "--merge-numeric-levels" },
};

void cli_print_error(const char *prefix, const char *msg)
{
    char *hinted = cli_option_hints(msg);
    char *safe = cli_escaped(hinted ? hinted : msg);
    fprintf(stderr, "sturdy: %s%s\n", prefix ? prefix : "", safe ? safe : "out of memory");
    free(safe);
    free(hinted);
}

/* Length of the UTF-8 sequence at s (its code point in *cp), or 0 when the bytes there
 * are not one (overlong forms, surrogates and values past U+10FFFF included). */
static size_t utf8_seq(const unsigned char *s, unsigned long *cp)
{
    size_t n;
    if (s[0] >= 0xc2 && s[0] <= 0xdf) n = 2;
    else if (s[0] >= 0xe0 && s[0] <= 0xef) n = 3;
    else if (s[0] >= 0xf0 && s[0] <= 0xf4) n = 4;
    else return 0;
    /* a NUL ends the check at the first byte that is not a continuation */
    unsigned long v = s[0] & (n == 2 ? 0x1f : n == 3 ? 0x0f : 0x07);
    for (size_t i = 1; i < n; i++) {
        if ((s[i] & 0xc0) != 0x80) return 0;
        v = v << 6 | (s[i] & 0x3f);
    }
    if ((n == 3 && (v < 0x800 || (v >= 0xd800 && v <= 0xdfff))) ||
        (n == 4 && (v < 0x10000 || v > 0x10ffff)))
        return 0;
    *cp = v;
    return n;
}

char *cli_escaped(const char *text)
{
    const unsigned char *s = (const unsigned char *)(text ? text : "");
    char *out = malloc(strlen((const char *)s) * 6 + 1), *o = out;
    if (!out) return NULL;
    while (*s) {
        unsigned long cp = 0;
        size_t n = *s < 0x80 ? 1 : utf8_seq(s, &cp);
        if (*s < 0x20 || *s == 0x7f || n == 0) {          /* C0, DEL, a stray byte */
            o += sprintf(o, "\\x%02x", *s);
            s++;
        } else if (n == 2 && cp >= 0x80 && cp <= 0x9f) {  /* C1: CSI and the like */
            o += sprintf(o, "\\u%04lx", cp);
            s += n;
        } else {
            memcpy(o, s, n);
            o += n;
            s += n;
        }
    }
    *o = '\0';
    return out;
}

char *cli_option_hints(const char *msg)
{
    size_t len = strlen(msg), extra = 0, n = sizeof hints / sizeof hints[0];
    for (size_t k = 0; k < n; k++)
        if (strstr(msg, hints[k].phrase))
            extra += strlen(hints[k].option) + 3;
    char *out = malloc(len + extra + 1);
    if (!out)
        return NULL;
    memcpy(out, msg, len + 1);
    for (size_t k = 0; k < n; k++) {
        char *at = strstr(out, hints[k].phrase);
        if (!at)
            continue;
        at += strlen(hints[k].phrase);
        size_t olen = strlen(hints[k].option), tail = strlen(at);
        memmove(at + olen + 3, at, tail + 1);
        memcpy(at, " (", 2);
        memcpy(at + 2, hints[k].option, olen);
        at[olen + 2] = ')';
    }
    return out;
}
