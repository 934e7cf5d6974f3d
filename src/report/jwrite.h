/* jwrite.h — the small JSON writer of the JSON report (private to json.c and jwrite.c):
 * items with keys at fixed two-blank indentation, arrays of scalars on one line, strings
 * escaped, numbers through sturdy_format_double. */
#ifndef STURDY_REPORT_JWRITE_H
#define STURDY_REPORT_JWRITE_H

#include <stddef.h>
#include <stdint.h>

#include "sturdy/buf.h"
#include "core/result.h"

/* Nesting the writer supports; the contract needs 6 levels. */
#define JW_MAX_DEPTH 16

typedef struct {
    sturdy_buf *b;
    int depth;
    int items[JW_MAX_DEPTH];   /* items written so far at each open level */
} jw;

/* A JSON string: escapes quotes, backslashes and control characters; valid UTF-8
 * passes through; bytes that are not valid UTF-8 become U+FFFD so the output stays
 * valid JSON whatever the input file's encoding. */
void jw_string_raw(sturdy_buf *b, const char *s);
/* Start an item at the current level: comma, newline, indent, and the key if any. */
void jw_item(jw *w, const char *key);
void jw_open(jw *w, const char *key, char bracket);
void jw_close(jw *w, char bracket);
void jw_num(jw *w, const char *key, double v);
void jw_u64(jw *w, const char *key, uint64_t v);
void jw_bool(jw *w, const char *key, int v);
void jw_null(jw *w, const char *key);
/* A string, or null for NULL. */
void jw_str(jw *w, const char *key, const char *s);
/* Arrays of scalars stay on one line: [a, b, c]. */
void jw_nums_inline(jw *w, const char *key, const double *v, size_t n);
void jw_u64s_inline(jw *w, const char *key, const uint64_t *v, size_t n);
void jw_pair(jw *w, const char *key, sturdy_pair p);
void jw_strs_inline(jw *w, const char *key, char *const *s, size_t n);

#endif
