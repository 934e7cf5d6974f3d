/* common.h — status codes, error buffers and limits shared by every stage of libsturdy.
 *
 * Every library function returns a sturdy_status and, on failure, writes a one-line
 * message into a caller-owned buffer `err` of STURDY_ERR_LEN bytes (may be NULL).
 * The numeric values of the statuses are the CLI's exit codes, so the CLI maps them
 * one to one. The library never prints and never exits. */
#ifndef STURDY_COMMON_H
#define STURDY_COMMON_H

#include <stddef.h>
#include <stdint.h>

#define STURDY_VERSION "0.2.0"
#define STURDY_VERSION_NUMBER 200   /* major·10000 + minor·100 + patch */
#define STURDY_ERR_LEN 512

typedef enum {
    STURDY_OK = 0,
    STURDY_EINTERNAL = 1, /* a bug or out of memory */
    STURDY_EUSAGE = 2,    /* options contradict each other or name unknown columns */
    STURDY_EDATA = 3,     /* the input table is malformed */
    STURDY_EMODEL = 4,    /* the model cannot be tested as asked */
    STURDY_EOUTPUT = 5,   /* a result could not be written */
    STURDY_ECANCELLED = 7 /* the caller's context asked the run to stop (library only:
                             the program's exit code 6 belongs to `batch`) */
} sturdy_status;

/* The library's version at run time (the headers' STURDY_VERSION is the one compiled
 * against): "0.1.0", and as major·10000 + minor·100 + patch. */
const char *sturdy_version(void);
int sturdy_version_number(void);

/* A short name for a status ("ok", "bad input data", ...). Never NULL. */
const char *sturdy_status_name(sturdy_status s);

/* The allocator every allocation of the library goes through (the table loader's libcsv
 * buffers included; not the internal workspaces of LAPACK, OpenBLAS, GSL or the OpenMP
 * runtime). malloc_fn and realloc_fn return NULL on failure, which the library reports
 * as STURDY_EINTERNAL; they are never asked for 0 bytes. realloc_fn gets ptr NULL for a
 * fresh block; free_fn is never called with NULL. `arg` is passed to each. The
 * functions are called from several threads at once when threads > 1, so they must be
 * thread-safe. */
typedef struct {
    void *(*malloc_fn)(size_t size, void *arg);
    void *(*realloc_fn)(void *ptr, size_t size, void *arg);
    void (*free_fn)(void *ptr, void *arg);
    void *arg;
} sturdy_allocator;

/* Install `a` (copied; all three functions must be set), or restore malloc, realloc and
 * free with NULL. This is process-wide state, not per call: objects allocated in one call
 * are freed by another (sturdy_result_free, sturdy_table_free, sturdy_buf_free), so set
 * it once, from one thread, before any other sturdy call, and keep it until every object
 * of the library has been freed. */
void sturdy_set_allocator(const sturdy_allocator *a);

#endif
