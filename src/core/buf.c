/* buf.c — a growing text buffer with printf-style appends (the writers and messages). */
#include <assert.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "core/core.h"
#include "sturdy/buf.h"

/* First allocation; doubling from here keeps appends amortised O(1). */
#define BUF_MIN_CAP 256

void sturdy_buf_init(sturdy_buf *b)
{
    b->data = NULL;
    b->len = b->cap = 0;
    b->failed = 0;
}

void sturdy_buf_free(sturdy_buf *b)
{
    if (!b) return;
    sturdy_free(b->data);
    sturdy_buf_init(b);
}

/* Make room for `extra` more bytes plus the terminating NUL. */
static int buf_reserve(sturdy_buf *b, size_t extra)
{
    if (b->failed) return 0;
    if (extra > (size_t)-1 / 2 - b->len) { b->failed = 1; return 0; }
    size_t need = b->len + extra + 1;
    if (need <= b->cap) return 1;
    size_t cap = b->cap ? b->cap : BUF_MIN_CAP;
    while (cap < need) cap *= 2;
    char *p = sturdy_realloc(b->data, cap);
    if (!p) { b->failed = 1; return 0; }
    b->data = p;
    b->cap = cap;
    assert(b->cap >= need);
    return 1;
}

void sturdy_buf_put(sturdy_buf *b, const char *s, size_t len)
{
    /* the writers append mostly a byte or a few at a time: those are copied here
       without a call to memcpy, once the room is known */
    if (b->failed || len >= b->cap - b->len) {
        if (!buf_reserve(b, len)) return;
    }
    char *d = b->data + b->len;
    if (len <= 8) {
        for (size_t i = 0; i < len; i++) d[i] = s[i];
    } else {
        memcpy(d, s, len);
    }
    b->len += len;
    d[len] = '\0';
}

void sturdy_buf_puts(sturdy_buf *b, const char *s)
{
    sturdy_buf_put(b, s, strlen(s));
}

/* Formats straight into the room left (one pass when the text fits, which is nearly
   always once the buffer has grown); only when it does not, grows the buffer and
   formats again. */
void sturdy_buf_printf(sturdy_buf *b, const char *fmt, ...)
{
    if (b->failed) return;
    size_t room = b->cap - b->len;  /* with the NUL's byte; 0 before the first allocation */
    va_list ap;
    va_start(ap, fmt);
    int n = vsnprintf(room ? b->data + b->len : NULL, room, fmt, ap);
    va_end(ap);
    if (n < 0) { b->failed = 1; return; }
    if ((size_t)n < room) {
        b->len += (size_t)n;
        return;
    }
    if (!buf_reserve(b, (size_t)n)) {
        if (b->data) b->data[b->len] = '\0';  /* the cut-off text overwrote the end */
        return;
    }
    va_start(ap, fmt);
    vsnprintf(b->data + b->len, (size_t)n + 1, fmt, ap);
    va_end(ap);
    b->len += (size_t)n;
}

size_t sturdy_utf8_len(const char *s)
{
    const unsigned char *p = (const unsigned char *)s;
    unsigned c = p[0];
    if (c < 0x80) return 1;
    size_t len;
    unsigned cp, min;
    if (c >= 0xc2 && c <= 0xdf) { len = 2; min = 0x80; cp = c & 0x1f; }
    else if (c >= 0xe0 && c <= 0xef) { len = 3; min = 0x800; cp = c & 0x0f; }
    else if (c >= 0xf0 && c <= 0xf4) { len = 4; min = 0x10000; cp = c & 0x07; }
    else return 0;
    for (size_t k = 1; k < len; k++) {
        if ((p[k] & 0xc0) != 0x80) return 0;
        cp = (cp << 6) | (p[k] & 0x3f);
    }
    if (cp < min || cp > 0x10ffff || (cp >= 0xd800 && cp <= 0xdfff)) return 0;
    return len;
}
