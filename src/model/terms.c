/* terms.c — the model's terms (block, covariates, factor main effects and interactions
 * up to the chosen order) and their sum-to-zero coded columns, one row per group. */
#include <assert.h>
#include <stdlib.h>
#include <string.h>

#include "core/core.h"
#include "model/terms.h"

/* Number of factor subsets of size k of m factors, enumerated as bitmasks in
 * lexicographic order of their factor indices. Returns the next mask after `mask`
 * with the same popcount (Gosper's hack), or 0 past the last. */
static uint32_t next_combination(uint32_t mask, size_t m)
{
    uint32_t c = mask & (uint32_t)-(int32_t)mask;
    uint32_t r = mask + c;
    uint32_t next = (((r ^ mask) >> 2) / c) | r;
    return next < (1u << m) ? next : 0;
}

/* Reverse the bit order of a mask over m bits, so that Gosper order (ascending integer)
 * becomes lexicographic order of factor index lists. */
static uint32_t reverse_bits(uint32_t x, size_t m)
{
    uint32_t r = 0;
    for (size_t i = 0; i < m; i++)
        if (x & (1u << i))
            r |= 1u << (m - 1 - i);
    return r;
}

static int cmp_u32_desc(const void *a, const void *b)
{
    uint32_t x = *(const uint32_t *)a, y = *(const uint32_t *)b;
    return x < y ? 1 : (x > y ? -1 : 0);
}

/* The block and covariate terms, first in the model: levels − 1 coded columns for the
 * block, one per covariate, from column *p on. */
static void add_nuisance_terms(sturdy_design *d, size_t *p, size_t *nt)
{
    if (d->has_block) {
        sturdy_term *t = &d->terms[(*nt)++];
        t->kind = STURDY_TERM_BLOCK;
        t->label = sturdy_strdup(d->block.name);
        t->order = 1;
        t->col0 = *p;
        t->ncols = d->block.nlevels - 1;
        *p += t->ncols;
    }
    for (size_t c = 0; c < d->ncov; c++) {
        sturdy_term *t = &d->terms[(*nt)++];
        t->kind = STURDY_TERM_COVARIATE;
        t->index = c;
        t->label = sturdy_strdup(d->cov_names[c]);
        t->order = 1;
        t->col0 = *p;
        t->ncols = 1;
        *p += 1;
    }
}

/* The factor term of the factors in `mask` (order k) as the next term: its coded
 * columns from *p on and its label, the factor names joined by "×". STURDY_EMODEL when
 * the model would need more than max_columns coded columns. */
static sturdy_status add_factor_term(sturdy_design *d, uint32_t mask, size_t k,
                                     size_t max_columns, size_t *p, size_t *nt, char *err)
{
    size_t m = d->nfactors;
    sturdy_term *t = &d->terms[(*nt)++];
    t->kind = STURDY_TERM_FACTORS;
    t->mask = mask;
    t->order = k;
    size_t cols = 1, len = 0;
    int over = 0;                /* more than max_columns, without overflowing size_t */
    for (size_t f = 0; f < m; f++)
        if (mask & (1u << f)) {
            size_t l = d->factors[f].nlevels - 1;
            if (l && cols > max_columns / l)
                over = 1;
            else
                cols *= l;
            len += strlen(d->factors[f].name) + 2;
        }
    /* *p counts the intercept, so the columns so far are *p − 1 (the limit may be as
       large as SIZE_MAX: compare without adding) */
    over = over || *p - 1 > max_columns - cols;
    t->ncols = cols;
    t->col0 = *p;
    if (!over)
        *p += cols;
    if (over)
        return sturdy_fail(err, STURDY_EMODEL,
                           "the model needs more than %zu coded columns (at term "
                           "%zu of order %zu); lower the interaction order or raise the limit on "
                           "coded columns",
                           max_columns, *nt, k);
    t->label = sturdy_malloc(len + 1);
    if (!t->label)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    t->label[0] = '\0';
    for (size_t f = 0; f < m; f++)
        if (mask & (1u << f)) {
            if (t->label[0])
                strcat(t->label, "\xc3\x97"); /* U+00D7 multiplication sign */
            strcat(t->label, d->factors[f].name);
        }
    return STURDY_OK;
}

/* The factor terms up to order maxord: order by order, and within an order in
 * lexicographic order of their factor lists (A×B, A×C, B×C). */
