/* check.h — the tests' tiny harness: one printed line per check with observed,
 * expected and tolerance, and a closing line "N passed, N failed". */
#ifndef STURDY_TEST_CHECK_H
#define STURDY_TEST_CHECK_H

#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

static int check_passed, check_failed;

/* A uniform on [0, 1) with 53 random bits from the test's own state (splitmix64, Steele,
 * Lea & Flood 2014): random inputs for property tests, independent of the library's PCG. */
static inline double check_uniform(uint64_t *state)
{
    uint64_t z = (*state += 0x9e3779b97f4a7c15ULL);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
    return (double)((z ^ (z >> 31)) >> 11) * 0x1p-53;
}

static inline void check_report(int ok, const char *what)
{
    if (ok) check_passed++; else check_failed++;
    printf("%s  %s\n", ok ? "ok  " : "FAIL", what);
}

/* |observed − expected| ≤ tol·max(1, |expected|) when rel, else ≤ tol. */
static inline void check_close(const char *name, double obs, double exp, double tol, int rel)
{
    char line[512];
    double scale = rel ? fmax(1e-300, fabs(exp)) : 1.0;
    int ok = (isnan(obs) && isnan(exp)) || fabs(obs - exp) <= tol * scale;
    snprintf(line, sizeof line, "%s: observed %.17g expected %.17g %s tol %.1e", name, obs,
             exp, rel ? "rel" : "abs", tol);
    check_report(ok, line);
}
#define CHECK_REL(name, obs, exp, tol) check_close((name), (obs), (exp), (tol), 1)
#define CHECK_ABS(name, obs, exp, tol) check_close((name), (obs), (exp), (tol), 0)

static inline void check_true(const char *name, int cond)
{
    check_report(cond != 0, name);
}
#define CHECK(name, cond) check_true((name), (cond))

static inline void check_int(const char *name, long long obs, long long exp)
{
    char line[512];
    snprintf(line, sizeof line, "%s: observed %lld expected %lld", name, obs, exp);
    check_report(obs == exp, line);
}
#define CHECK_INT(name, obs, exp) check_int((name), (long long)(obs), (long long)(exp))

static inline int check_done(void)
{
    printf("%d passed, %d failed\n", check_passed, check_failed);
    return check_failed ? 1 : 0;
}

#endif
