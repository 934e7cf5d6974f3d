/* sturdy.h — libsturdy, stable tier: robustness checks for factorial ANOVA.
 *
 * Include this one header. An embedding program loads a table (table.h: from a file, a
 * buffer or its own columns), fills the options (analysis.h: sturdy_options_init, then
 * set the model, then sturdy_options_validate), runs sturdy_analyze under a context
 * (threads, progress, cancellation), reads the result through its accessors, writes it
 * as text, JSON or CSV into a memory buffer (report.h), and may read a JSON result or a
 * shard part back (report.h). Each header documents its functions; the advanced tier
 * (design, fit, distributions, PCG) is opt-in through sturdy/advanced.h.
 *
 * Errors. Every call that can fail returns a sturdy_status and writes a one-line message
 * into a caller-owned buffer of STURDY_ERR_LEN bytes (NULL allowed). Messages name the
 * file, row and column where they apply, and settings by their field names; they never
 * name command-line options (the CLI adds those).
 *
 * Ownership. Objects returned through an out-pointer belong to the caller and are freed
 * with their *_free function (each accepts NULL). Strings and numbers read from a result
 * belong to it.
 *
 * Threads. Every function is reentrant: different tables and results may be used from
 * different threads at once. One object must not be changed (sturdy_result_add_slice,
 * sturdy_result_finish, *_free) while another thread uses it; reading one object from
 * several threads is safe. sturdy_analyze runs its own OpenMP threads (the context's
 * count); calling it from several threads at once multiplies them.
 *
 * Process state. The library changes none: it does not print, exit, install signal
 * handlers, change the locale or set the BLAS thread count. Two things belong to the
 * application: (1) BLAS threads — the library calls LAPACK from inside its own OpenMP
 * threads, so an application linked with a threaded OpenBLAS should call
 * openblas_set_num_threads(1) first (the CLI does), or OpenBLAS's pool will compete for
 * the cores; (2) the allocator (common.h), which is process-wide because objects made in
 * one call are freed in another; set it before any other call. Numbers are parsed and
 * printed in the C locale's format: the application must not switch LC_NUMERIC to a
 * locale with a decimal comma while a call runs. */
#ifndef STURDY_H
#define STURDY_H

#include "common.h"
#include "buf.h"
#include "spec.h"
#include "table.h"
#include "analysis.h"
#include "names.h"
#include "report.h"

#endif
