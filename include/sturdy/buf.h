/* buf.h — a growing memory buffer that the writers append to. Part of the stable tier.
 * Read `data` and `len`; the other fields belong to the library. */
#ifndef STURDY_BUF_H
#define STURDY_BUF_H

#include <stddef.h>

typedef struct {
    char *data;      /* NUL-terminated once anything was written (NULL before); owned */
    size_t len, cap;
    int failed;      /* an allocation failed; contents are incomplete */
} sturdy_buf;

void sturdy_buf_init(sturdy_buf *b);
/* Frees the data and leaves `b` empty and reusable. Accepts NULL. */
void sturdy_buf_free(sturdy_buf *b);
/* printf-style append; on allocation failure sets b->failed and keeps going. */
void sturdy_buf_printf(sturdy_buf *b, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));
/* Append `len` bytes (len 0 still allocates, so data is non-NULL afterwards). */
void sturdy_buf_put(sturdy_buf *b, const char *s, size_t len);
/* Append a NUL-terminated string. */
void sturdy_buf_puts(sturdy_buf *b, const char *s);

/* Bytes of the well-formed UTF-8 sequence starting at p (1 for ASCII), or 0 when the
 * bytes there are not valid UTF-8 (overlong, surrogate, truncated, beyond U+10FFFF). */
size_t sturdy_utf8_len(const char *p);

#endif
