/* figures_out.c — `--figures DIR`: each figure of the HTML report as its own SVG file,
 * named by response and figure ("<response>-<figure>[-<term>].svg"), each written
 * atomically. */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "cli.h"

typedef struct {
    const char *dir;
    int rc;
} fig_sink;

static int write_one(void *arg, const char *name, const char *svg, size_t len)
{
    fig_sink *s = arg;
    char *path = cli_str_cat3(s->dir, "/", name);
    char *file = path ? cli_str_cat3(path, ".svg", "") : NULL;
    free(path);
    if (!file) {
        fputs("sturdy: out of memory while writing the figures\n", stderr);
        s->rc = STURDY_EOUTPUT;
        return 1;
    }
    s->rc = cli_write_output(file, svg, len);
    free(file);
    return s->rc != 0;
}

int cli_write_figures(const char *dir, const sturdy_result *r)
{
    struct stat sb;
    if (mkdir(dir, 0777) != 0 && errno != EEXIST) {
        fprintf(stderr, "sturdy: cannot make the folder '%s' for the figures: %s\n", dir,
                strerror(errno));
        return STURDY_EOUTPUT;
    }
    if (stat(dir, &sb) != 0 || !S_ISDIR(sb.st_mode)) {
        fprintf(stderr, "sturdy: cannot write the figures into '%s': not a folder\n", dir);
        return STURDY_EOUTPUT;
    }
    fig_sink s = { dir, 0 };
    sturdy_status st = sturdy_report_figures(r, write_one, &s);
    if (s.rc)
        return s.rc;
    if (st) {
        fprintf(stderr, "sturdy: cannot make the figures: %s\n", sturdy_status_name(st));
        return STURDY_EOUTPUT;
    }
    return 0;
}
