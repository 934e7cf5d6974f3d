/* lapack.c — the workspace-querying calls of lapack.h (as LAPACKE_dgeqp3 and
 * LAPACKE_dorgqr make them: a query with lwork = −1, then the call with the optimal
 * size, so the results are the same bits). */
#include "core/core.h"
#include "core/lapack.h"

int sturdy_lapack_geqp3(int m, int n, double *a, int lda, int *jpvt, double *tau)
{
    int info = 0, lwork = -1;
    double size = 0;
    dgeqp3_(&m, &n, a, &lda, jpvt, tau, &size, &lwork, &info);
    if (info != 0) return info;
    lwork = (int)size;
    double *work = sturdy_malloc((size_t)(lwork > 1 ? lwork : 1) * sizeof *work);
    if (!work) return STURDY_LAPACK_NO_MEMORY;
    dgeqp3_(&m, &n, a, &lda, jpvt, tau, work, &lwork, &info);
    sturdy_free(work);
    return info;
}

int sturdy_lapack_orgqr(int m, int n, int k, double *a, int lda, const double *tau)
{
    int info = 0, lwork = -1;
    double size = 0;
    dorgqr_(&m, &n, &k, a, &lda, tau, &size, &lwork, &info);
    if (info != 0) return info;
    lwork = (int)size;
    double *work = sturdy_malloc((size_t)(lwork > 1 ? lwork : 1) * sizeof *work);
    if (!work) return STURDY_LAPACK_NO_MEMORY;
    dorgqr_(&m, &n, &k, a, &lda, tau, work, &lwork, &info);
    sturdy_free(work);
    return info;
}
