"""harness.py — the frame every cross-check script (tests/xcheck_*.py) shares: finding
the binary and the probes, one printed line per check, and the closing summary.

Not a test itself (tests/run.sh runs only xcheck_*.py). A script imports it after
putting its own folder on sys.path, so that it runs from any working directory:
    sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
    from harness import report, finish

Line format (tests/run.sh reads it): "ok   <text>" or "FAIL <text>", one per check, and
last "N passed, N failed"; the exit status is 1 on any failure. A missing binary, probe
or reference library is a failure, never a skip.
"""
import math
import os
import subprocess
import sys

# Passed and failed checks of this run; only report() changes them.
_results = {"pass": 0, "fail": 0}

# Relative checks scale by |expected|, but never by less than this, so that an expected
# value of exactly 0 (or below the smallest normal double, ~2.2e-308) still admits an
# observed value that is zero up to subnormal rounding.
REL_SCALE_MIN = 1e-300

# STURDY_QUICK=1 (the sanitizer run) asks the slow property tests for their short tier.
QUICK = os.environ.get("STURDY_QUICK") == "1"


def report(ok, text):
    """One check: prints "ok   text" or "FAIL text" and counts it."""
    _results["pass" if ok else "fail"] += 1
    print(("ok   " if ok else "FAIL ") + text)


def finish():
    """Prints "N passed, N failed" and exits, with status 1 on any failure."""
    print("%d passed, %d failed" % (_results["pass"], _results["fail"]))
    sys.exit(1 if _results["fail"] else 0)


def abort(text):
    """A failure that stops the run (a missing tool, an unreadable answer): reports
    text as failed and finishes."""
    report(False, text)
    finish()


def missing_library(exc, packages):
    """Ends the run on a reference library that would not import; packages names the
    Debian packages that provide it."""
    abort("reference library missing: %s (install %s)" % (exc, packages))


def need_binary():
    """The sturdy program ($STURDY_BIN, default ./sturdy); ends the run when it is not
    an executable file."""
    path = os.environ.get("STURDY_BIN", "./sturdy")
    if not os.access(path, os.X_OK):
        abort("binary %s not built (make sturdy)" % path)
    return path


def probe_path(name):
    """The driver tests/<name>.c as built in $STURDY_BUILD/tests (default build/); ends
    the run when it is not built."""
    path = os.path.join(os.environ.get("STURDY_BUILD", "build"), "tests", name)
    if not os.access(path, os.X_OK):
        abort("probe %s not built (make test-bins)" % path)
    return path


def need_problem_probe(name):
    """A driver that reads problems of one or more lines and answers each with one line:
    returns a function (lines, count) that feeds it the lines and returns its count
    answer lines (a crash or a missing answer ends the run)."""
    path = probe_path(name)

    def probe(lines, count):
        proc = subprocess.run([path], input="\n".join(lines) + "\n", capture_output=True,
                              text=True, timeout=600)
        out = proc.stdout.splitlines()
        if proc.returncode != 0 or len(out) != count:
            abort("probe failed (exit %d, %d of %d answers): %s"
                  % (proc.returncode, len(out), count, proc.stderr.strip()))
        return out
    return probe


def need_probe(name):
    """The driver tests/<name>.c, one answer line per query line: returns a function that
    feeds it query lines and returns its answer lines."""
    run = need_problem_probe(name)
    return lambda lines: run(lines, len(lines))


def close(name, obs, exp, tol, rel, source, floor=0.0):
    """One numeric check, printed with both values at full precision.
    rel: |obs − exp| ≤ max(tol·max(|exp|, REL_SCALE_MIN), floor); otherwise
    |obs − exp| ≤ tol. A NaN matches only a NaN, an infinity only itself."""
    if math.isnan(exp) or math.isnan(obs):
        ok = math.isnan(exp) and math.isnan(obs)
    elif math.isinf(exp) or math.isinf(obs):
        ok = obs == exp
    elif rel:
        ok = abs(obs - exp) <= max(tol * max(abs(exp), REL_SCALE_MIN), floor)
    else:
        ok = abs(obs - exp) <= tol
    report(ok, "%s: observed %.17g expected %.17g %s tol %.0e [%s]"
           % (name, obs, exp, "rel" if rel else "abs", tol, source))
