/* test_design.c — the design stage's usage errors: each names the setting in plain words
 * and the offending name, never a command-line option (the CLI adds those, hints.c),
 * with the status the CLI turns into its exit code. And a property of the levels (the
 * distinct texts found by hashing, levels.c): every used row's level is its own text,
 * each text is one level, and the levels are in natural order, for many levels. And of
 * the cells and groups (found by hashing the rows' level tuples, design.c): every row's
 * cell holds its own levels, the cells are in lexicographic level order, and the groups
 * (cell and block) are in lexicographic order of (cell, block) with every row in the one
 * of its own pair, on unbalanced designs with empty cells, with and without a block.
 * And the model's term bases built on several threads (model/build.h): the same model,
 * bit for bit, as on one, for every SS type, with and without the block. */
#include "check.h"
#include "model/build.h"
#include "sturdy/design.h"
#include "sturdy/table.h"
#include "sturdy/buf.h"

#include <stdlib.h>
#include <string.h>
#include <stdint.h>

static const char csv[] = "block,a,b,y\n"
                          "1,lo,x,1.5\n1,lo,y,2.5\n1,hi,x,3.0\n1,hi,y,4.5\n"
                          "2,lo,x,1.7\n2,lo,y,2.1\n2,hi,x,3.3\n2,hi,y,4.0\n";

/* Builds the design of `s` on the table above and checks the status, that the message
 * holds `want` and that it holds no "--" and no "(-" (an option). */
static void expect(const char *what, const sturdy_model_spec *s, sturdy_status want_st,
                   const char *want)
{
    char err[STURDY_ERR_LEN] = "", line[800];
    sturdy_table *t = NULL;
    sturdy_design *d = NULL;
    sturdy_status st = sturdy_table_load_buffer("t.csv", csv, sizeof csv - 1, NULL, &t, err);
    if (!st) st = sturdy_design_build(t, s, &d, err);
    int ok = st == want_st && strstr(err, want) && !strstr(err, "--") && !strstr(err, "(-");
    snprintf(line, sizeof line, "%s: status %d (want %d), message \"%s\" (want \"%s\", no "
             "option named)", what, (int)st, (int)want_st, err, want);
    CHECK(line, ok);
    sturdy_design_free(d);
    sturdy_table_free(t);
}

/* A factor of `nl` distinct texts (similar ones: "k1", "k10", "k1 ", "K1", "1k" ...) over
 * n rows in a scrambled order, each text at least once; checks the levels as above. */
static void many_levels(size_t nl, size_t n)
{
    char err[STURDY_ERR_LEN] = "", line[STURDY_ERR_LEN + 200];
    sturdy_buf b;
    sturdy_buf_init(&b);
    sturdy_buf_printf(&b, "a,b,y\n");
    char **text = calloc(nl, sizeof *text);
    for (size_t j = 0; text && j < nl; j++) {
        text[j] = malloc(24);
        if (text[j]) snprintf(text[j], 24, j % 3 == 0 ? "k%zu" : j % 3 == 1 ? "%zuk" : "K%zux", j);
    }
    uint64_t st = 0x853c49e6748fea9bULL;
    for (size_t i = 0; i < n; i++) {
        st = st * 6364136223846793005ULL + 1442695040888963407ULL;
        size_t j = i < nl ? (i * 7919) % nl : (size_t)(st >> 33) % nl;
        sturdy_buf_printf(&b, "%s,%s,%zu\n", text && text[j] ? text[j] : "?",
                          i % 2 ? "u" : "v", i % 5);
    }
    sturdy_table *t = NULL;
    sturdy_design *d = NULL;
    static const char *const y[] = { "y" }, *const ab[] = { "a", "b" };
    sturdy_model_spec s;
    sturdy_model_spec_init(&s);
    s.responses = y; s.nresponses = 1; s.factors = ab; s.nfactors = 2;
    s.max_levels = nl + 1;
    sturdy_status rc = b.failed ? STURDY_EINTERNAL
                                : sturdy_table_load_buffer("m.csv", b.data, b.len, NULL, &t, err);
    if (!rc) rc = sturdy_design_build(t, &s, &d, err);
    snprintf(line, sizeof line, "%zu levels over %zu rows: the design builds (%s)", nl, n, err);
    CHECK(line, rc == STURDY_OK);
    if (!rc) {
        const sturdy_factor *f = &d->factors[0];
        size_t own = 0, ordered = 0;
        for (size_t i = 0; i < d->n; i++)
            own += !strcmp(f->levels[d->level[i * d->nfactors]],
                           sturdy_table_field(t, d->row[i], 0));
        for (size_t k = 1; k < f->nlevels; k++)
            ordered += sturdy_level_compare(f->levels[k - 1], f->levels[k]) < 0;
        snprintf(line, sizeof line, "%zu levels: %zu found, %zu of %zu rows at their own "
                 "text, %zu of %zu neighbours in natural order", nl, f->nlevels, own, d->n,
                 ordered, f->nlevels ? f->nlevels - 1 : 0);
        CHECK(line, f->nlevels == nl && own == n && d->n == n && ordered + 1 == nl);
    }
    sturdy_design_free(d);
    sturdy_table_free(t);
    for (size_t j = 0; text && j < nl; j++) free(text[j]);
    free(text);
    sturdy_buf_free(&b);
}

