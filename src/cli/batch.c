/* batch.c — `sturdy batch PLAN.csv [--resume] [-o DIR]`: many analyses from a plan file.
 * A stub that parses its options; the real batch replaces this file. */
#include <getopt.h>
#include <stdio.h>

#include "cli.h"

static const char batch_help[] =
"Usage: sturdy batch PLAN.csv [--resume] [-o DIR]\n"
"\n"
"Runs one analysis per row of the plan file, writes one result file each into DIR and a\n"
"summary; --resume skips analyses whose result is already there.\n";

int sturdy_cli_batch(int argc, char **argv)
{
    static const struct option opts[] = {
        { "resume", no_argument, NULL, 'r' },
        { "output", required_argument, NULL, 'o' },
        { "quiet", no_argument, NULL, 'q' },
        { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 }
    };
    int opt;
    opterr = 0;
    optind = 1;
    while ((opt = getopt_long(argc, argv, ":o:qh", opts, NULL)) != -1) {
        if (opt == 'h') { fputs(batch_help, stdout); return 0; }
        if (opt == '?' || opt == ':')
            return cli_usage_error("batch", "bad or incomplete option '%s'", argv[optind - 1]);
    }
    if (argc - optind != 1) return cli_usage_error("batch", "name one plan file");
    fputs("sturdy: batch is not yet implemented\n", stderr);
    return 1;
}
