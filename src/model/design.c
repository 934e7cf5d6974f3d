/* design.c — from table to design: used rows, factor levels, cells, groups, terms and
 * the sum-to-zero coded columns (one row per group). */
#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <stdint.h>
#include <string.h>

#include "core/core.h"
#include "input/table_layout.h"
#include "input/levels.h"
#include "model/terms.h"
#include "sturdy/design.h"
#include "sturdy/buf.h"

void sturdy_model_spec_init(sturdy_model_spec *s)
{
    memset(s, 0, sizeof *s);
}

/* Sort key for grouping rows by a tuple of level indices. */
typedef struct {
    const size_t *key;
    size_t len;
    size_t row;
} tuple_ref;

static int cmp_tuple(const void *a, const void *b)
{
    const tuple_ref *x = a, *y = b;
    for (size_t k = 0; k < x->len; k++) {
        if (x->key[k] != y->key[k])
            return x->key[k] < y->key[k] ? -1 : 1;
    }
    return x->row < y->row ? -1 : (x->row > y->row);
}

static void factor_free(sturdy_factor *f)
{
    if (!f->levels) { sturdy_free(f->name); return; }
    for (size_t j = 0; j < f->nlevels; j++)
        sturdy_free(f->levels[j]);
    sturdy_free(f->levels);
    sturdy_free(f->name);
}

void sturdy_design_free(sturdy_design *d)
{
    if (!d)
        return;
    sturdy_free(d->source);
    sturdy_free(d->row);
    sturdy_free(d->line);
    for (size_t i = 0; i < d->ndropped; i++)
        sturdy_free(d->dropped[i].reason);
    sturdy_free(d->dropped);
    for (size_t i = 0; i < d->nwarnings; i++)
        sturdy_free(d->warnings[i]);
    sturdy_free(d->warnings);
    for (size_t f = 0; d->factors && f < d->nfactors; f++)
        factor_free(&d->factors[f]);
    sturdy_free(d->factors);
    sturdy_free(d->level);
    if (d->has_block)
        factor_free(&d->block);
    sturdy_free(d->block_level);
    for (size_t c = 0; d->cov_names && c < d->ncov; c++)
        sturdy_free(d->cov_names[c]);
    sturdy_free(d->cov_names);
    sturdy_free(d->cov);
    for (size_t r = 0; d->resp_names && r < d->nresp; r++)
        sturdy_free(d->resp_names[r]);
    sturdy_free(d->resp_names);
    sturdy_free(d->y);
    sturdy_free(d->y_ref);
    sturdy_free(d->cell);
    sturdy_free(d->cell_count);
    sturdy_free(d->cell_levels);
    sturdy_free(d->group);
    sturdy_free(d->group_count);
    for (size_t t = 0; t < d->nterms; t++)
        sturdy_free(d->terms[t].label);
    sturdy_free(d->terms);
    sturdy_free(d->Xg);
    sturdy_free(d);
}

/* A name this close to an unknown one (edit distance, ignoring case) is suggested:
 * at most 2 edits, or a third of the name's length for longer names. */
#define SUGGEST_MAX_EDITS 2
#define SUGGEST_EDITS_PER_CHAR 3

static char lower(char c) { return c >= 'A' && c <= 'Z' ? (char)(c - 'A' + 'a') : c; }

/* Levenshtein distance ignoring ASCII case (Wagner & Fischer 1974), or SIZE_MAX when
 * memory runs out. */
static size_t edit_distance(const char *a, const char *b)
{
    size_t la = strlen(a), lb = strlen(b);
    size_t *row = sturdy_malloc((lb + 1) * sizeof *row);
    if (!row) return (size_t)-1;
    for (size_t j = 0; j <= lb; j++) row[j] = j;
    for (size_t i = 1; i <= la; i++) {
        size_t diag = row[0];
        row[0] = i;
        for (size_t j = 1; j <= lb; j++) {
            size_t up = row[j];
            size_t best = diag + (lower(a[i - 1]) != lower(b[j - 1]));
            if (up + 1 < best) best = up + 1;
            if (row[j - 1] + 1 < best) best = row[j - 1] + 1;
            row[j] = best;
            diag = up;
        }
    }
    size_t d = row[lb];
    sturdy_free(row);
    return d;
}

/* "no column named 'x' (the factor)", then the closest name, the delimiter hint when
 * the header is one field, and the file's columns (as many as the message holds). */
