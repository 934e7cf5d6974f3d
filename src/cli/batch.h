/* batch.h — what the parts of `sturdy batch` share (private to batch.c and
 * batch_plan.c): the batch, and the plan's columns. */
#ifndef STURDY_CLI_BATCH_H
#define STURDY_CLI_BATCH_H

#include "cli.h"

/* Longest analysis name: NAME.json.tmp.XXXXXX must stay under the usual 255-byte limit
 * of a file name. */
#define BATCH_NAME_MAX 200

/* The plan's required columns, in this order (batch_required_col names them). */
enum { COL_NAME, COL_DATA, COL_RESPONSE, COL_FACTORS, NREQUIRED };
/* Room for the plan column of each `check` option (more than the table holds). */
#define MAX_CHECK_OPTIONS 64

typedef struct {
    const char *plan_path, *dir, *old_dir, *threads;
    int resume, quiet, lead;     /* lead: this process writes and talks (MPI rank 0) */
    int lock_fd;                 /* the folder's lock, held until the batch ends, or -1 */
    char *plan_dir;              /* folder of the plan, or NULL when it has no '/' */
    sturdy_cache *cache;         /* tables every row's analysis shares (NULL: each its
                                    own), the same bits either way */
    sturdy_table *plan;
    long req[NREQUIRED];         /* plan columns of the required fields */
    long opt[MAX_CHECK_OPTIONS]; /* plan column of each cli_check_options entry, or -1 */
} batch;

/* Load and check the plan (batch_plan.c); returns 0 or an exit status after the message. */
int batch_plan_load(batch *b);
/* The plan's field at (row, column col), "" for a column the plan does not have (-1). */
const char *batch_cell(const batch *b, long col, size_t row);
/* The name of required column k (COL_NAME …). */
const char *batch_required_col(size_t k);

#endif
