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
    STURDY_ECANCELLED = 6 /* the caller's context asked the run to stop */
} sturdy_status;

/* The library's version at run time (the headers' STURDY_VERSION is the one compiled
 * against): "0.1.0", and as major·10000 + minor·100 + patch. */
const char *sturdy_version(void);
int sturdy_version_number(void);

/* A short name for a status ("ok", "bad input data", ...). Never NULL. */
const char *sturdy_status_name(sturdy_status s);

#endif
