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

/* strdup that returns NULL on NULL input or allocation failure. */
char *sturdy_strdup(const char *s);

/* malloc-ed printf; NULL on allocation failure. */
char *sturdy_asprintf(const char *fmt, ...) __attribute__((format(printf, 1, 2)));

/* calloc of n × size with overflow check. */
void *sturdy_calloc(size_t n, size_t size);

#endif
