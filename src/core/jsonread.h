/* jsonread.h — a small JSON reader for the library's own files (shard parts, results
 * read back): parses a whole document into a tree. Numbers keep their text, so that
 * integers such as exceedance counts are read exactly. */
#ifndef STURDY_JSONREAD_H
#define STURDY_JSONREAD_H

#include <stddef.h>
#include <stdint.h>

typedef enum { JV_NULL, JV_FALSE, JV_TRUE, JV_NUMBER, JV_STRING, JV_ARRAY, JV_OBJECT } jv_kind;

typedef struct jv {
    jv_kind kind;
    char *text;          /* NUMBER: its literal; STRING: the decoded UTF-8 */
    size_t n;            /* ARRAY / OBJECT: number of items */
    struct jv *items;    /* ARRAY / OBJECT values */
    char **keys;         /* OBJECT keys */
} jv;

/* Parse `len` bytes. Returns NULL and writes "line L: what" into err (size errlen) on
 * malformed input or when memory ran out; *oom (may be NULL) says which (1: memory).
 * The tree is freed with jv_free. */
jv *jv_parse(const char *buf, size_t len, char *err, size_t errlen, int *oom);
void jv_free(jv *v);

/* Member `key` of an object, or NULL. */
const jv *jv_get(const jv *obj, const char *key);
/* Item i of an array, or NULL. */
const jv *jv_at(const jv *arr, size_t i);
/* Number as double (NaN for null), as an unsigned 64-bit integer (0 and *ok = 0 when not
 * a non-negative integer literal). */
double jv_double(const jv *v);
uint64_t jv_u64(const jv *v, int *ok);
/* String value or NULL. */
const char *jv_str(const jv *v);

#endif