static sturdy_status add_factor_terms(sturdy_design *d, size_t maxord, size_t max_columns,
                                      size_t *p, size_t *nt, char *err)
{
    size_t m = d->nfactors;
    sturdy_status st = STURDY_OK;
    uint32_t *masks = sturdy_malloc(((size_t)1 << m) * sizeof *masks);
    if (!masks)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    for (size_t k = 1; k <= maxord && !st; k++) {
        size_t nk = 0;
        for (uint32_t mask = (1u << k) - 1; mask; mask = next_combination(mask, m))
            masks[nk++] = reverse_bits(mask, m);
        /* reversed masks in descending order = lexicographic factor lists */
        qsort(masks, nk, sizeof *masks, cmp_u32_desc);
        for (size_t j = 0; j < nk && !st; j++)
            st = add_factor_term(d, reverse_bits(masks[j], m), k, max_columns, p, nt, err);
    }
    sturdy_free(masks);
    return st;
}

sturdy_status sturdy_terms_make(sturdy_design *d, int order, size_t max_columns, char *err)
{
    size_t m = d->nfactors;
    assert(m <= STURDY_MAX_FACTORS);  /* masks are 32-bit; 2^m masks are listed */
    size_t maxord = (order <= 0 || (size_t)order > m) ? m : (size_t)order;
    size_t cap = (d->has_block ? 1 : 0) + d->ncov + ((size_t)1 << m);
    d->terms = sturdy_calloc(cap, sizeof *d->terms);
    if (!d->terms)
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    size_t p = 1, nt = 0;
    add_nuisance_terms(d, &p, &nt);
    sturdy_status st = add_factor_terms(d, maxord, max_columns, &p, &nt, err);
    d->nterms = nt; /* also on failure, so that sturdy_design_free frees the labels */
    if (st)
        return st;
    d->p = p;
    for (size_t i = 0; i < nt; i++)
        if (!d->terms[i].label)
            return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    return STURDY_OK;
}

/* Does `name` (factor names joined by "×", in any order) name the factor term `mask`?
 * A block or covariate term matches its own name. */
static int names_term(const sturdy_design *d, const sturdy_term *t, const char *name)
{
    if (t->kind != STURDY_TERM_FACTORS)
        return strcmp(t->label, name) == 0;
    static const char times[] = "\xc3\x97";
    uint32_t seen = 0;
    const char *p = name;
    for (;;) {
        const char *end = strstr(p, times);
        size_t len = end ? (size_t)(end - p) : strlen(p);
        size_t f = 0;
        while (f < d->nfactors &&
               !(strlen(d->factors[f].name) == len && !strncmp(d->factors[f].name, p, len)))
            f++;
        if (f == d->nfactors || (seen & (1u << f)))
            return 0;
        seen |= 1u << f;
        if (!end)
            break;
        p = end + sizeof times - 1;
    }
    return seen == t->mask;
}

static int term_contains(const sturdy_term *b, const sturdy_term *a)
{
    return a->kind == STURDY_TERM_FACTORS && b->kind == STURDY_TERM_FACTORS &&
           a->mask != b->mask && (a->mask & b->mask) == a->mask;
}

