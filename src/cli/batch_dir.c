/* batch_dir.c — the results folder of `sturdy batch`: its default name, creating it,
 * the advisory lock that keeps a second batch out, and removing the temporary files a
 * killed run left in it. */
#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <unistd.h>

#include "cli.h"

/* mkstemp's suffix after "NAME.json.tmp.": six letters or digits. */
#define TMP_RANDOM_LEN 6
/* The lock file inside a results folder (a hidden name no plan name can take). */
#define LOCK_NAME ".sturdy-batch.lock"

/* Remove "NAME.json.tmp.XXXXXX", "NAME.html.tmp.XXXXXX", ".NAME.key.tmp.XXXXXX" (and the summaries', the index's
 * temporaries) left by a run that was killed between creating and renaming them. */
void cli_batch_remove_stale(const char *dir, const char *const *names, size_t n, int quiet)
{
    DIR *d = opendir(dir);
    struct dirent *e;
    if (!d) return;
    while ((e = readdir(d))) {
        const char *f = e->d_name;
        size_t len = strlen(f), suffix = sizeof ".tmp." - 1 + TMP_RANDOM_LEN;
        if (len <= suffix || strncmp(f + len - suffix, ".tmp.", 5)) continue;
        size_t stem = len - suffix;
        int ours = (stem == 11 && (!strncmp(f, "summary.csv", 11) ||
                                   !strncmp(f, "summary.txt", 11))) ||
                   (stem == 10 && !strncmp(f, "index.html", 10));
        for (size_t i = 0; !ours && stem > 5 && i < n; i++) {
            const char *name = names[i];
            size_t nl = strlen(name);
            ours = (nl == stem - 5 && !strncmp(f, name, nl) &&
                    (!strncmp(f + nl, ".json", 5) || !strncmp(f + nl, ".html", 5))) ||
                   (nl == stem - 5 && f[0] == '.' && !strncmp(f + 1, name, nl) &&
                    !strncmp(f + 1 + nl, ".key", 4));
        }
        if (!ours) continue;
        char *path = cli_str_cat3(dir, "/", e->d_name);
        if (path && unlink(path) == 0 && !quiet)
            fprintf(stderr, "sturdy: removed '%s', left by an interrupted run\n", path);
        free(path);
    }
    closedir(d);
}

/* The default results folder: the plan's path without ".csv", plus ".results". */
char *cli_batch_default_dir(const char *plan)
{
    size_t n = strlen(plan);
    const char *slash = strrchr(plan, '/');
    size_t stem = n > 4 && !strcmp(plan + n - 4, ".csv") && (!slash || plan + n - 4 > slash + 1)
                  ? n - 4 : n;
    char *s = malloc(stem + sizeof ".results");
    if (!s) return NULL;
    memcpy(s, plan, stem);
    memcpy(s + stem, ".results", sizeof ".results");
    return s;
}

int cli_batch_make_dir(const char *dir)
{
    struct stat sb;
    if (mkdir(dir, 0777) == 0 || (errno == EEXIST && stat(dir, &sb) == 0 && S_ISDIR(sb.st_mode)))
        return 0;
    fprintf(stderr, "sturdy: cannot create the results folder '%s': %s\n", dir,
            errno == EEXIST ? "a file of that name is in the way" : strerror(errno));
    return STURDY_EOUTPUT;
}

/* Take the folder's advisory lock (flock on DIR/.sturdy-batch.lock, held until the
 * process ends), so that a second batch on the same folder refuses to start instead of
 * removing the first one's live temporary files as stale or overwriting its results.
 * Returns 0, or STURDY_EOUTPUT after a message. A file system without flock (some
 * network mounts) runs the batch unlocked, with a warning. */
int cli_batch_lock(const char *dir, int *lock_fd)
{
    char *path = cli_str_cat3(dir, "/", LOCK_NAME);
    int fd = path ? open(path, O_RDWR | O_CREAT | O_CLOEXEC, 0666) : -1;
    if (fd < 0) {
        fprintf(stderr, "sturdy: cannot create the lock file '%s': %s (nothing was run)\n",
                path ? path : LOCK_NAME, path ? strerror(errno) : "out of memory");
        free(path);
        return STURDY_EOUTPUT;
    }
    if (flock(fd, LOCK_EX | LOCK_NB) != 0) {
        int err = errno;
        if (err != EWOULDBLOCK) {
            fprintf(stderr, "sturdy: warning: cannot lock '%s' (%s); running without a "
                            "lock: do not start another batch on this folder meanwhile\n",
                    path, strerror(err));
            close(fd);
            free(path);
            return 0;
        }
        char pid[32] = "";
        ssize_t n = read(fd, pid, sizeof pid - 1);
        pid[n > 0 ? n : 0] = '\0';
        pid[strspn(pid, "0123456789")] = '\0';
        fprintf(stderr, "sturdy: the results folder '%s' is in use by another batch%s%s%s; "
                        "wait for it to end or give another folder with -o (nothing was "
                        "run)\n", dir, pid[0] ? " (process " : "", pid, pid[0] ? ")" : "");
        close(fd);
        free(path);
        return STURDY_EOUTPUT;
    }
    /* the holder's process id, for the message above (the lock itself is the flock) */
    char pid[32];
    int len = snprintf(pid, sizeof pid, "%ld\n", (long)getpid());
    if (ftruncate(fd, 0) != 0 || pwrite(fd, pid, (size_t)len, 0) != len) {
        /* the message then names no process; the lock holds all the same */
    }
    free(path);
    *lock_fd = fd;
    return 0;
}

