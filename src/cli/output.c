/* output.c — writing a finished report: to standard output, or to a file through a
 * temporary file that is synced and renamed, so that a reader never sees half of it. */
#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <pthread.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "cli.h"

#define TMP_SUFFIX ".tmp.XXXXXX"

/* The temporary file being written, for the signal handlers: SIGINT, SIGTERM and SIGHUP
 * remove it and then end the process as the signal would have. Only async-signal-safe
 * steps happen in the handler (unlink, raise), so the path lives in a static buffer
 * that is armed while the file exists. One file at a time is written. */
static char live_tmp[PATH_MAX + sizeof TMP_SUFFIX];
static volatile sig_atomic_t live_armed;
static const int cleanup_signals[] = { SIGINT, SIGTERM, SIGHUP };
#define NCLEANUP_SIGNALS (sizeof cleanup_signals / sizeof *cleanup_signals)

static void on_fatal_signal(int sig)
{
    int saved = errno;
    if (live_armed) unlink(live_tmp);
    live_armed = 0;
    errno = saved;
    raise(sig);                   /* SA_RESETHAND: the default action, so the exit status
                                     says which signal ended the run */
}

void cli_cleanup_on_signals(void)
{
    for (size_t k = 0; k < NCLEANUP_SIGNALS; k++) {
        struct sigaction sa, old;
        if (sigaction(cleanup_signals[k], NULL, &old) != 0 || old.sa_handler == SIG_IGN)
            continue;             /* an ignored signal (nohup, a background job) stays so */
        memset(&sa, 0, sizeof sa);
        sa.sa_handler = on_fatal_signal;
        sigemptyset(&sa.sa_mask);
        sa.sa_flags = (int)(SA_RESETHAND | SA_NODEFER);
        sigaction(cleanup_signals[k], &sa, NULL);
    }
}

/* Block (or unblock) the cleanup signals in this thread, so that creating the temporary
 * file and arming the handler happen as one step. */
static void hold_signals(int how, sigset_t *saved)
{
    sigset_t set;
    sigemptyset(&set);
    for (size_t k = 0; k < NCLEANUP_SIGNALS; k++) sigaddset(&set, cleanup_signals[k]);
    pthread_sigmask(how, how == SIG_BLOCK ? &set : saved, how == SIG_BLOCK ? saved : NULL);
}

static int write_all(int fd, const char *data, size_t len)
{
    while (len > 0) {
        ssize_t n = write(fd, data, len);
        if (n < 0) {
            if (errno == EINTR) continue;
            return -1;
        }
        data += n;
        len -= (size_t)n;
    }
    return 0;
}

/* Sync the folder holding `path`, so the rename itself survives a crash. Best effort:
 * some file systems refuse to open or sync folders, which loses nothing else. */
static void sync_folder(const char *path)
{
    const char *slash = strrchr(path, '/');
    char *dir = slash ? strndup(path, slash == path ? 1 : (size_t)(slash - path)) : strdup(".");
    if (!dir) return;
    int fd = open(dir, O_RDONLY);
    if (fd >= 0) {
        fsync(fd);
        close(fd);
    }
    free(dir);
}

static int write_stdout(const char *data, size_t len)
{
    if (fwrite(data, 1, len, stdout) != len || fflush(stdout) != 0) {
        fprintf(stderr, "sturdy: cannot write to standard output: %s\n", strerror(errno));
        return STURDY_EOUTPUT;
    }
    return 0;
}

/* A device, pipe or socket (-o /dev/null, a fifo) is written in place: it cannot be
 * replaced by renaming, and renaming over it would destroy it. */
static int write_special(const char *path, const char *data, size_t len)
{
    int fd = open(path, O_WRONLY);
    const char *step = fd < 0 ? "open" : write_all(fd, data, len) ? "write" : NULL;
    int saved = errno;
    if (fd >= 0 && close(fd) != 0 && !step) { saved = errno; step = "close"; }
    if (step) {
        fprintf(stderr, "sturdy: cannot %s '%s': %s\n", step, path, strerror(saved));
        return STURDY_EOUTPUT;
    }
    return 0;
}

