/* status.c — the run-time version and the names of the status codes. */
#include "sturdy/common.h"

const char *sturdy_status_name(sturdy_status s)
{
    switch (s) {
    case STURDY_OK: return "ok";
    case STURDY_EINTERNAL: return "internal error";
    case STURDY_EUSAGE: return "usage error";
    case STURDY_EDATA: return "bad input data";
    case STURDY_EMODEL: return "model cannot be tested";
    case STURDY_EOUTPUT: return "output could not be written";
    case STURDY_ECANCELLED: return "cancelled";
    }
    return "unknown status";
}

const char *sturdy_version(void) { return STURDY_VERSION; }

int sturdy_version_number(void) { return STURDY_VERSION_NUMBER; }
