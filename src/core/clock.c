/* clock.c — the library's monotonic clock, for progress reports. (The CLI keeps its own,
 * cli_now in src/cli/run.c, as it may use only the public headers.) */
#include <time.h>

#include "core/core.h"

double sturdy_now_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}
