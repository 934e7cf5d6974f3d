/* core.h — helpers shared by the library's own files; not part of the public API. */
#ifndef STURDY_INTERNAL_H
#define STURDY_INTERNAL_H

#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>

#include "sturdy/common.h"

/* ---- messages and memory (util.c) ---- */

/* Write a formatted message into err (STURDY_ERR_LEN bytes; NULL is allowed) and
 * return `s`, so that callers can `return sturdy_fail(err, STURDY_EDATA, ...)`. This is
 * the library's one writer of error messages. */
sturdy_status sturdy_fail(char *err, sturdy_status s, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

/* Sets *slot to a copy of `text` unless a note is there already (the first reason
 * stands); STURDY_EINTERNAL with a message when out of memory. */
sturdy_status sturdy_note_once(char **slot, const char *text, char *err);

/* Allocation (alloc.c): every allocation of the library goes through these, and so
 * through the allocator of sturdy_set_allocator. NULL means out of memory, never a
 * request of 0 bytes (0 is served as 1 byte). Thread-safe. Memory from them is released
 * with sturdy_free only. */
void *sturdy_malloc(size_t size);
/* n × size zeroed bytes; NULL also when the product overflows. */
void *sturdy_calloc(size_t n, size_t size);
/* Like realloc: NULL on failure leaves p allocated; p NULL allocates. */
void *sturdy_realloc(void *p, size_t size);
/* Accepts NULL. */
void sturdy_free(void *p);

/* strdup through sturdy_malloc; NULL on NULL input or allocation failure. */
char *sturdy_strdup(const char *s);

/* printf into a fresh string (sturdy_malloc); NULL on allocation failure. */
char *sturdy_asprintf(const char *fmt, ...) __attribute__((format(printf, 1, 2)));

/* ---- numbers (numeric.c) ---- */

/* 128-bit integers (a GCC and Clang extension): exact decimal mantissas (table_numeric.c)
 * and products of 64-bit counts. include/sturdy/pcg.h declares the same unsigned type
 * for its public generator state; C11 allows the repeated typedef. */
__extension__ typedef __int128 sturdy_i128;
__extension__ typedef unsigned __int128 sturdy_u128;

/* A leverage within this of 1 means the row is fitted exactly (alone in its cell or
 * group): its residual is zero up to rounding, cannot be studentized, carries no
 * variance information and has no leave-one-out fit (HC weights 1/(1 − h) blow up).
 * QR leverages carry errors of order n·1e-16 (≈1e-15 in practice), far below this
 * margin, and 1 − h of any row with a neighbour is far above it. */
#define STURDY_LEVERAGE_ONE_TOL 1e-10

/* qsort comparator of doubles in ascending order (NaNs compare equal to everything). */
int sturdy_cmp_double(const void *a, const void *b);
/* Sort x ascending: the order qsort with sturdy_cmp_double gives (glibc's stable merge),
 * equal values (−0 and +0) in their first order, by a stable radix sort. scratch holds n
 * doubles (unused below 48 values); nothing is allocated. */
void sturdy_sort_doubles(double *x, size_t n, double *scratch);
/* The quantile at level q of the n ≥ 1 values of x sorted ascending, with linear
 * interpolation between order statistics at position (n − 1)·q (Hyndman & Fan 1996,
 * definition 7): the bootstrap's percentile intervals. */
double sturdy_quantile_sorted(const double *x, size_t n, double q);
/* coef[q] = Σ_g U[q·K + g]·s[g] for the r rows of U (K each), each sum in order of g,
 * four rows at a time: the sums are independent, so they do not wait on each other's
 * adds (the same bits as one at a time). The projections onto the model's bases and the
 * bootstrap's comparison replicates. */
void sturdy_dot_rows(const double *U, size_t K, size_t r, const double *s, double *coef);

/* FNV-1a (Fowler, Noll & Vo), 64-bit, of a NUL-terminated text: the hash of the tables
 * that find duplicate column names (table.c) and a factor's distinct levels (levels.c). */
static inline uint64_t sturdy_hash_text(const char *s)
{
    uint64_t h = 14695981039346656037ULL;
    for (const unsigned char *p = (const unsigned char *)s; *p; p++)
        h = (h ^ *p) * 1099511628211ULL;
    return h;
}

/* Solves A x = b for a symmetric positive definite k × k A (row-major, only its lower
 * triangle read) by Cholesky: A's lower triangle is overwritten by the factor and b by x.
 * Returns 0, leaving both partly overwritten, when a pivot² is not above tol (a matrix
 * that is not safely positive definite at the caller's scale). */
int sturdy_cholesky_solve(double *A, size_t k, double *b, double tol);
/* The factor alone (lower triangle of A overwritten by L; 0 as above), and the forward
 * substitution L y = b in place. */
int sturdy_cholesky(double *A, size_t k, double tol);
void sturdy_cholesky_forward(const double *L, size_t k, double *b);

/* Σx / n in one pass, in index order (n ≥ 1). */
double sturdy_mean(const double *x, size_t n);

/* Σ(x − x̄)² by two passes with the compensating correction term (Chan, Golub & LeVeque
 * 1983), so that constant leading digits do not cost precision; n ≥ 1. *mean_out (may
 * be NULL) gets the mean refined by the same correction, mean + Σ(x − mean)/n. */
double sturdy_centred_ss(const double *x, size_t n, double *mean_out);

/* ---- rows (rows.c) ---- */

/* Rows 0..n) bucketed by label (a counting sort, stable): the rows of label k are
 * (*rows)[(*start)[k] .. (*start)[k + 1]) in increasing order. label[i] < nlabels; a
 * NULL label puts every row under label 0. *start (nlabels + 1 entries) and *rows (n,
 * at least 1) are malloc-ed for the caller to free; on failure both are NULL and
 * STURDY_EINTERNAL is returned with "out of memory" in err (which may be NULL). */
sturdy_status sturdy_bucket_rows(const size_t *label, size_t n, size_t nlabels,
                                 size_t **start, size_t **rows, char *err);

/* ---- time (clock.c) ---- */

/* Monotonic clock in seconds (for progress and rates only; never in results). */
double sturdy_now_seconds(void);

/* A size in bytes for messages, in binary units with three significant digits ("143
 * MiB", "8 GiB"); buf holds at least 32 characters and is returned. */
const char *sturdy_format_bytes(double bytes, char *buf);

/* The address space this process may still map under its limit (RLIMIT_AS, as `ulimit
 * -v` sets): 1 with *bytes when a limit is set and the current size is known (Linux's
 * /proc/self/statm), 0 when there is no limit to respect. */
int sturdy_address_space_left(size_t *bytes);

#endif