static sturdy_status unknown_column(const sturdy_table *t, const char *name, const char *role,
                                    char *err)
{
    size_t best = (size_t)-1, best_col = 0, len = strlen(name);
    size_t limit = len / SUGGEST_EDITS_PER_CHAR > SUGGEST_MAX_EDITS
                       ? len / SUGGEST_EDITS_PER_CHAR : SUGGEST_MAX_EDITS;
    for (size_t j = 0; j < t->ncols; j++) {
        size_t dist = edit_distance(name, t->cols[j].name);
        if (dist == (size_t)-1)
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        if (dist < best) { best = dist; best_col = j; }
    }
    const char *hint = sturdy_table_delimiter_hint(t);
    sturdy_buf b;
    sturdy_buf_init(&b);
    sturdy_buf_printf(&b, "%s: no column named '%s' (the %s)", t->source, name, role);
    if (hint)
        sturdy_buf_printf(&b, "; the header is one field: %s", hint);
    else if (best <= limit)
        sturdy_buf_printf(&b, "; did you mean '%s'?", t->cols[best_col].name);
    if (!hint) {
        sturdy_buf_puts(&b, " The file's columns: ");
        for (size_t j = 0; j < t->ncols; j++) {
            /* keep room for " and N more" within the error buffer */
            if (b.len + strlen(t->cols[j].name) + 24 >= STURDY_ERR_LEN) {
                sturdy_buf_printf(&b, " and %zu more", t->ncols - j);
                break;
            }
            sturdy_buf_printf(&b, "%s%s", j ? ", " : "", t->cols[j].name);
        }
    }
    sturdy_status st = b.failed ? sturdy_fail(err, STURDY_EINTERNAL, "out of memory")
                                : sturdy_fail(err, STURDY_EUSAGE, "%s", b.data);
    sturdy_buf_free(&b);
    return st;
}

/* Column lookup for the spec: unknown and repeated names are usage errors. */
static sturdy_status find_columns(const sturdy_table *t, const char *const *names, size_t k,
                                  const char *role, long *idx, unsigned char *used,
                                  char *err)
{
    for (size_t i = 0; i < k; i++) {
        long c = sturdy_table_find(t, names[i]);
        if (c < 0)
            return unknown_column(t, names[i], role, err);
        if (used[c])
            return sturdy_fail(err, STURDY_EUSAGE,
                               "%s: column '%s' is used twice in the model", t->source,
                               names[i]);
        used[c] = 1;
        idx[i] = c;
    }
    return STURDY_OK;
}

/* A tuple's hash: each key mixed in turn (splitmix64's finaliser). */
static uint64_t tuple_hash(const size_t *key, size_t len)
{
    uint64_t h = 0x9e3779b97f4a7c15ULL;
    for (size_t k = 0; k < len; k++) {
        h ^= (uint64_t)key[k] + 0x9e3779b97f4a7c15ULL + (h << 6) + (h >> 2);
        h = (h ^ (h >> 30)) * 0xbf58476d1ce4e5b9ULL;
        h = (h ^ (h >> 27)) * 0x94d049bb133111ebULL;
        h ^= h >> 31;
    }
    return h;
}

/* Assign group ids to rows from tuples of `len` keys per row: ids in the tuples'
 * lexicographic order, each group's first row the smallest row holding it. One hashed
 * pass (open addressing, at most half full) finds the distinct tuples in order of first
 * appearance; only those are sorted (the rows used to be sorted: 20 M instructions per
 * design at n = 20,000). */
