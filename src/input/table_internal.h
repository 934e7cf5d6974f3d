/* table_internal.h — helpers shared by table.c (loading) and table_numeric.c (exact
 * numeric conversion); private to the table stage. */
#ifndef STURDY_TABLE_INTERNAL_H
#define STURDY_TABLE_INTERNAL_H

#include "core/core.h"
#include "input/table_layout.h"

/* Offending text shown in messages is cut to this many bytes. */
#define SHOW_MAX 40
#define SHOW_LEN (SHOW_MAX + 8)

/* Copy `s` for a message: at most SHOW_MAX bytes, cut at a UTF-8 character boundary,
 * control characters shown as '?', "..." where cut. `dst` holds SHOW_LEN bytes. */
void sturdy_table_show(char *dst, const char *s);

/* A blank around a field: a space or a tab. */
static inline int sturdy_table_is_blank(char c) { return c == ' ' || c == '\t'; }

/* Trimmed extent [*a, *b) of s (spaces and tabs). */
void sturdy_table_trim_range(const char *s, size_t *a, size_t *b);

/* 1 when field `s` (trimmed) is one of o's missing tokens (the defaults when o->missing
 * is NULL). */
int sturdy_table_is_missing_token(const sturdy_table_opts *o, const char *s);

#endif
