/* table_layout.h — the fields of a table, for the library's stages (the public header
 * keeps sturdy_table opaque). */
#ifndef STURDY_TABLE_LAYOUT_H
#define STURDY_TABLE_LAYOUT_H

#include "sturdy/table.h"

typedef struct {
    char *name;              /* header text, trimmed of blanks even when quoted */
    char **text;             /* nrows fields as read, owned: quotes removed; unquoted fields
                                trimmed of spaces and tabs, quoted content kept verbatim */
    unsigned char *missing;  /* nrows flags: 1 where the field is a missing token */
} sturdy_column;

struct sturdy_table {
    char *source;            /* the file name as given; "<stdin>" for "-" */
    char delimiter;          /* the field separator it was read with */
    size_t nrows, ncols;     /* data rows (header excluded) and columns */
    sturdy_column *cols;
    size_t *line;            /* nrows: file line (from 1) on which data row i starts; LF,
                                CRLF and a lone CR each end a line, inside quoted fields
                                too, and skipped blank lines count */
};

#endif