static sturdy_status group_rows(size_t n, const size_t *keys, size_t len, size_t *id,
                                size_t *nids, size_t **first_row, char *err)
{
    size_t cap = 16;
    while (cap < 2 * n + 2)
        cap *= 2;
    size_t *slot = sturdy_malloc(cap * sizeof *slot);      /* a tuple's index, or SIZE_MAX */
    size_t *first = sturdy_malloc((n + 1) * sizeof *first); /* by first appearance */
    size_t *prov = sturdy_malloc((n + 1) * sizeof *prov);   /* each row's tuple */
    tuple_ref *ref = sturdy_malloc((n + 1) * sizeof *ref);
    size_t *rank = sturdy_malloc((n + 1) * sizeof *rank);
    if (!slot || !first || !prov || !ref || !rank) {
        sturdy_free(slot); sturdy_free(first); sturdy_free(prov); sturdy_free(ref);
        sturdy_free(rank);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    for (size_t c = 0; c < cap; c++)
        slot[c] = SIZE_MAX;
    size_t k = 0;
    for (size_t i = 0; i < n; i++) {
        const size_t *key = keys + i * len;
        size_t c = (size_t)tuple_hash(key, len) & (cap - 1);
        while (slot[c] != SIZE_MAX &&
               memcmp(keys + first[slot[c]] * len, key, len * sizeof *key) != 0)
            c = (c + 1) & (cap - 1);
        if (slot[c] == SIZE_MAX) {          /* a new tuple: this is its first row */
            slot[c] = k;
            first[k++] = i;
        }
        prov[i] = slot[c];
    }
    /* the distinct tuples in lexicographic order (their first rows break no ties) */
    for (size_t j = 0; j < k; j++) {
        ref[j].key = keys + first[j] * len;
        ref[j].len = len;
        ref[j].row = first[j];
    }
    qsort(ref, k, sizeof *ref, cmp_tuple);
    for (size_t j = 0; j < k; j++) {
        rank[prov[ref[j].row]] = j;
        first[j] = ref[j].row;
    }
    for (size_t i = 0; i < n; i++)
        id[i] = rank[prov[i]];
    sturdy_free(slot);
    sturdy_free(prov);
    sturdy_free(ref);
    sturdy_free(rank);
    *nids = k;
    *first_row = first;
    return STURDY_OK;
}

/* The spec names a response, a factor or covariate, and not too many factors. */
static sturdy_status check_counts(const sturdy_model_spec *s, char *err)
{
    if (s->nresponses == 0)
        return sturdy_fail(err, STURDY_EUSAGE, "no response column given");
    if (s->nfactors == 0 && s->ncovariates == 0)
        return sturdy_fail(err, STURDY_EUSAGE, "no factor given");
    if (s->nfactors > STURDY_MAX_FACTORS)
        return sturdy_fail(err, STURDY_EUSAGE, "%zu factors; at most %d are supported",
                           s->nfactors, STURDY_MAX_FACTORS);
    return STURDY_OK;
}

/* The table columns the spec names, in one array *ri: responses, then factors, then
 * covariates, then the block (-1 without one); (*used)[c] marks the columns named. Both
 * are the caller's to free, also on failure. */
static sturdy_status find_spec_columns(const sturdy_table *t, const sturdy_model_spec *s,
                                       long **ri, unsigned char **used, char *err)
{
    size_t nr = s->nresponses, nf = s->nfactors, nc = s->ncovariates;
    sturdy_status st;
    *used = sturdy_calloc(t->ncols ? t->ncols : 1, 1);
    *ri = sturdy_malloc((nr + nf + nc + 1) * sizeof **ri);
    if (!*used || !*ri)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    long *fi = *ri + nr, *ci = fi + nf, *bi = ci + nc;
    *bi = -1;
    if ((st = sturdy_levels_check_orders(s, err)) ||
        (st = find_columns(t, s->responses, nr, "response", *ri, *used, err)) ||
        (st = find_columns(t, s->factors, nf, "factor", fi, *used, err)) ||
        (st = find_columns(t, s->covariates, nc, "covariate", ci, *used, err)) ||
        (s->block && (st = find_columns(t, &s->block, 1, "block", bi, *used, err))))
        return st;
    return STURDY_OK;
}

/* Why row i, which lacks nmiss used columns (the first: `first`), is left out; NULL when
 * out of memory. The note names every used column the row lacks, so a row missing only
 * a second response says so. */
static char *dropped_reason(const sturdy_table *t, const unsigned char *used, const long *ri,
                            size_t nr, size_t i, size_t nmiss, long first)
{
    char *reason;
    if (nmiss == 1) {
        reason = sturdy_asprintf("missing value in column '%s'", t->cols[first].name);
    } else {
        sturdy_buf b;
        sturdy_buf_init(&b);
        sturdy_buf_puts(&b, "missing values in columns ");
        for (size_t c = 0, k = 0; c < t->ncols; c++)
            if (used[c] && t->cols[c].missing[i]) {
                k++;
                sturdy_buf_printf(&b, "%s'%s'", k == 1 ? "" : k == nmiss ? " and " : ", ",
                                  t->cols[c].name);
            }
        reason = b.failed ? NULL : sturdy_strdup(b.data);
        sturdy_buf_free(&b);
    }
    int resp_missing = 0, resp_present = 0;
    for (size_t j = 0; j < nr; j++) {
        if (t->cols[ri[j]].missing[i]) resp_missing = 1;
        else resp_present = 1;
    }
    if (reason && resp_missing && resp_present) {
        char *longer = sturdy_asprintf("%s; the row is left out of every response", reason);
        sturdy_free(reason);
        reason = longer;
    }
    return reason;
}

/* The error when no row is left: it names the used column that empties the table the
 * most. */
static sturdy_status no_rows_left(const sturdy_table *t, const sturdy_model_spec *s,
                                  const long *ri, char *err)
{
    size_t nspec = s->nresponses + s->nfactors + s->ncovariates + 1;
    size_t worst = 0, worst_count = 0;
    for (size_t c = 0; c < t->ncols; c++) {
        size_t k = 0;
        int is_used = 0;
        for (size_t j = 0; j < nspec; j++)
            is_used |= ri[j] == (long)c;
        if (!is_used)
            continue;
        for (size_t i = 0; i < t->nrows; i++)
            k += t->cols[c].missing[i];
        if (k > worst_count) {
            worst_count = k;
            worst = c;
        }
    }
    return sturdy_fail(err, STURDY_EDATA,
                       "%s: no rows left: every one of the %zu rows has a missing value in a "
                       "column the model uses (column '%s' is missing in %zu rows)",
                       t->source, t->nrows, t->cols[worst].name, worst_count);
}

/* The rows used: those with a value in every used column. A row missing any used column
 * leaves every response, so that all responses share one design (one set of rows, cells
 * and rearrangements); it is listed in d->dropped with the reason. */
static sturdy_status select_rows(const sturdy_table *t, const sturdy_model_spec *s,
                                 sturdy_design *d, const long *ri, const unsigned char *used,
                                 char *err)
{
    d->source = sturdy_strdup(t->source);
    d->rows_read = t->nrows;
    d->row = sturdy_malloc((t->nrows ? t->nrows : 1) * sizeof *d->row);
    d->line = sturdy_malloc((t->nrows ? t->nrows : 1) * sizeof *d->line);
    d->dropped = sturdy_calloc(t->nrows ? t->nrows : 1, sizeof *d->dropped);
    if (!d->source || !d->row || !d->line || !d->dropped)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    for (size_t i = 0; i < t->nrows; i++) {
        size_t nmiss = 0;
        long first = -1;
        for (size_t c = 0; c < t->ncols; c++)
            if (used[c] && t->cols[c].missing[i]) {
                if (first < 0) first = (long)c;
                nmiss++;
            }
        if (!nmiss) {
            d->row[d->n] = i;
            d->line[d->n] = t->line[i];
            d->n++;
            continue;
        }
        sturdy_dropped *dr = &d->dropped[d->ndropped++];
        dr->row = i;
        dr->line = t->line[i];
        dr->reason = dropped_reason(t, used, ri, s->nresponses, i, nmiss, first);
        if (!dr->reason)
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    return d->n ? STURDY_OK : no_rows_left(t, s, ri, err);
}

/* The responses over the used rows, each converted exactly (sturdy_table_numeric). */
static sturdy_status read_responses(const sturdy_table *t, const sturdy_model_spec *s,
                                    sturdy_design *d, const long *ri, char *err)
{
    size_t n = d->n, nr = s->nresponses;
    sturdy_status st;
    d->resp_names = sturdy_calloc(nr, sizeof *d->resp_names);
    d->y = sturdy_malloc(n * nr * sizeof *d->y);
    d->y_ref = sturdy_malloc(nr * sizeof *d->y_ref);
    if (!d->resp_names || !d->y || !d->y_ref)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    d->nresp = nr;
    for (size_t r = 0; r < nr; r++) {
        if (!(d->resp_names[r] = sturdy_strdup(t->cols[ri[r]].name)))
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        if ((st = sturdy_table_numeric(t, (size_t)ri[r], d->row, n, d->y + r * n,
                                       &d->y_ref[r], err)))
            return st;
    }
    return STURDY_OK;
}

/* The covariates (columns ci) over the used rows, converted exactly and centred; a
 * constant one cannot be adjusted for. */
static sturdy_status read_covariates(const sturdy_table *t, const sturdy_model_spec *s,
                                     sturdy_design *d, const long *ci, char *err)
{
    size_t n = d->n, nc = s->ncovariates;
    sturdy_status st;
    d->cov_names = sturdy_calloc(nc ? nc : 1, sizeof *d->cov_names);
    d->cov = sturdy_malloc((nc > 0 ? n * nc : 1) * sizeof *d->cov);
    if (!d->cov_names || !d->cov)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    d->ncov = nc;
    for (size_t c = 0; c < nc; c++) {
        double ref, *x = d->cov + c * n;
        if (!(d->cov_names[c] = sturdy_strdup(t->cols[ci[c]].name)))
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        if ((st = sturdy_table_numeric(t, (size_t)ci[c], d->row, n, x, &ref, err)))
            return st;
        /* centre (two passes) so the coded columns are well conditioned */
        double mean;
        sturdy_centred_ss(x, n, &mean);
        int constant = 1;
        for (size_t i = 0; i < n; i++) {
            x[i] -= mean;
            if (x[i] != x[0]) constant = 0;
        }
        if (constant)
            return sturdy_fail(err, STURDY_EMODEL,
                               "%s: covariate '%s' is constant in the rows used", t->source,
                               d->cov_names[c]);
    }
    return STURDY_OK;
}

/* The levels of the factors (columns fi) and of the block (column *bi, or none when
 * negative), and each used row's level of each. */
static sturdy_status read_levels(const sturdy_table *t, const sturdy_model_spec *s,
                                 sturdy_design *d, const long *fi, const long *bi, char *err)
{
    size_t n = d->n, nf = s->nfactors;
    size_t max_levels = s->max_levels ? s->max_levels : STURDY_DEFAULT_MAX_LEVELS;
    sturdy_status st;
    d->factors = sturdy_calloc(nf, sizeof *d->factors);
    d->level = sturdy_calloc(n * nf, sizeof *d->level);
    if (!d->factors || !d->level)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    d->nfactors = nf;
    for (size_t f = 0; f < nf; f++)
        if ((st = sturdy_levels_make(t, fi[f], d, s, max_levels, "factor", &d->factors[f],
                                     d->level + f, nf, err)))
            return st;
    if (*bi < 0)
        return STURDY_OK;
    d->has_block = 1;
    d->block_level = sturdy_malloc(n * sizeof *d->block_level);
    if (!d->block_level)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    return sturdy_levels_make(t, *bi, d, s, max_levels, "block", &d->block, d->block_level,
                              1, err);
}

/* Cells: rows sharing every factor level; their sizes and whether the design is
 * balanced. */
static sturdy_status make_cells(sturdy_design *d, char *err)
{
    size_t n = d->n, nf = d->nfactors;
    sturdy_status st;
    double possible = 1.0;
    for (size_t f = 0; f < nf; f++)
        possible *= (double)d->factors[f].nlevels;
    d->ncells_possible = possible < 1e18 ? (size_t)possible : (size_t)-1;
    size_t *first;
    d->cell = sturdy_malloc(n * sizeof *d->cell);
    if (!d->cell)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    if ((st = group_rows(n, d->level, nf, d->cell, &d->ncells, &first, err)))
        return st;
    d->cell_count = sturdy_calloc(d->ncells, sizeof *d->cell_count);
    d->cell_levels = sturdy_calloc(d->ncells * nf, sizeof *d->cell_levels);
    if (!d->cell_count || !d->cell_levels) {
        sturdy_free(first);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    for (size_t c = 0; c < d->ncells; c++)
        memcpy(d->cell_levels + c * nf, d->level + first[c] * nf, nf * sizeof(size_t));
    sturdy_free(first);
    assert(d->ncells >= 1 && d->ncells <= n);
    for (size_t i = 0; i < n; i++)
        d->cell_count[d->cell[i]]++;
    d->min_cell = (size_t)-1;
    d->max_cell = 0;
    for (size_t c = 0; c < d->ncells; c++) {
        if (d->cell_count[c] < d->min_cell) d->min_cell = d->cell_count[c];
        if (d->cell_count[c] > d->max_cell) d->max_cell = d->cell_count[c];
    }
    d->balanced = d->ncells == d->ncells_possible && d->min_cell == d->max_cell;
    return STURDY_OK;
}

/* Groups: rows sharing every coded column (cell and block; each row its own group with
 * covariates or when the spec asks for it); *first (the caller frees it) gets each
 * group's first row. */
static sturdy_status make_groups(sturdy_design *d, const sturdy_model_spec *s,
                                 size_t **first, char *err)
{
    size_t n = d->n;
    sturdy_status st;
    *first = NULL;
    d->group = sturdy_malloc(n * sizeof *d->group);
    if (!d->group)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    if (s->ncovariates > 0 || s->row_groups) {
        d->ngroups = n;
        if (!(*first = sturdy_malloc(n * sizeof **first)))
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        for (size_t i = 0; i < n; i++)
            d->group[i] = (*first)[i] = i;
    } else {
        size_t *keys = sturdy_malloc(n * 2 * sizeof *keys);
        if (!keys)
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
        for (size_t i = 0; i < n; i++) {
            keys[2 * i] = d->cell[i];
            keys[2 * i + 1] = d->has_block ? d->block_level[i] : 0;
        }
        st = group_rows(n, keys, 2, d->group, &d->ngroups, first, err);
        sturdy_free(keys);
        if (st)
            return st;
    }
    d->group_count = sturdy_calloc(d->ngroups, sizeof *d->group_count);
    if (!d->group_count)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    for (size_t i = 0; i < n; i++)
        d->group_count[d->group[i]]++;
    return STURDY_OK;
}

/* The terms, in the spec's order, and their coded columns, one row per group (first:
 * each group's first row). */
static sturdy_status make_terms(sturdy_design *d, const sturdy_model_spec *s,
                                const size_t *first, char *err)
{
    size_t max_columns = s->max_columns ? s->max_columns : STURDY_DEFAULT_MAX_COLUMNS;
    sturdy_status st;
    if ((st = sturdy_terms_make(d, s->order, max_columns, err)) ||
        (st = sturdy_terms_reorder(d, s->term_order, s->nterm_order, err)))
        return st;
    d->max_memory = s->max_memory ? s->max_memory : STURDY_DEFAULT_MAX_MEMORY;
    d->max_build_ops = s->max_build_ops > 0 ? s->max_build_ops : STURDY_DEFAULT_MAX_BUILD_OPS;
    /* one row per group: with covariates every row is a group (n × p doubles) */
    double need = (double)d->ngroups * (double)d->p * sizeof *d->Xg;
    if (need > (double)d->max_memory) {
        char a[32], b[32];
        return sturdy_fail(err, STURDY_EMODEL,
                           "the coded design needs %s of memory (%zu groups × %zu coded "
                           "columns), more than the limit on memory of %s; lower the "
                           "interaction order or raise the limit on memory",
                           sturdy_format_bytes(need, a), d->ngroups, d->p,
                           sturdy_format_bytes((double)d->max_memory, b));
    }
    d->Xg = sturdy_malloc(d->ngroups * d->p * sizeof *d->Xg);
    if (!d->Xg)
        return sturdy_fail(err, STURDY_EINTERNAL,
                           "out of memory for the %zu × %zu coded design", d->ngroups, d->p);
    sturdy_terms_fill_columns(d, first);
    return STURDY_OK;
}

static sturdy_status build(const sturdy_table *t, const sturdy_model_spec *s,
                           sturdy_design *d, char *err)
{
    long *ri = NULL;
    unsigned char *used = NULL;
    size_t *first = NULL;
    sturdy_status st = check_counts(s, err);
    if (!st) st = find_spec_columns(t, s, &ri, &used, err);
    if (!st) st = select_rows(t, s, d, ri, used, err);
    sturdy_free(used);
    if (!st) st = read_responses(t, s, d, ri, err);
    if (!st) st = read_covariates(t, s, d, ri + s->nresponses + s->nfactors, err);
    if (!st) st = read_levels(t, s, d, ri + s->nresponses,
                              ri + s->nresponses + s->nfactors + s->ncovariates, err);
    sturdy_free(ri);
    if (!st) st = make_cells(d, err);
    if (!st) st = make_groups(d, s, &first, err);
    if (!st) st = make_terms(d, s, first, err);
    sturdy_free(first);
    return st;
}

sturdy_status sturdy_design_build(const sturdy_table *t, const sturdy_model_spec *s,
                                  sturdy_design **out, char *err)
{
    *out = NULL;
    sturdy_design *d = sturdy_calloc(1, sizeof *d);
    if (!d)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    sturdy_status st = build(t, s, d, err);
    if (st) {
        sturdy_design_free(d);
        return st;
    }
    *out = d;
    return STURDY_OK;
}