/* 3 factors of 3, 4 and 5 levels and a block of 3 over n rows, each row's levels drawn
 * at random (many of the 60 cells empty when n is small); checks the cells and groups. */
/* Is the tuple x before y in lexicographic order? */
static int lex_less(const size_t *x, const size_t *y, size_t len)
{
    for (size_t k = 0; k < len; k++)
        if (x[k] != y[k])
            return x[k] < y[k];
    return 0;
}

/* a and b hold the same k doubles (both NULL when k is 0 or neither is kept) */
static int same_doubles(const double *a, const double *b, size_t k)
{
    if (!a || !b)
        return a == b;
    return memcmp(a, b, k * sizeof *a) == 0;
}

static int same_text(const char *a, const char *b)
{
    return (!a && !b) || (a && b && !strcmp(a, b));
}

/* The model of d built on 1 and on 3 threads: every field and basis the same bits. */
static void same_model_threads(const sturdy_design *d, int ss, int block)
{
    char err[STURDY_ERR_LEN] = "", line[STURDY_ERR_LEN + 200];
    sturdy_model *one = NULL, *three = NULL;
    int ok = !sturdy_model_build_on(d, ss, 1, &one, err) &&
             !sturdy_model_build_on(d, ss, 3, &three, err);
    size_t K = ok ? one->K : 0, differ = 0;
    ok = ok && one->rank == three->rank && one->nterms == three->nterms &&
         same_doubles(one->U, three->U, K * one->rank) &&
         same_doubles(one->leverage, three->leverage, K);
    for (size_t t = 0; ok && t < one->nterms; t++) {
        const sturdy_term_basis *a = &one->terms[t], *b = &three->terms[t];
        differ += !(a->df == b->df && a->testable == b->testable &&
                    a->deficient == b->deficient && a->by_block == b->by_block &&
                    a->rank_red == b->rank_red && a->complement == b->complement &&
                    a->rank_comp == b->rank_comp && same_text(a->why_not, b->why_not) &&
                    same_text(a->why_short, b->why_short) &&
                    same_doubles(a->Uterm, b->Uterm, K * a->df) &&
                    same_doubles(a->Ured, b->Ured, K * a->rank_red) &&
                    same_doubles(a->Ucomp, b->Ucomp, K * a->rank_comp));
    }
    snprintf(line, sizeof line, "SS %d%s: the model on 3 threads is the model on 1, bit for "
             "bit (%zu terms differ) %s", ss, block ? " with a block" : "", differ, err);
    CHECK(line, ok && differ == 0);
    sturdy_model_free(one);
    sturdy_model_free(three);
}

