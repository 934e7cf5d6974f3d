/* util.c — error messages and small allocation helpers for the library. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

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

char *sturdy_strdup(const char *s)
{
    if (!s)
        return NULL;
    size_t n = strlen(s) + 1;
    char *d = malloc(n);
    if (d)
        memcpy(d, s, n);
    return d;
}

sturdy_status sturdy_note_once(char **slot, const char *text, char *err)
{
    if (*slot)
        return STURDY_OK;
    *slot = sturdy_strdup(text);
    return *slot ? STURDY_OK : sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
}

char *sturdy_asprintf(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    int len = vsnprintf(NULL, 0, fmt, ap);
    va_end(ap);
    if (len < 0)
        return NULL;
    char *s = malloc((size_t)len + 1);
    if (!s)
        return NULL;
    va_start(ap, fmt);
    vsnprintf(s, (size_t)len + 1, fmt, ap);
    va_end(ap);
    return s;
}

void *sturdy_calloc(size_t n, size_t size)
{
    if (n == 0 || size == 0)
        return calloc(1, 1);
    return calloc(n, size);
}
