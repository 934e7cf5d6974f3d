/* lapack.h — the four LAPACK routines the library uses, called directly in the copy of
 * LAPACK that OpenBLAS carries (Fortran calling convention: every argument by address,
 * 32-bit integers as Debian's libopenblas0 builds them, and after the arguments the
 * length of each character argument, as gfortran passes it).
 *
 * Calling them without LAPACKE keeps liblapacke, and the reference liblapack, libblas
 * and libtmglib it pulls in, out of the process: four fewer shared objects to load and
 * 2,573 fewer symbols bound at start-up (liblapacke is linked with BIND_NOW). LAPACKE's
 * own wrappers for these routines only query the workspace (done here the same way) and
 * scan the inputs for NaN (switched off before: the library builds every matrix it
 * passes, all finite). */
#ifndef STURDY_LAPACK_H
#define STURDY_LAPACK_H

#include <stddef.h>

void dgeqp3_(const int *m, const int *n, double *a, const int *lda, int *jpvt, double *tau,
             double *work, const int *lwork, int *info);
void dorgqr_(const int *m, const int *n, const int *k, double *a, const int *lda,
             const double *tau, double *work, const int *lwork, int *info);
void dpotrf_(const char *uplo, const int *n, double *a, const int *lda, int *info,
             size_t uplo_len);
void dpotrs_(const char *uplo, const int *n, const int *nrhs, const double *a,
             const int *lda, double *b, const int *ldb, int *info, size_t uplo_len);

/* What the calls below return when their workspace cannot be allocated (LAPACK's own
 * info values are 0 or > −20). */
#define STURDY_LAPACK_NO_MEMORY (-1000)

/* QR with column pivoting of the m×n column-major `a` (leading dimension lda); jpvt has
 * n entries (0 = free column), tau min(m, n). Returns LAPACK's info, or
 * STURDY_LAPACK_NO_MEMORY. */
int sturdy_lapack_geqp3(int m, int n, double *a, int lda, int *jpvt, double *tau);

/* The first n columns of Q from k reflectors left by geqp3 in `a` and `tau`. Returns
 * LAPACK's info, or STURDY_LAPACK_NO_MEMORY. */
int sturdy_lapack_orgqr(int m, int n, int k, double *a, int lda, const double *tau);

/* Cholesky factor (lower) of the n×n `a` in place; solve with it for nrhs columns of b. */
static inline int sturdy_lapack_potrf_lower(int n, double *a, int lda)
{
    int info = 0;
    dpotrf_("L", &n, a, &lda, &info, 1);
    return info;
}

static inline int sturdy_lapack_potrs_lower(int n, int nrhs, const double *a, int lda,
                                            double *b, int ldb)
{
    int info = 0;
    dpotrs_("L", &n, &nrhs, a, &lda, b, &ldb, &info, 1);
    return info;
}

#endif
