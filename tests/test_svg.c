/* test_svg.c — the SVG writer's geometry and text: nice-number ticks (Heckbert 1990,
 * "Nice numbers for graph labels", Graphics Gems I, worked by hand below), linear scales,
 * Liang–Barsky clipping, marker and bar clipping, escaping of level names; and the fixed
 * bins of the resampled F* (their upper edges from F quantiles computed with scipy
 * 1.10, scipy.stats.f.isf(0.001, df1, df2)); the page and the figure files of the demo
 * data through the public API. Run from the repository root (examples/demo.csv). */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "check.h"
#include "report/svg.h"
#include "classical/classical.h"
#include "sturdy/sturdy.h"
#include "core/result.h"

static void ticks_case(const char *name, double lo, double hi, int want, double elo,
                       double ehi, double estep, size_t en, int enfrac)
{
    sturdy_svg_ticks t;
    char what[160];
    sturdy_svg_ticks_make(lo, hi, want, &t);
    snprintf(what, sizeof what, "%s: first tick", name);
    CHECK_ABS(what, t.lo, elo, 1e-12);
    snprintf(what, sizeof what, "%s: last tick", name);
    CHECK_ABS(what, t.hi, ehi, 1e-12);
    snprintf(what, sizeof what, "%s: step", name);
    CHECK_REL(what, t.step, estep, 1e-12);
    snprintf(what, sizeof what, "%s: ticks", name);
    CHECK_INT(what, t.n, en);
    snprintf(what, sizeof what, "%s: decimals", name);
    CHECK_INT(what, t.nfrac, enfrac);
}

static void label_case(const sturdy_svg_ticks *t, size_t i, const char *expect)
{
    char buf[32], what[160];
    sturdy_svg_tick_label(t, i, buf);
    snprintf(what, sizeof what, "tick label %zu: observed '%s' expected '%s'", i, buf, expect);
    CHECK(what, !strcmp(buf, expect));
}

static void escape_case(const char *in, const char *expect)
{
    sturdy_buf b;
    sturdy_buf_init(&b);
    sturdy_svg_escape(&b, in);
    char what[400];
    snprintf(what, sizeof what, "escape: observed '%s' expected '%s'", b.data ? b.data : "",
             expect);
    CHECK(what, b.data && !strcmp(b.data, expect));
    sturdy_buf_free(&b);
}

static void clip_case(const char *name, double x0, double y0, double x1, double y1, int evis,
                      double e0, double e1, double e2, double e3)
{
    sturdy_svg_rect r = { 0, 0, 10, 10 };
    double s[4] = { NAN, NAN, NAN, NAN };
    int vis = sturdy_svg_clip(&r, x0, y0, x1, y1, s);
    char what[160];
    snprintf(what, sizeof what, "clip %s: visible", name);
    CHECK_INT(what, vis, evis);
    if (!evis)
        return;
    double e[4] = { e0, e1, e2, e3 };
    for (int k = 0; k < 4; k++) {
        snprintf(what, sizeof what, "clip %s: end coordinate %d", name, k);
        CHECK_ABS(what, s[k], e[k], 1e-12);
    }
}

/* Every number after M or L in the path data lies inside the area. */
static int path_inside(const char *svg, const sturdy_svg_rect *a)
{
    const char *d = strstr(svg, " d=\"");
    if (!d)
        return 0;
    d += 4;
    int ok = 1, npts = 0;
    while (*d && *d != '"') {
        if (*d == 'M' || *d == 'L') {
            char *end;
            double x = strtod(d + 1, &end), y = strtod(end, &end);
            ok &= x >= a->x0 - 0.05 && x <= a->x1 + 0.05 && y >= a->y0 - 0.05 &&
                  y <= a->y1 + 0.05;
            npts++;
            d = end;
        } else {
            d++;
        }
    }
    return ok && npts >= 2;
}

typedef struct { size_t calls, stop_after; int bad_name; char names[32][160]; } sink;

/* An allocator that refuses request number fail_at and counts the blocks alive. The
 * renderings below run on one thread. */
typedef struct { unsigned long n, fail_at; long live; int refused; } fault;

