/* merge.c — `sturdy merge PART.json... [-o FILE]`: combine the parts of a split run.
 * A stub that parses its options; the real merge replaces this file. */
#include <getopt.h>
#include <stdio.h>

#include "cli.h"

static const char merge_help[] =
"Usage: sturdy merge PART.json... [-o FILE] [--format text|json|csv]\n"
"\n"
"Combines the JSON parts written by 'sturdy check --shard I/N' into the result that a\n"
"single run would give, bit for bit.\n";

int sturdy_cli_merge(int argc, char **argv)
{
    static const struct option opts[] = {
        { "output", required_argument, NULL, 'o' },
        { "format", required_argument, NULL, 'F' },
        { "quiet", no_argument, NULL, 'q' },
        { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 }
    };
    int opt;
    opterr = 0;
    optind = 1;
    while ((opt = getopt_long(argc, argv, ":o:qh", opts, NULL)) != -1) {
        if (opt == 'h') { fputs(merge_help, stdout); return 0; }
        if (opt == '?' || opt == ':')
            return cli_usage_error("merge", "bad or incomplete option '%s'", argv[optind - 1]);
    }
    if (optind >= argc) return cli_usage_error("merge", "name the part files to merge");
    fputs("sturdy: merge is not yet implemented\n", stderr);
    return 1;
}
