/* output.c — writing a finished report: to standard output, or to a file through a
 * temporary file that is synced and renamed, so that a reader never sees half of it. */
#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "cli.h"

#define TMP_SUFFIX ".tmp.XXXXXX"

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
    int fd = mkstemp(tmp);
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
    if (step) {
        unlink(tmp);
        fprintf(stderr, "sturdy: cannot %s '%s': %s (nothing was written)\n", step, shown,
                strerror(saved));
        free(tmp);
        return STURDY_EOUTPUT;
    }
    free(tmp);
    sync_folder(target);
    return 0;
}

/* Links followed before giving up (as the kernel's own limit of 40, but smaller). */
#define MAX_LINK_HOPS 16

/* When `path` is a symbolic link, the file it finally points to (malloc'ed), so that the
 * rename replaces that file and not the link; NULL when it is not a link or on error. */
static char *follow_links(const char *path)
{
    char *cur = NULL;
    for (int hop = 0; hop < MAX_LINK_HOPS; hop++) {
        const char *p = cur ? cur : path;
        struct stat sb;
        if (lstat(p, &sb) != 0 || !S_ISLNK(sb.st_mode)) return cur;
        char target[4096];
        ssize_t n = readlink(p, target, sizeof target - 1);
        if (n < 0) break;
        target[n] = '\0';
        const char *slash = strrchr(p, '/');
        size_t dirlen = target[0] == '/' || !slash ? 0 : (size_t)(slash - p) + 1;
        char *next = malloc(dirlen + (size_t)n + 1);
        if (!next) break;
        memcpy(next, p, dirlen);
        memcpy(next + dirlen, target, (size_t)n + 1);
        free(cur);
        cur = next;
    }
    free(cur);
    return NULL;
}

int cli_write_output(const char *path, const char *data, size_t len)
{
    if (!path || strcmp(path, "-") == 0) return write_stdout(data, len);
    struct stat sb;
    if (stat(path, &sb) == 0 && !S_ISREG(sb.st_mode)) {
        if (S_ISDIR(sb.st_mode)) {
            fprintf(stderr, "sturdy: cannot write '%s': it is a folder\n", path);
            return STURDY_EOUTPUT;
        }
        return write_special(path, data, len);
    }
    char *resolved = follow_links(path);
    int rc = write_atomic(resolved ? resolved : path, path, data, len);
    free(resolved);
    return rc;
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