static void *fault_malloc(size_t size, void *arg)
{
    fault *f = arg;
    if (++f->n == f->fail_at) { f->refused = 1; return NULL; }
    void *p = malloc(size);
    if (p) f->live++;
    return p;
}

static void *fault_realloc(void *ptr, size_t size, void *arg)
{
    fault *f = arg;
    if (++f->n == f->fail_at) { f->refused = 1; return NULL; }
    void *p = realloc(ptr, size);
    if (p && !ptr) f->live++;
    return p;
}

static void fault_free(void *ptr, void *arg)
{
    fault *f = arg;
    f->live--;
    free(ptr);
}

static int ignore_figure(void *arg, const char *name, const char *svg, size_t len)
{
    (void)arg; (void)name; (void)svg; (void)len;
    return 0;
}

/* Refuse every allocation of the page (figures: 1) in turn: each refusal gives
 * STURDY_EINTERNAL, never a page that looks whole, and leaves nothing allocated. */
static void sweep_faults(const sturdy_result *r, int figures)
{
    unsigned long k = 1, wrong = 0, leaks = 0;
    for (;; k++) {
        fault f = { 0, k, 0, 0 };
        sturdy_allocator a = { fault_malloc, fault_realloc, fault_free, &f };
        sturdy_set_allocator(&a);
        sturdy_buf b;
        sturdy_buf_init(&b);
        sturdy_status st = figures ? sturdy_report_figures(r, ignore_figure, NULL)
                                   : sturdy_report_html(r, NULL, &b);
        sturdy_buf_free(&b);
        sturdy_set_allocator(NULL);
        if (f.live != 0)
            leaks++;
        if (!f.refused) {
            if (st != STURDY_OK)
                wrong++;
            break;
        }
        if (st != STURDY_EINTERNAL)
            wrong++;
    }
    char what[200];
    snprintf(what, sizeof what, "%s: each of %lu allocations refused in turn gives "
             "STURDY_EINTERNAL (%lu did not)", figures ? "figures" : "html", k - 1, wrong);
    CHECK(what, wrong == 0 && k > 20);
    snprintf(what, sizeof what, "%s: nothing left allocated after a refusal (%lu leaked)",
             figures ? "figures" : "html", leaks);
    CHECK(what, leaks == 0);
}

static int count_figure(void *arg, const char *name, const char *svg, size_t len)
{
    sink *k = arg;
    for (const char *c = name; *c; c++)
        if (!((*c >= 'a' && *c <= 'z') || (*c >= 'A' && *c <= 'Z') || (*c >= '0' && *c <= '9') ||
              *c == '.' || *c == '_' || *c == '-'))
            k->bad_name = 1;
    if (!svg || len < 100 || strncmp(svg, "<?xml", 5) || !strstr(svg, "<style>"))
        k->bad_name = 1;
    if (k->calls < 32)
        snprintf(k->names[k->calls], sizeof k->names[0], "%s", name);
    k->calls++;
    return k->stop_after && k->calls >= k->stop_after;
}

