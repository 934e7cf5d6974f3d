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

/* OpenBLAS (its pthreads build, Debian's default) starts a pool of worker threads in
 * its initialiser, before main(), unless OPENBLAS_NUM_THREADS says otherwise; the
 * workers spin for ~0.1 s of CPU before they sleep, competing for the cores. sturdy
 * runs BLAS single-threaded inside its own threads and needs no pool. The variable
 * cannot be set in time from inside the program: even an executable's
 * DT_PREINIT_ARRAY function, which runs before the libraries' initialisers, runs before
 * the C library has set up its environment, which then replaces what was set (tried:
 * OpenBLAS still saw no variable). So the pool is stopped instead, through the
 * function OpenBLAS registers as its own pthread_atfork handler for the same purpose
 * (it tells the idle workers to exit and joins them; BLAS then runs in the calling
 * thread, and the pool would be rebuilt only for a multi-threaded BLAS call, which
 * sturdy never makes). It is looked up weakly: with another BLAS, or an OpenBLAS
 * without it, nothing happens. */
extern int blas_thread_shutdown_(void) __attribute__((weak));

int main(int argc, char **argv)
{
    /* BLAS threads are process-wide state, the application's to set (sturdy.h): the
     * library calls LAPACK from inside its own threads, so BLAS runs single-threaded */
    openblas_set_num_threads(1);
    if (blas_thread_shutdown_) blas_thread_shutdown_();
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