/* Write to `target` through "target.tmp.XXXXXX" beside it; messages name `shown`. */
static int write_atomic(const char *target, const char *shown, const char *data, size_t len)
{
    size_t plen = strlen(target);
    char *tmp = malloc(plen + sizeof TMP_SUFFIX);
    if (!tmp) {
        fprintf(stderr, "sturdy: cannot write '%s': out of memory\n", shown);
        return STURDY_EOUTPUT;
    }
    memcpy(tmp, target, plen);
    memcpy(tmp + plen, TMP_SUFFIX, sizeof TMP_SUFFIX);
    sigset_t saved_mask;
    hold_signals(SIG_BLOCK, &saved_mask);
    int fd = mkstemp(tmp);
    /* a path too long for the buffer is not armed (a signal then leaves the file, as
     * SIGKILL does; batch removes its own on the next run) */
    if (fd >= 0 && plen + sizeof TMP_SUFFIX <= sizeof live_tmp) {
        memcpy(live_tmp, tmp, plen + sizeof TMP_SUFFIX);
        live_armed = 1;
    }
    hold_signals(SIG_UNBLOCK, &saved_mask);
    if (fd < 0) {
        fprintf(stderr, "sturdy: cannot write '%s': %s\n", shown, strerror(errno));
        free(tmp);
        return STURDY_EOUTPUT;
    }
    /* mkstemp makes the file private (0600); give the result the usual permissions */
    mode_t mask = umask(0);
    umask(mask);
    const char *step = NULL;      /* the step that failed */
    if (fchmod(fd, 0666 & ~mask) != 0) step = "set the permissions of";
    else if (write_all(fd, data, len) != 0) step = "write";
    else if (fsync(fd) != 0) step = "sync";
    int saved = errno;
    if (close(fd) != 0 && !step) { saved = errno; step = "close"; }
    if (!step && rename(tmp, target) != 0) { saved = errno; step = "rename onto"; }
    if (step) unlink(tmp);
    live_armed = 0;
    if (step) {
        fprintf(stderr, "sturdy: cannot %s '%s': %s (nothing was written)\n", step, shown,
                strerror(saved));
        free(tmp);
        return STURDY_EOUTPUT;
    }
    free(tmp);
    sync_folder(target);
    return 0;
}

int cli_same_file(const char *a, const char *b)
{
    struct stat sa, sb;
    return a && b && stat(a, &sa) == 0 && stat(b, &sb) == 0 && sa.st_dev == sb.st_dev &&
           sa.st_ino == sb.st_ino;
}

int cli_write_output(const char *path, const char *data, size_t len)
{
    if (!path || strcmp(path, "-") == 0) return write_stdout(data, len);
    struct stat sb, lsb;
    int exists = stat(path, &sb) == 0;
    if (exists && S_ISDIR(sb.st_mode)) {
        fprintf(stderr, "sturdy: cannot write '%s': it is a folder\n", path);
        return STURDY_EOUTPUT;
    }
    /* a device, pipe or socket, also through a link (/dev/stdout) */
    if (exists && !S_ISREG(sb.st_mode)) return write_special(path, data, len);
    /* A link to a file, or to nowhere, is refused: in a shared folder a link planted by
     * someone else would redirect the result onto any file the user can write. The
     * rename below never follows links, so no other path can be replaced. */
    if (lstat(path, &lsb) == 0 && S_ISLNK(lsb.st_mode)) {
        fprintf(stderr, "sturdy: will not write '%s': it is a symbolic link%s; give the path "
                        "of a file, not of a link (nothing was written)\n", path,
                exists ? "" : " to a file that does not exist");
        return STURDY_EOUTPUT;
    }
    return write_atomic(path, path, data, len);
}

char *cli_read_file(const char *path, size_t *len)
{
    FILE *f = fopen(path, "rb");
    if (!f) return NULL;
    size_t cap = 1 << 16, n = 0;
    char *buf = malloc(cap);
    while (buf) {
        n += fread(buf + n, 1, cap - n, f);
        if (n < cap) break;
        char *grown = realloc(buf, cap *= 2);
        if (!grown) free(buf);
        buf = grown;
    }
    if (ferror(f)) { free(buf); buf = NULL; }
    fclose(f);
    *len = n;
    return buf;
}