/* The page and the figures of the demo data through the public API. */
static void page_checks(void)
{
    char err[STURDY_ERR_LEN] = "";
    sturdy_table *t = NULL;
    if (sturdy_table_load("examples/demo.csv", NULL, &t, err)) {
        CHECK("examples/demo.csv loads (run from the repository root)", 0);
        return;
    }
    static const char *ys[] = { "build_min" }, *fs[] = { "runner", "cache", "tests" };
    sturdy_options o;
    sturdy_options_init(&o);
    o.model.responses = ys;
    o.model.nresponses = 1;
    o.model.factors = fs;
    o.model.nfactors = 3;
    o.permutations = 199;
    o.bootstrap = 0;
    sturdy_result *r = NULL;
    sturdy_context ctx;
    sturdy_context_init(&ctx);
    ctx.threads = 1;
    CHECK_INT("demo analysed", sturdy_analyze(t, &o, &ctx, &r, err), STURDY_OK);
    sturdy_table_free(t);
    if (!r)
        return;
    /* every rearrangement lands in exactly one bin of each tested term */
    int sums = 1;
    for (size_t k = 0; k < r->resp[0].nterms; k++) {
        uint64_t sum = 0;
        for (size_t q = 0; q < STURDY_FHIST_BINS; q++)
            sum += r->resp[0].terms[k].f_hist[q];
        sums &= sum == 199;
    }
    CHECK("F* bins of every term add up to the 199 rearrangements", sums);
    sturdy_buf b;
    sturdy_buf_init(&b);
    CHECK_INT("html written", sturdy_report_html(r, NULL, &b), STURDY_OK);
    size_t nsvg = 0;
    for (const char *p = b.data; p && (p = strstr(p, "<svg ")); p++)
        nsvg++;
    /* means of 3 main effects and 3 two-factor terms, the effect sizes (the noncentral-F
       interval needs no bootstrap), F* of 7 terms, 3 residual figures, influential rows */
    CHECK_INT("html: 18 drawings", nsvg, 18);
    CHECK("html: a whole document", b.data && !strncmp(b.data, "<!DOCTYPE html>", 15) &&
          strstr(b.data, "</html>\n") == b.data + b.len - 8);
    sturdy_buf c;
    sturdy_buf_init(&c);
    sturdy_report_html(r, NULL, &c);
    CHECK("html: the same bytes twice", c.len == b.len && !memcmp(c.data, b.data, b.len));
    sturdy_buf_free(&c);
    sturdy_buf_free(&b);
    sink k = { 0 };
    CHECK_INT("figures: all handed over", sturdy_report_figures(r, count_figure, &k), STURDY_OK);
    CHECK_INT("figures: 18 files", k.calls, 18);
    CHECK("figures: safe names, XML files with their own style", !k.bad_name);
    int unique = 1;
    for (size_t i = 0; i < k.calls && i < 32; i++)
        for (size_t j = 0; j < i; j++)
            unique &= strcmp(k.names[i], k.names[j]) != 0;
    CHECK("figures: names unique", unique);
    CHECK("figures: named by response and term",
          !strcmp(k.names[3], "build_min-means-runner_by_cache"));
    sink stop = { 0 };
    stop.stop_after = 3;
    CHECK_INT("figures: a sink that stops gives STURDY_EOUTPUT",
              sturdy_report_figures(r, count_figure, &stop), STURDY_EOUTPUT);
    CHECK_INT("figures: and is called no more", stop.calls, 3);
    sweep_faults(r, 0);
    sweep_faults(r, 1);
    /* a result read back has no design: no page */
    sturdy_buf j;
    sturdy_buf_init(&j);
    sturdy_report_json(r, NULL, &j);
    sturdy_result *back = NULL;
    CHECK_INT("JSON read back", sturdy_result_read_json("j", j.data, j.len, &back, err),
              STURDY_OK);
    sturdy_buf_init(&b);
    CHECK_INT("html of a result read back: STURDY_EUSAGE", sturdy_report_html(back, NULL, &b),
              STURDY_EUSAGE);
    CHECK_INT("figures of a result read back: STURDY_EUSAGE",
              sturdy_report_figures(back, count_figure, &k), STURDY_EUSAGE);
    sturdy_buf_free(&b);
    sturdy_buf_free(&j);
    sturdy_result_free(back);
    sturdy_result_free(r);
}

/* sturdy_svg_put1 against the C library's "%.1f" (glibc's printf rounds the exact binary
 * value, halves to even): random values over many scales, every exact tie k/4 and every
 * k/20 (the decimal ties, not exact in binary) in a range, their neighbours one ulp away,
 * negative zero and values that round to it, large values, infinities and NaN. */
static int put1_same(double v, char *first_bad, size_t n)
{
    char want[400];                                     /* 1e300 has 301 digits */
    snprintf(want, sizeof want, "%.1f", v);
    sturdy_buf b;
    sturdy_buf_init(&b);
    sturdy_svg_put1(&b, v);
    int same = b.data && !strcmp(b.data, want);
    if (!same && !first_bad[0])
        snprintf(first_bad, n, "%.17g: %.40s, printf %.40s", v, b.data ? b.data : "(none)",
                 want);
    sturdy_buf_free(&b);
    return same;
}

