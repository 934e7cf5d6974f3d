/* util.c — error messages and notes for the library (allocation: alloc.c). */
#include <stdio.h>
#include <sys/resource.h>
#include <unistd.h>

#include "core/core.h"

sturdy_status sturdy_fail(char *err, sturdy_status s, const char *fmt, ...)
{
    if (err) {
        va_list ap;
        va_start(ap, fmt);
        vsnprintf(err, STURDY_ERR_LEN, fmt, ap);
        va_end(ap);
    }
    return s;
}

sturdy_status sturdy_note_once(char **slot, const char *text, char *err)
{
    if (*slot)
        return STURDY_OK;
    *slot = sturdy_strdup(text);
    return *slot ? STURDY_OK : sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
}

const char *sturdy_format_bytes(double bytes, char *buf)
{
    static const char *const unit[] = { "bytes", "KiB", "MiB", "GiB", "TiB", "PiB", "EiB" };
    int u = 0;
    while (bytes >= 1024.0 && u < 6) {
        bytes /= 1024.0;
        u++;
    }
    snprintf(buf, 32, "%.3g %s", bytes, unit[u]);
    return buf;
}

int sturdy_address_space_left(size_t *bytes)
{
    struct rlimit rl;
    *bytes = 0;
    if (getrlimit(RLIMIT_AS, &rl) != 0 || rl.rlim_cur == RLIM_INFINITY)
        return 0;
    FILE *f = fopen("/proc/self/statm", "r");
    unsigned long pages = 0;
    int got = f && fscanf(f, "%lu", &pages) == 1;
    if (f)
        fclose(f);
    long page = sysconf(_SC_PAGESIZE);
    if (!got || page <= 0)
        return 0;
    double used = (double)pages * (double)page, limit = (double)rl.rlim_cur;
    *bytes = used < limit ? (size_t)(limit - used) : 0;
    return 1;
}
