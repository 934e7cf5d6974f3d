/* check_help.c — the help of `sturdy check` and `sturdy demo` (--help): the options by
 * group, an example and the exit statuses, then the comparisons' options. */
#include <stdio.h>

#include "cli.h"

/* Printed after either help text (a separate string: ISO C bounds a literal's length). */
static const char compare_help[] =
"\n"
"Comparisons of marginal means (after the table)\n"
"      --compare T[,T...]|all|none  terms whose pairwise differences are shown: main\n"
"                               effects and two-factor terms (default: the terms\n"
"                               significant by the F-test or the resampling test)\n"
"      --control F=LEVEL        compare F's levels with this one only\n"
"      --format csv-comparisons the means and comparisons as CSV (one row each)\n";

static const char check_help[] =
"Usage: sturdy check DATA.csv -y RESPONSE[,RESPONSE...] -f FACTOR[,FACTOR...] [options]\n"
"\n"
"Fits the full factorial model to the table, prints the classical ANOVA table, and\n"
"checks every term with a permutation test, bootstrap intervals for its effect sizes\n"
"and residual diagnostics, with a plain verdict where the two kinds of test disagree.\n"
"DATA.csv may be '-' for standard input.\n"
"\n"
"Model\n"
"  -y, --response COL[,COL...]  response column(s); several share one design\n"
"  -f, --factors A[,B...]       factor columns (at most 16)\n"
"      --covariates X[,Y...]    numeric nuisance columns to adjust for\n"
"      --block COL              additive block; rearrangements stay within blocks\n"
"      --order K                highest interaction order (default: all)\n"
"      --ss 1|2|3               type of sums of squares (default 3)\n"
"      --levels F=a,b,c         the order of factor F's levels (default: natural order,\n"
"                               N0 N40 N120); repeatable, or 'F=a,b;G=x,y'\n"
"      --merge-numeric-levels   levels equal as numbers (60 and 60.0) are one level\n"
"      --term-order T[,T...]    put these terms first, in this order (e.g. A,B,C,D,C×D);\n"
"                               Type I sums of squares follow it\n"
"\n"
"Resampling\n"
"  -B, --permutations N         rearrangements per test (default 9999; 0 = none)\n"
"      --bootstrap N            bootstrap replicates (default 2000; 0 = none)\n"
"      --method NAME            freedman-lane (default), ter-braak or raw\n"
"      --flip                   flip residual signs instead of permuting them\n"
"                               (copes with unequal variances)\n"
"      --bootstrap-scheme NAME  residual (default), wild (default with --flip) or cells\n"
"      --spread-scheme NAME     resampling of the unequal-variance statistic: none\n"
"                               (default; its approximate F is used), wild (wild\n"
"                               bootstrap) or permutation (also reports the wild p)\n"
"      --resistant              also an outlier-resistant test of every term (Huber\n"
"                               fits, drop in dispersion), resampled like the F-test\n"
"      --tail-fit               also a p below 1/B where few rearrangements reach F: a\n"
"                               generalised Pareto tail fitted to the largest F*\n"
"                               (an extrapolation, reported beside the plain p)\n"
"      --stop-early             stop a term's permutation test at its 20th\n"
"                               rearrangement as extreme as the data, p = 20/L\n"
"                               (Besag & Clifford 1991), and the run once all have\n"
"      --conf LEVEL             interval level, between 0 and 1 (default 0.95)\n"
"      --alpha LEVEL            significance level of the verdicts (default 0.05)\n"
"      --seed N                 random seed (default 20261201)\n"
"      --threads N              threads to use (default 0 = all cores); the results are\n"
"                               the same for any number\n"
"      --shard I/N              compute only part I of N, as JSON for 'sturdy merge'\n"
"\n";

/* The rest of check's help (a separate string: ISO C bounds a literal's length). */
static const char check_help_input[] =
"Input\n"
"      --delimiter C            field separator (default ','; 'tab' for tabs)\n"
"      --missing TOKEN[,...]    more values meaning missing, besides the defaults (the\n"
"                               empty field and NA)\n"
"      --missing-only TOKEN[,...]  values meaning missing, instead of the defaults\n"
"      --max-levels N           refuse a factor with more levels (default 1000)\n"
"      --max-columns N          refuse a design with more coded columns (default 4000)\n"
"      --max-memory SIZE        refuse a model whose coded design and bases would take\n"
"                               more memory, estimated before they are built (default\n"
"                               2G; SIZE in bytes or with K, M, G or T: powers of 1024)\n"
"      --max-build-work OPS     refuse a model whose build would take more floating-point\n"
"                               operations, estimated likewise (the default, 1e13, is\n"
"                               minutes of one core)\n"
"\n"
"Output\n"
"      --format text|json|csv|html  report format (default text, or as -o FILE.json,\n"
"                               .csv or .html); html: one self-contained page with\n"
"                               figures (inline SVG, no network)\n"
"      --figures DIR            also write each figure as an SVG file into DIR\n"
"  -o, --output FILE            write to FILE (complete or not at all) instead of\n"
"                               standard output\n"
"      --ascii-terms            CSV: join factor names in term names with '_by_', not\n"
"                               '\xc3\x97' (ASCII only)\n"
"      --csv-bom                CSV: start with a UTF-8 byte-order mark (for spreadsheets)\n"
"  -q, --quiet                  no work estimate or progress on standard error\n"
"  -h, --help                   show this help\n"
"      --version                show the version\n"
"\n"
"Example\n"
"  sturdy check loaves.csv -y rise_mm -f proofing,flour,rack -B 19999 -o rise.json\n"
"\n"
"Exit status: 0 done, 1 internal error, 2 usage error, 3 bad input data,\n"
"4 model cannot be tested as asked, 5 output could not be written.\n";

static const char demo_help[] =
"Usage: sturdy demo [options]\n"
"\n"
"Runs 'sturdy check' on a built-in invented dataset: build times (minutes) of a\n"
"continuous-integration pipeline on three runner sizes, with the dependency cache off\n"
"or on, and tests run serially or in parallel (examples/demo.csv holds the same data).\n"
"It is the same as\n"
"  sturdy check examples/demo.csv -y build_min -f runner,cache,tests\n"
"\n"
"Options: those of 'sturdy check' (see 'sturdy check --help') except the ones that\n"
"describe the data (-y, -f, --covariates, --block, --delimiter, --missing,\n"
"--missing-only), e.g.\n"
"  -B N, --bootstrap N, --seed N, --threads N, --format text|json|csv|html, -o FILE,\n"
"  --figures DIR, --quiet\n";

void cli_check_help(FILE *out, int demo)
{
    fputs(demo ? demo_help : check_help, out);
    if (!demo) fputs(check_help_input, out);
    fputs(compare_help, out);
}