static void put1_checks(void)
{
    char bad[160] = "";
    long tried = 0, same = 0;
    uint64_t x = 0x9E3779B97F4A7C15u;
    for (long i = 0; i < 2000000; i++) {
        x ^= x << 13;
        x ^= x >> 7;
        x ^= x << 17;
        double u = (double)(x >> 11) * 0x1.0p-53;            /* [0, 1) */
        double scale = pow(10.0, (double)(i % 18) - 3.0);      /* 1e-3 .. 1e14 */
        double v = (i & 1 ? -1.0 : 1.0) * u * scale;
        same += put1_same(v, bad, sizeof bad);
        tried++;
    }
    for (long k = -40000; k <= 40000; k++) {
        double t[6] = { k / 4.0, k / 20.0, nextafter(k / 20.0, INFINITY),
                        nextafter(k / 20.0, -INFINITY), nextafter(k / 4.0, INFINITY),
                        nextafter(k / 4.0, -INFINITY) };
        for (int j = 0; j < 6; j++, tried++)
            same += put1_same(t[j], bad, sizeof bad);
    }
    const double odd[] = { 0.0, -0.0, 0.04, -0.04, 0.05, -0.05, 0.049999999999999996,
                           -0.049999999999999996, 1e-300, -1e-300, 4.9e-324, 0.15, 0.25,
                           0.35, 2.5, -2.5, 999999999999999.9, 1e15, -1e15, 1e20, 1e300,
                           INFINITY, -INFINITY, NAN };
    for (size_t j = 0; j < sizeof odd / sizeof odd[0]; j++, tried++)
        same += put1_same(odd[j], bad, sizeof bad);
    char line[320];
    snprintf(line, sizeof line, "svg_put1 writes what printf's %%.1f writes: %ld of %ld "
             "values%s%s", same, tried, bad[0] ? "; first difference " : "", bad);
    check_report(same == tried, line);
}

