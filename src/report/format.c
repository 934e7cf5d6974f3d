/* format.c — report options' defaults, round-trip number formatting and cell labels. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "sturdy/advanced.h"
#include "core/result.h"
#include "sturdy/report.h"

void sturdy_report_opts_init(sturdy_report_opts *o)
{
    memset(o, 0, sizeof *o);
    o->color = 0;
    o->width = 100;
    o->partial = 0;
}

/* Integral values below this magnitude print in plain digits ("12", "9999"): every
 * integer-valued double under 1e17 has at most 17 digits, so "%.0f" is exact. */
#define FORMAT_PLAIN_INT_LIMIT 1e17

void sturdy_format_double(double v, char *buf)
{
    if (!isfinite(v)) { strcpy(buf, "null"); return; }
    if (fabs(v) < FORMAT_PLAIN_INT_LIMIT && v == trunc(v)) {
        snprintf(buf, 32, "%.0f", v);
        return;
    }
    /* The fewest significant digits (15, 16 or 17) that read back to the same double:
     * 17 always do for IEEE binary64, and glibc's printf and strtod round correctly, so
     * the text is the same on every machine and 0.95 stays "0.95". */
    for (int prec = 15; prec <= 17; prec++) {
        snprintf(buf, 32, "%.*g", prec, v);
        if (prec == 17 || strtod(buf, NULL) == v) return;
    }
}

void sturdy_report_cell_label(const sturdy_design *d, size_t cell, sturdy_buf *out)
{
    if (!d || cell >= d->ncells || !d->cell_levels) {
        sturdy_buf_puts(out, "?");
        return;
    }
    for (size_t f = 0; f < d->nfactors; f++) {
        const sturdy_factor *fa = &d->factors[f];
        size_t lv = d->cell_levels[cell * d->nfactors + f];
        sturdy_buf_printf(out, "%s%s=%s", f ? ", " : "", fa->name,
                          lv < fa->nlevels ? fa->levels[lv] : "?");
    }
}
