/* main.c — the `sturdy` program: picks the subcommand and hands over to it. The
 * program uses libsturdy only through its public headers; it alone prints and exits. */
#include <cblas.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli.h"

static const char main_help[] =
"sturdy " STURDY_VERSION " — does a factorial ANOVA still hold without its assumptions?\n"
"\n"
"Usage\n"
"  sturdy check DATA.csv -y RESPONSE -f A,B,... [options]  analyse one table\n"
"  sturdy demo [options]                                   the same on built-in data\n"
"  sturdy merge PART.json... [-o FILE]                     combine the parts of a\n"
"                                                          split run (--shard)\n"
"  sturdy batch PLAN.csv [--resume] [-o DIR] [--compare OLD]  many analyses from a plan\n"
"\n"
"'sturdy COMMAND --help' describes each command; 'sturdy --version' prints the version.\n";

static int check_or_demo(int argc, char **argv, int demo)
{
    cli_check c;
    int rc = cli_check_parse(argc, argv, demo, &c);
    if (rc == CLI_DONE) rc = 0;
    else if (rc == 0) rc = cli_check_run(&c);
    cli_check_free(&c);
    return rc;
}

static int dispatch(int argc, char **argv);

int main(int argc, char **argv)
{
    /* OpenBLAS starts a pool of threads when it is loaded, unless OPENBLAS_NUM_THREADS
     * says otherwise. sturdy runs BLAS single-threaded inside its own threads, and the
     * idle pool costs tens of milliseconds of system time per run and competes for the
     * cores. The variable is read only at load time, so set it and start once more
     * (an explicit setting of the user's is left alone). */
    if (!getenv("OPENBLAS_NUM_THREADS")) {
        setenv("OPENBLAS_NUM_THREADS", "1", 1);
        execv("/proc/self/exe", argv);
        /* no /proc: carry on with the pool */
    }
    /* BLAS threads are process-wide state, the application's to set (sturdy.h): the
     * library calls LAPACK from inside its own threads, so BLAS runs single-threaded */
    openblas_set_num_threads(1);
    if (cli_mpi_init(&argc, &argv) != 0) {
        fputs("sturdy: MPI could not be started\n", stderr);
        return STURDY_EINTERNAL;
    }
    int rc = dispatch(argc, argv);
    cli_mpi_finalize();
    return rc;
}

static int dispatch(int argc, char **argv)
{
#ifdef SIGXFSZ
    /* past a file-size limit, let write() fail with EFBIG, so that the output code can
     * remove its temporary file and report, instead of the process being killed */
    signal(SIGXFSZ, SIG_IGN);
#endif
    /* Ctrl-C, kill and a closed terminal remove the output's temporary file */
    cli_cleanup_on_signals();
    if (argc < 2) {
        fputs(main_help, stderr);
        return CLI_EXIT_USAGE;
    }
    const char *cmd = argv[1];
    if (!strcmp(cmd, "check")) return check_or_demo(argc - 1, argv + 1, 0);
    if (!strcmp(cmd, "demo")) return check_or_demo(argc - 1, argv + 1, 1);
    if (!strcmp(cmd, "merge")) return sturdy_cli_merge(argc - 1, argv + 1);
    if (!strcmp(cmd, "batch")) return sturdy_cli_batch(argc - 1, argv + 1);
    if (!strcmp(cmd, "--help") || !strcmp(cmd, "-h") || !strcmp(cmd, "help")) {
        fputs(main_help, stdout);
        return 0;
    }
    if (!strcmp(cmd, "--version")) {
        printf("sturdy %s\n", sturdy_version());
        return 0;
    }
    char *safe = cli_escaped(cmd);
    fprintf(stderr, "sturdy: unknown command '%s'\ntry 'sturdy --help'\n", safe ? safe : "?");
    free(safe);
    return CLI_EXIT_USAGE;
}
