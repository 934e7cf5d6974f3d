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
    fprintf(stderr, "sturdy: %s%s\n", prefix ? prefix : "", hinted ? hinted : msg);
    free(hinted);
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
