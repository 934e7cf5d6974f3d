/* rows.c — rows grouped by a label (cell, group or block), for the stages that walk
 * the rows of one label at a time. */
#include <stdlib.h>

#include "core/core.h"

sturdy_status sturdy_bucket_rows(const size_t *label, size_t n, size_t nlabels,
                                 size_t **start, size_t **rows, char *err)
{
    size_t *s = sturdy_calloc(nlabels + 1, sizeof *s);
    size_t *r = sturdy_malloc((n ? n : 1) * sizeof *r);
    size_t *fill = sturdy_calloc(nlabels ? nlabels : 1, sizeof *fill);
    *start = *rows = NULL;
    if (!s || !r || !fill) {
        sturdy_free(s); sturdy_free(r); sturdy_free(fill);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    for (size_t i = 0; i < n; i++)
        s[(label ? label[i] : 0) + 1]++;
    for (size_t k = 0; k < nlabels; k++)
        s[k + 1] += s[k];
    for (size_t i = 0; i < n; i++) {
        size_t k = label ? label[i] : 0;
        r[s[k] + fill[k]++] = i;
    }
    sturdy_free(fill);
    *start = s;
    *rows = r;
    return STURDY_OK;
}
