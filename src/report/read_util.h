/* read_util.h — what the readers of results (read.c) and of shard parts (read_part.c)
 * share: typed looks at parsed JSON, and the parse itself. */
#ifndef STURDY_REPORT_READ_UTIL_H
#define STURDY_REPORT_READ_UTIL_H

#include <stdint.h>

#include "core/jsonread.h"
#include "sturdy/common.h"

static inline int is_kind(const jv *v, jv_kind k) { return v && v->kind == k; }

/* A non-negative integer member; 0 when missing or not one. */
static inline int get_u64(const jv *obj, const char *key, uint64_t *out)
{
    int ok = 0;
    *out = jv_u64(jv_get(obj, key), &ok);
    return ok;
}

/* The parsed document, or NULL with *st the failure: EDATA for text that is not JSON,
 * EINTERNAL when memory ran out (read.c). */
jv *rd_parse(const char *name, const char *text, size_t len, sturdy_status *st, char *err);

#endif
