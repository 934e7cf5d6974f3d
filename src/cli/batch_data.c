/* batch_data.c — the data table a batch keeps from one row to the next.
 *
 * A plan often runs many analyses of one file (one per response, or per setting). Each
 * row reads its data file once, for the digest of its key (batch_results.c); the table
 * parsed from those bytes is kept, and a later row whose bytes have the same SHA-256,
 * under the same name and table options, uses it instead of parsing the file again.
 * Equal digests stand for equal bytes, as they already do for --resume. One table is
 * kept (the last parsed): rows of one file next to each other share it. */
#include <stdlib.h>
#include <string.h>

#include "cli.h"

static void forget(cli_batch_data *d)
{
    sturdy_table_free(d->table);
    free(d->name);
    for (size_t i = 0; i < d->nmissing; i++) free(d->missing[i]);
    free(d->missing);
    memset(d, 0, sizeof *d);
}

void cli_batch_data_free(cli_batch_data *d) { forget(d); }

static int same_options(const cli_batch_data *d, const sturdy_table_opts *o)
{
    if (d->delimiter != o->delimiter || d->missing_default != !o->missing) return 0;
    if (!o->missing) return 1;
    if (d->nmissing != o->nmissing) return 0;
    for (size_t i = 0; i < o->nmissing; i++)
        if (strcmp(d->missing[i], o->missing[i])) return 0;
    return 1;
}

/* Record what the table was parsed from; 0, or -1 when memory runs out. */
static int remember(cli_batch_data *d, const char *name, const char *digest,
                    const sturdy_table_opts *o)
{
    d->name = strdup(name);
    memcpy(d->digest, digest, CLI_SHA256_HEX);
    d->delimiter = o->delimiter;
    d->missing_default = !o->missing;
    if (!d->name) return -1;
    if (o->missing && o->nmissing) {
        if (!(d->missing = calloc(o->nmissing, sizeof *d->missing))) return -1;
        for (; d->nmissing < o->nmissing; d->nmissing++)
            if (!(d->missing[d->nmissing] = strdup(o->missing[d->nmissing]))) return -1;
    }
    return 0;
}

const sturdy_table *cli_batch_data_table(cli_batch_data *d, const char *name,
                                         const char *digest, const char *bytes, size_t len,
                                         const sturdy_table_opts *o)
{
    if (d->table && !strcmp(d->name, name) && !memcmp(d->digest, digest, CLI_SHA256_HEX) &&
        same_options(d, o))
        return d->table;
    forget(d);                   /* first: one table at a time in memory */
    char err[STURDY_ERR_LEN];
    sturdy_table *t = NULL;
    if (sturdy_table_load_buffer(name, bytes, len, o, &t, err) != STURDY_OK) return NULL;
    if (remember(d, name, digest, o)) {
        sturdy_table_free(t);
        forget(d);
        return NULL;
    }
    d->table = t;
    return t;
}
