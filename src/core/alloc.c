/* alloc.c — the library's one allocation hook: every allocation goes through the
 * process-wide allocator of sturdy_set_allocator (default: the C library's), so that a
 * caller can account for the memory or inject failures (tests/test_alloc_fail.c). The
 * allocator is set before any other call and only read afterwards, so the functions
 * here are thread-safe whenever the installed ones are. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "core/core.h"

static void *libc_malloc(size_t size, void *arg)
{
    (void)arg;
    return malloc(size);
}

static void *libc_realloc(void *p, size_t size, void *arg)
{
    (void)arg;
    return realloc(p, size);
}

static void libc_free(void *p, void *arg)
{
    (void)arg;
    free(p);
}

static sturdy_allocator current = { libc_malloc, libc_realloc, libc_free, NULL };

void sturdy_set_allocator(const sturdy_allocator *a)
{
    static const sturdy_allocator libc = { libc_malloc, libc_realloc, libc_free, NULL };
    current = a && a->malloc_fn && a->realloc_fn && a->free_fn ? *a : libc;
}

void *sturdy_malloc(size_t size)
{
    return current.malloc_fn(size ? size : 1, current.arg);
}

void *sturdy_calloc(size_t n, size_t size)
{
    if (size && n > (size_t)-1 / size)
        return NULL;
    size_t total = n * size;
    void *p = sturdy_malloc(total);
    if (p)
        memset(p, 0, total ? total : 1);
    return p;
}

void *sturdy_realloc(void *p, size_t size)
{
    return current.realloc_fn(p, size ? size : 1, current.arg);
}

void sturdy_free(void *p)
{
    if (p)
        current.free_fn(p, current.arg);
}

char *sturdy_strdup(const char *s)
{
    if (!s)
        return NULL;
    size_t n = strlen(s) + 1;
    char *d = sturdy_malloc(n);
    if (d)
        memcpy(d, s, n);
    return d;
}

char *sturdy_asprintf(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    int len = vsnprintf(NULL, 0, fmt, ap);
    va_end(ap);
    if (len < 0)
        return NULL;
    char *s = sturdy_malloc((size_t)len + 1);
    if (!s)
        return NULL;
    va_start(ap, fmt);
    vsnprintf(s, (size_t)len + 1, fmt, ap);
    va_end(ap);
    return s;
}
