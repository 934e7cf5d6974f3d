/* core.h — helpers shared by the library's own files; not part of the public API. */
#ifndef STURDY_INTERNAL_H
#define STURDY_INTERNAL_H

#include <stdarg.h>
#include <stddef.h>

#include "sturdy/common.h"

/* Write a formatted message into err (STURDY_ERR_LEN bytes; NULL is allowed) and
 * return `s`, so that callers can `return sturdy_fail(err, STURDY_EDATA, ...)`. */
sturdy_status sturdy_fail(char *err, sturdy_status s, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

/* Sets *slot to a copy of `text` unless a note is there already (the first reason
 * stands); STURDY_EINTERNAL with a message when out of memory. */
sturdy_status sturdy_note_once(char **slot, const char *text, char *err);

/* Allocation (alloc.c): every allocation of the library goes through these, and so
 * through the allocator of sturdy_set_allocator. NULL means out of memory, never a
 * request of 0 bytes (0 is served as 1 byte). Thread-safe. Memory from them is released
 * with sturdy_free only. */
void *sturdy_malloc(size_t size);
/* n × size zeroed bytes; NULL also when the product overflows. */
void *sturdy_calloc(size_t n, size_t size);
/* Like realloc: NULL on failure leaves p allocated; p NULL allocates. */
void *sturdy_realloc(void *p, size_t size);
/* Accepts NULL. */
void sturdy_free(void *p);

/* strdup through sturdy_malloc; NULL on NULL input or allocation failure. */
char *sturdy_strdup(const char *s);

/* printf into a fresh string (sturdy_malloc); NULL on allocation failure. */
char *sturdy_asprintf(const char *fmt, ...) __attribute__((format(printf, 1, 2)));

#endif