sturdy_status sturdy_terms_reorder(sturdy_design *d, const char *const *names, size_t count,
                                   char *err)
{
    size_t nt = d->nterms;
    if (count == 0)
        return STURDY_OK;
    size_t *pos = sturdy_malloc(nt * sizeof *pos);
    unsigned char *taken = sturdy_calloc(nt, 1);
    sturdy_term *sorted = sturdy_malloc(nt * sizeof *sorted);
    if (!pos || !taken || !sorted) {
        sturdy_free(pos); sturdy_free(taken); sturdy_free(sorted);
        return sturdy_fail(err, STURDY_EINTERNAL, "out of memory");
    }
    size_t k = 0;
    sturdy_status st = STURDY_OK;
    /* a block or covariate not listed stays in front, adjusted for first under Type I */
    for (size_t j = 0; j < nt; j++)
        for (size_t i = 0; i < count && d->terms[j].kind != STURDY_TERM_FACTORS; i++)
            if (names_term(d, &d->terms[j], names[i]))
                taken[j] = 2;       /* listed: placed below */
    for (size_t j = 0; j < nt; j++)
        if (d->terms[j].kind != STURDY_TERM_FACTORS && !taken[j]) {
            taken[j] = 1;
            pos[k++] = j;
        }
    for (size_t j = 0; j < nt; j++)
        if (taken[j] == 2) taken[j] = 0;
    for (size_t i = 0; i < count && !st; i++) {
        size_t j = 0;
        while (j < nt && !names_term(d, &d->terms[j], names[i]))
            j++;
        if (j == nt)
            st = sturdy_fail(err, STURDY_EUSAGE, "the order of terms given: the model has no "
                             "term '%s' (name a term as its factors joined by '\xc3\x97', "
                             "e.g. A\xc3\x97" "B, or a block or covariate by its name)",
                             names[i]);
        else if (taken[j])
            st = sturdy_fail(err, STURDY_EUSAGE, "the order of terms given lists '%s' twice",
                             names[i]);
        else {
            taken[j] = 1;
            pos[k++] = j;
        }
    }
    for (size_t j = 0; j < nt && !st; j++)
        if (!taken[j])
            pos[k++] = j;
    /* marginality: a sequential fit of A×B before A would test A×B unadjusted for A */
    for (size_t a = 0; a < nt && !st; a++)
        for (size_t b = a + 1; b < nt && !st; b++)
            if (term_contains(&d->terms[pos[a]], &d->terms[pos[b]]))
                st = sturdy_fail(err, STURDY_EUSAGE, "the order of terms given puts '%s' "
                                 "before '%s', which it contains; list a term after the "
                                 "terms it contains",
                                 d->terms[pos[a]].label, d->terms[pos[b]].label);
    if (!st) {
        assert(k == nt);                /* every term placed exactly once */
        for (size_t i = 0; i < nt; i++)
            sorted[i] = d->terms[pos[i]];
        memcpy(d->terms, sorted, nt * sizeof *sorted);
    }
    sturdy_free(pos); sturdy_free(taken); sturdy_free(sorted);
    return st;
}

/* Sum-to-zero (deviation) code of level `lev` of an L-level factor in column j < L−1. */
static double sum_code(size_t lev, size_t L, size_t j)
{
    if (lev == L - 1)
        return -1.0;
    return lev == j ? 1.0 : 0.0;
}

void sturdy_terms_fill_columns(sturdy_design *d, const size_t *rep)
{
    size_t K = d->ngroups, m = d->nfactors;
    double *X = d->Xg;
    for (size_t g = 0; g < K; g++)
        X[g] = 1.0;
    for (size_t ti = 0; ti < d->nterms; ti++) {
        const sturdy_term *t = &d->terms[ti];
        assert(t->col0 >= 1 && t->col0 + t->ncols <= d->p);   /* column 0: intercept */
        for (size_t g = 0; g < K; g++) {
            size_t i = rep[g];
            if (t->kind == STURDY_TERM_BLOCK) {
                for (size_t j = 0; j < t->ncols; j++)
                    X[(t->col0 + j) * K + g] =
                        sum_code(d->block_level[i], d->block.nlevels, j);
            } else if (t->kind == STURDY_TERM_COVARIATE) {
                X[t->col0 * K + g] = d->cov[t->index * d->n + i];
            } else {
                /* columns enumerate (j_f1, j_f2, ...) with the first factor fastest */
                for (size_t col = 0; col < t->ncols; col++) {
                    size_t rest = col;
                    double v = 1.0;
                    for (size_t f = 0; f < m; f++) {
                        if (!(t->mask & (1u << f)))
                            continue;
                        size_t L = d->factors[f].nlevels;
                        size_t j = rest % (L - 1);
                        rest /= L - 1;
                        v *= sum_code(d->level[i * m + f], L, j);
                    }
                    X[(t->col0 + col) * K + g] = v;
                }
            }
        }
    }
}


uint64_t sturdy_model_spec_terms(const sturdy_model_spec *s)
{
    uint64_t F = s->nfactors, K = s->order > 0 && (uint64_t)s->order < F ? (uint64_t)s->order
                                                                        : F;
    uint64_t terms = 0, choose = 1;
    for (uint64_t k = 1; k <= K; k++) {
        choose = choose * (F - k + 1) / k;       /* C(F, k), exact at each step */
        terms += choose;
    }
    return terms + s->ncovariates + (s->block ? 1 : 0);
}