static void cells_in_order(size_t n, int block, uint64_t seed)
{
    char err[STURDY_ERR_LEN] = "", line[STURDY_ERR_LEN + 200];
    sturdy_buf b;
    sturdy_buf_init(&b);
    sturdy_buf_printf(&b, "a,b,c,k,y\n");
    uint64_t st = seed;
    for (size_t i = 0; i < n; i++) {
        unsigned r[4];
        for (int j = 0; j < 4; j++) {
            st = st * 6364136223846793005ULL + 1442695040888963407ULL;
            r[j] = (unsigned)(st >> 33);
        }
        sturdy_buf_printf(&b, "a%u,b%u,c%u,k%u,%zu\n", r[0] % 3, r[1] % 4, r[2] % 5, r[3] % 3,
                          i % 7);
    }
    sturdy_table *t = NULL;
    sturdy_design *d = NULL;
    static const char *const y[] = { "y" }, *const abc[] = { "a", "b", "c" };
    sturdy_model_spec s;
    sturdy_model_spec_init(&s);
    s.responses = y; s.nresponses = 1; s.factors = abc; s.nfactors = 3;
    s.block = block ? "k" : NULL;
    sturdy_status rc = b.failed ? STURDY_EINTERNAL
                                : sturdy_table_load_buffer("c.csv", b.data, b.len, NULL, &t, err);
    if (!rc) rc = sturdy_design_build(t, &s, &d, err);
    snprintf(line, sizeof line, "cells, %zu rows%s: the design builds (%s)", n,
             block ? " with a block" : "", err);
    CHECK(line, rc == STURDY_OK);
    for (int ss = 1; ss <= 3 && !rc; ss++)
        same_model_threads(d, ss, block);
    if (!rc) {
        size_t nf = d->nfactors, own = 0, ordered = 0, in_group = 0, groups_ordered = 0;
        for (size_t i = 0; i < d->n; i++)
            own += !memcmp(d->level + i * nf, d->cell_levels + d->cell[i] * nf,
                           nf * sizeof *d->level);
        for (size_t c = 1; c < d->ncells; c++)
            ordered += lex_less(d->cell_levels + (c - 1) * nf, d->cell_levels + c * nf, nf);
        /* each group's (cell, block) from its first row; every row matches its group's */
        size_t *gk = malloc((2 * d->ngroups + 1) * sizeof *gk);
        unsigned char *seen = calloc(d->ngroups + 1, 1);
        for (size_t i = 0; gk && seen && i < d->n; i++) {
            size_t g = d->group[i], kb = block ? d->block_level[i] : 0;
            if (!seen[g]) {
                seen[g] = 1;
                gk[2 * g] = d->cell[i];
                gk[2 * g + 1] = kb;
            }
            in_group += gk[2 * g] == d->cell[i] && gk[2 * g + 1] == kb;
        }
        for (size_t g = 1; gk && g < d->ngroups; g++)
            groups_ordered += lex_less(gk + 2 * (g - 1), gk + 2 * g, 2);
        snprintf(line, sizeof line, "%zu rows%s: %zu of %zu rows in the cell of their levels, "
                 "%zu of %zu neighbouring cells in order; %zu rows in their group's (cell, "
                 "block), %zu of %zu neighbouring groups in order", d->n,
                 block ? " with a block" : "", own, d->n, ordered,
                 d->ncells ? d->ncells - 1 : 0, in_group, groups_ordered,
                 d->ngroups ? d->ngroups - 1 : 0);
        CHECK(line, own == d->n && d->n == n && ordered + 1 == d->ncells &&
                        in_group == d->n && groups_ordered + 1 == d->ngroups &&
                        (block || d->ngroups == d->ncells));
        free(gk);
        free(seen);
    }
    sturdy_design_free(d);
    sturdy_table_free(t);
    sturdy_buf_free(&b);
}

int main(void)
{
    static const char *const y[] = { "y" }, *const ab[] = { "a", "b" };
    static const char *const lo_hi[] = { "lo", "hi" }, *const lo_lo[] = { "lo", "lo" };
    static const char *const lo_x[] = { "lo", "x" };
    sturdy_model_spec s;
    sturdy_level_order lv[2];

    sturdy_model_spec_init(&s);
    s.factors = ab; s.nfactors = 2;
    expect("no response", &s, STURDY_EUSAGE, "no response column given");
    s.responses = y; s.nresponses = 1; s.nfactors = 0;
    expect("no factor", &s, STURDY_EUSAGE, "no factor given");
    s.nfactors = 2;

    lv[0] = (sturdy_level_order){ "c", lo_hi, 2 };
    s.level_orders = lv; s.nlevel_orders = 1;
    expect("level order for a column outside the model", &s, STURDY_EUSAGE,
           "an order of levels is given for 'c', which is not a factor or the block");
    lv[0] = (sturdy_level_order){ "a", lo_hi, 2 };
    lv[1] = (sturdy_level_order){ "a", lo_hi, 2 };
    s.nlevel_orders = 2;
    expect("two level orders for one factor", &s, STURDY_EUSAGE,
           "an order of levels is given for 'a' twice");
    lv[0] = (sturdy_level_order){ "a", lo_lo, 2 };
    s.nlevel_orders = 1;
    expect("a level listed twice", &s, STURDY_EUSAGE,
           "the order of levels given for factor 'a' lists 'lo' twice");
    lv[0] = (sturdy_level_order){ "a", lo_x, 2 };
    expect("a level not present", &s, STURDY_EUSAGE,
           "the order of levels given for factor 'a': 'x' is not a level of it");
    s.nlevel_orders = 0;

    static const char *const nope[] = { "a\xc3\x97nope" }, *const twice[] = { "a", "a" };
    static const char *const inter_first[] = { "b\xc3\x97" "a", "a" };
    s.term_order = nope; s.nterm_order = 1;
    expect("unknown term in the term order", &s, STURDY_EUSAGE,
           "the order of terms given: the model has no term 'a\xc3\x97nope'");
    s.term_order = twice; s.nterm_order = 2;
    expect("a term listed twice", &s, STURDY_EUSAGE,
           "the order of terms given lists 'a' twice");
    s.term_order = inter_first; s.nterm_order = 2;
    expect("an interaction before its main effect", &s, STURDY_EUSAGE,
           "the order of terms given puts 'a\xc3\x97" "b' before 'a', which it contains");

    many_levels(2, 10);
    many_levels(33, 200);        /* the table of distinct texts grows once */
    many_levels(1500, 20000);    /* and six times */
    cells_in_order(40, 0, 1);    /* most of the 60 cells empty */
    cells_in_order(40, 1, 2);
    cells_in_order(5000, 0, 3);  /* every cell; the tuples' table grows */
    cells_in_order(5000, 1, 4);
    return check_done();
}
