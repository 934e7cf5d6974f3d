/* jwrite.c — the small JSON writer of the JSON report (jwrite.h). */
#include <inttypes.h>
#include <stdio.h>

#include "report/jwrite.h"
#include "sturdy/report.h"

/* A JSON string: escapes quotes, backslashes and control characters; valid UTF-8
 * passes through; bytes that are not valid UTF-8 become U+FFFD so the output stays
 * valid JSON whatever the input file's encoding. */
void jw_string_raw(sturdy_buf *b, const char *s)
{
    const unsigned char *p = (const unsigned char *)s;
    sturdy_buf_put(b, "\"", 1);
    while (*p) {
        unsigned c = *p;
        if (c == '"' || c == '\\') {
            char esc[2] = { '\\', (char)c };
            sturdy_buf_put(b, esc, 2);
            p++;
        } else if (c == '\n') { sturdy_buf_put(b, "\\n", 2); p++; }
        else if (c == '\r') { sturdy_buf_put(b, "\\r", 2); p++; }
        else if (c == '\t') { sturdy_buf_put(b, "\\t", 2); p++; }
        else if (c < 0x20 || c == 0x7f) { sturdy_buf_printf(b, "\\u%04x", c); p++; }
        else if (c < 0x80) { sturdy_buf_put(b, (const char *)p, 1); p++; }
        else {
            size_t len = sturdy_utf8_len((const char *)p);
            if (len) { sturdy_buf_put(b, (const char *)p, len); p += len; }
            else { sturdy_buf_puts(b, "\\ufffd"); p++; }
        }
    }
    sturdy_buf_put(b, "\"", 1);
}

/* Start an item at the current level: comma, newline, indent, and the key if any. */
void jw_item(jw *w, const char *key)
{
    if (w->items[w->depth]++) sturdy_buf_put(w->b, ",", 1);
    sturdy_buf_put(w->b, "\n", 1);
    for (int i = 0; i < w->depth; i++) sturdy_buf_put(w->b, "  ", 2);
    if (key) {
        jw_string_raw(w->b, key);
        sturdy_buf_put(w->b, ": ", 2);
    }
}

void jw_open(jw *w, const char *key, char bracket)
{
    jw_item(w, key);
    sturdy_buf_put(w->b, &bracket, 1);
    if (w->depth + 1 < JW_MAX_DEPTH) w->depth++;
    w->items[w->depth] = 0;
}

void jw_close(jw *w, char bracket)
{
    int had = w->items[w->depth];
    if (w->depth > 0) w->depth--;
    if (had) {
        sturdy_buf_put(w->b, "\n", 1);
        for (int i = 0; i < w->depth; i++) sturdy_buf_put(w->b, "  ", 2);
    }
    sturdy_buf_put(w->b, &bracket, 1);
}

void jw_num(jw *w, const char *key, double v)
{
    char s[32];
    sturdy_format_double(v, s);
    jw_item(w, key);
    sturdy_buf_puts(w->b, s);
}

void jw_u64(jw *w, const char *key, uint64_t v)
{
    jw_item(w, key);
    sturdy_buf_printf(w->b, "%" PRIu64, v);
}

void jw_bool(jw *w, const char *key, int v)
{
    jw_item(w, key);
    sturdy_buf_puts(w->b, v ? "true" : "false");
}

void jw_null(jw *w, const char *key)
{
    jw_item(w, key);
    sturdy_buf_puts(w->b, "null");
}

/* A string, or null for NULL. */
void jw_str(jw *w, const char *key, const char *s)
{
    jw_item(w, key);
    if (s) jw_string_raw(w->b, s);
    else sturdy_buf_puts(w->b, "null");
}

/* Arrays of scalars stay on one line: [a, b, c]. */
void jw_nums_inline(jw *w, const char *key, const double *v, size_t n)
{
    char s[32];
    jw_item(w, key);
    sturdy_buf_put(w->b, "[", 1);
    for (size_t i = 0; i < n; i++) {
        sturdy_format_double(v[i], s);
        sturdy_buf_printf(w->b, "%s%s", i ? ", " : "", s);
    }
    sturdy_buf_put(w->b, "]", 1);
}

void jw_u64s_inline(jw *w, const char *key, const uint64_t *v, size_t n)
{
    jw_item(w, key);
    sturdy_buf_put(w->b, "[", 1);
    for (size_t i = 0; i < n; i++)
        sturdy_buf_printf(w->b, "%s%" PRIu64, i ? ", " : "", v[i]);
    sturdy_buf_put(w->b, "]", 1);
}

void jw_pair(jw *w, const char *key, sturdy_pair p)
{
    double v[2] = { p.lo, p.hi };
    jw_nums_inline(w, key, v, 2);
}

void jw_strs_inline(jw *w, const char *key, char *const *s, size_t n)
{
    jw_item(w, key);
    sturdy_buf_put(w->b, "[", 1);
    for (size_t i = 0; i < n; i++) {
        if (i) sturdy_buf_puts(w->b, ", ");
        jw_string_raw(w->b, s[i] ? s[i] : "");
    }
    sturdy_buf_put(w->b, "]", 1);
}