int main(void)
{
    /* nicenum: round to the nearest of 1, 2, 5, 10 (thresholds 1.5, 3, 7), or take the
       smallest at least x */
    put1_checks();
    CHECK_REL("nicenum(6.9, round) = 5", sturdy_svg_nicenum(6.9, 1), 5.0, 1e-12);
    CHECK_REL("nicenum(7, round) = 10", sturdy_svg_nicenum(7.0, 1), 10.0, 1e-12);
    CHECK_REL("nicenum(0.149, round) = 0.1", sturdy_svg_nicenum(0.149, 1), 0.1, 1e-12);
    CHECK_REL("nicenum(2.1, ceiling) = 5", sturdy_svg_nicenum(2.1, 0), 5.0, 1e-12);
    CHECK_REL("nicenum(2, ceiling) = 2", sturdy_svg_nicenum(2.0, 0), 2.0, 1e-12);
    CHECK_REL("nicenum(1000, ceiling) = 1000", sturdy_svg_nicenum(1000.0, 0), 1000.0, 1e-12);

    /* Heckbert's loose labels: range = nicenum(hi − lo), step = nicenum(range/(n−1), round) */
    ticks_case("[0, 1] in 5", 0.0, 1.0, 5, 0.0, 1.0, 0.2, 6, 1);
    ticks_case("[-3.7, 12.2] in 6", -3.7, 12.2, 6, -5.0, 15.0, 5.0, 5, 0);
    ticks_case("[0.00123, 0.00456] in 5", 0.00123, 0.00456, 5, 0.001, 0.005, 0.001, 5, 3);
    ticks_case("[-1, 1] in 5", -1.0, 1.0, 5, -1.0, 1.0, 0.5, 5, 1);
    ticks_case("[5, 5] widened", 5.0, 5.0, 5, 4.4, 5.6, 0.2, 7, 1);
    ticks_case("[0, 0] widened", 0.0, 0.0, 5, -1.0, 1.0, 0.5, 5, 1);
    ticks_case("[12, 3] reversed", 12.0, 3.0, 5, 2.0, 12.0, 2.0, 6, 0);
    ticks_case("[NaN, 1] falls back to [0, 1]", NAN, 1.0, 5, 0.0, 1.0, 0.2, 6, 1);
    sturdy_svg_ticks t;
    sturdy_svg_ticks_make(-1.0, 1.0, 5, &t);
    label_case(&t, 0, "-1.0");
    label_case(&t, 2, "0.0");      /* never "-0.0" */
    label_case(&t, 4, "1.0");
    sturdy_svg_ticks_make(0.00123, 0.00456, 5, &t);
    label_case(&t, 2, "0.003");
    /* range nicenum(0.6) = 1, step nicenum(1/6, round) = 0.2: -0.4 … 0.4, each label
       exact (k·step, not a sum that drifts to 0.20000000000000004) */
    ticks_case("[-0.3, 0.3] in 7", -0.3, 0.3, 7, -0.4, 0.4, 0.2, 5, 1);
    sturdy_svg_ticks_make(-0.3, 0.3, 7, &t);
    label_case(&t, 0, "-0.4");
    label_case(&t, 2, "0.0");
    label_case(&t, 3, "0.2");
    label_case(&t, 4, "0.4");

    /* scales */
    sturdy_svg_scale sx = { 0.0, 10.0, 100.0, 200.0 }, sy = { 0.0, 1.0, 300.0, 50.0 };
    CHECK_ABS("x scale: 2.5 → 125", sturdy_svg_map(&sx, 2.5), 125.0, 1e-12);
    CHECK_ABS("x scale: -10 → 0 (extrapolates)", sturdy_svg_map(&sx, -10.0), 0.0, 1e-12);
    CHECK_ABS("y scale runs upwards: 0.2 → 250", sturdy_svg_map(&sy, 0.2), 250.0, 1e-12);
    sturdy_svg_scale flat = { 3.0, 3.0, 0.0, 10.0 };
    CHECK_ABS("empty data range maps to the middle", sturdy_svg_map(&flat, 7.0), 5.0, 1e-12);

    /* clipping to [0, 10]² */
    clip_case("inside", 1, 2, 3, 4, 1, 1, 2, 3, 4);
    clip_case("across", -5, 5, 15, 5, 1, 0, 5, 10, 5);
    clip_case("diagonal in", -5, -5, 5, 5, 1, 0, 0, 5, 5);
    clip_case("outside right", 11, 0, 20, 5, 0, 0, 0, 0, 0);
    clip_case("vertical outside", 12, -3, 12, 13, 0, 0, 0, 0, 0);
    clip_case("corner miss", -1, 1, 1, -1.5, 0, 0, 0, 0, 0);
    clip_case("both ends out, through", 5, -10, 5, 20, 1, 5, 0, 5, 10);

    /* drawing through a plot: nothing leaves the plot area */
    sturdy_buf b;
    sturdy_buf_init(&b);
    sturdy_svg_plot p;
    memset(&p, 0, sizeof p);
    sturdy_svg_frame(&p, &b, 640, 360, 0.0, 10.0, 0.0, 1.0, "t", "x", "y");
    CHECK("frame: area inside the drawing", p.area.x0 > 0 && p.area.x1 < 640 &&
          p.area.y0 > 0 && p.area.y1 < 360);
    CHECK_ABS("frame: x axis starts at the area's left", sturdy_svg_px(&p, 0.0), p.area.x0, 1e-9);
    CHECK_ABS("frame: y axis top at the last tick", sturdy_svg_py(&p, p.yt.hi), p.area.y0, 1e-9);
    sturdy_buf_free(&b);
    sturdy_buf_init(&b);
    p.b = &b;
    double xs[] = { -5, 0, 5, 10, 20 }, ys[] = { 0.5, 2.0, 0.5, -1.0, 0.5 };
    sturdy_svg_polyline(&p, xs, ys, 5, "ln");
    CHECK("polyline: every point clipped into the area", b.data && path_inside(b.data, &p.area));
    sturdy_buf_free(&b);
    sturdy_buf_init(&b);
    p.b = &b;
    sturdy_svg_marker(&p, 11.0, 0.5, 0, "s0");
    sturdy_svg_marker(&p, 5.0, -0.2, 1, "s1");
    CHECK("markers outside the area are not drawn", b.len == 0);
    sturdy_svg_marker(&p, 5.0, 0.5, 0, "s0");
    CHECK("a marker inside is drawn", b.data && strstr(b.data, "<circle") != NULL);
    sturdy_buf_free(&b);
    sturdy_buf_init(&b);
    p.b = &b;
    sturdy_svg_bar(&p, 1.0, 2.0, 0.0, 5.0, "bar");   /* top far above the axis */
    double y = NAN, h = NAN;
    const char *at = b.data ? strstr(b.data, " y=\"") : NULL;
    if (at) y = strtod(at + 4, NULL);
    at = b.data ? strstr(b.data, " height=\"") : NULL;
    if (at) h = strtod(at + 9, NULL);
    CHECK_ABS("bar clipped at the area's top", y, p.area.y0, 0.051);
    CHECK_ABS("bar clipped to the area's height", h, p.area.y1 - p.area.y0, 0.11);
    sturdy_buf_free(&b);

    /* escaping of level names */
    escape_case("a<b & \"c\" 'd' >", "a&lt;b &amp; &quot;c&quot; &#39;d&#39; &gt;");
    escape_case("Müller × 20 °C", "Müller × 20 °C");
    escape_case("日本語", "日本語");
    escape_case("bad\xff byte", "bad\xEF\xBF\xBD byte");
    escape_case("tab\there", "tab\xEF\xBF\xBDhere");
    escape_case("c1 \xC2\x85 control", "c1 \xEF\xBF\xBD control");
    escape_case("cut \xE6\x97", "cut \xEF\xBF\xBD\xEF\xBF\xBD");
    /* a name in a whole drawing stays one text element */
    sturdy_buf_init(&b);
    sturdy_svg_begin(&b, 100, 100, "f0", "<script>x</script>", "a & b");
    sturdy_svg_text(&b, 1, 2, "start", "lab", "</text><g>");
    sturdy_svg_end(&b);
    CHECK("no raw markup from names reaches the drawing",
          b.data && !strstr(b.data, "<script>") && !strstr(b.data, "</text><g>") &&
          strstr(b.data, "&lt;/text&gt;&lt;g&gt;"));
    sturdy_buf_free(&b);

    /* the fixed bins of F* */
    CHECK_REL("F* bins: top for F 3.31 on (2, 57) = 10 (q.999 = 7.817)",
              sturdy_fhist_top(3.31, 2, 57), 10.0, 1e-12);
    CHECK_REL("F* bins: stretched to show F 20 on (2, 57): 25", sturdy_fhist_top(20, 2, 57),
              25.0, 1e-12);
    CHECK_REL("F* bins: at most 4 × q.999 for F 500 on (2, 57): 50",
              sturdy_fhist_top(500, 2, 57), 50.0, 1e-12);
    CHECK_REL("F* bins: top for F 3 on (1, 57) = 20 (q.999 = 12.04)",
              sturdy_fhist_top(3, 1, 57), 20.0, 1e-12);
    CHECK_REL("F* bins: F 7.5 on (4, 20) just past q.999 = 7.096: 10",
              sturdy_fhist_top(7.5, 4, 20), 10.0, 1e-12);
    CHECK("F* bins: no F, no bins", isnan(sturdy_fhist_top(NAN, 2, 57)));
    CHECK_INT("bin of 0.1 on [0, 10)", sturdy_fhist_bin(0.1, 10), 0);
    CHECK_INT("bin of 0.25 (an edge) on [0, 10)", sturdy_fhist_bin(0.25, 10), 1);
    CHECK_INT("bin of 9.99", sturdy_fhist_bin(9.99, 10), STURDY_FHIST_BINS - 2);
    CHECK_INT("bin of 10 (top): the last", sturdy_fhist_bin(10, 10), STURDY_FHIST_BINS - 1);
    CHECK_INT("bin of +inf: the last", sturdy_fhist_bin(INFINITY, 10), STURDY_FHIST_BINS - 1);
    CHECK_INT("bin of -1: the first", sturdy_fhist_bin(-1, 10), 0);
    CHECK_REL("F(2, 57) density at 1.5 (scipy 0.2202147253237757)",
              sturdy_f_density(1.5, 2, 57), 0.2202147253237757, 1e-10);
    page_checks();
    return check_done();
}
