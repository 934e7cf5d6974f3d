"""xcheck_interval_edges.py — the honest edges of the effect-size intervals, on crafted
tables run through the program (JSON, CSV and text):

  * fewer than 10 residual df (2x2, 2 rows per cell: 4 df): percentile and BCa are null
    for every effect size, the bootstrap note gives the reason, the recommended interval
    of partial eta^2 / f / partial omega^2 is the test inversion (from 4 df) and eta^2,
    omega^2 have none, with a reason;
  * fewer than 4 residual df (one cell with 1 row: 3 df): the noncentral-F interval is
    recommended for partial eta^2, and the reason says why;
  * a null term (F < 1 by construction, 3x3 with 5 rows per cell, 36 df): the lower end
    of its test-inversion interval is exactly 0 in the JSON, and a negative omega^2
    estimate's percentile interval is clamped to start at exactly 0 with the interval
    note saying so (and that an interval excludes the estimate);
  * every recommended interval lies in its effect size's range, and no printed interval
    excludes its estimate without the interval note saying so;
  * the text report explains once, where it happens, why a significant term's interval
    can reach 0 (the demo: a term with resampled p < 0.05 whose interval starts at 0),
    and the CSV carries the recommended method and ends.
Prints one line per check and "N passed, N failed"; exits 1 on any failure.
"""
import csv
import io
import json
import math
import os
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from harness import abort, finish, need_binary, report  # noqa: E402

BIN = need_binary()
ES = ["eta2", "partial_eta2", "omega2", "partial_omega2", "cohens_f"]
TOP = {"eta2": 1.0, "partial_eta2": 1.0, "omega2": 1.0, "partial_omega2": 1.0,
       "cohens_f": math.inf}


def run(args, text=None):
    proc = subprocess.run([BIN] + args, input=text, capture_output=True, text=True,
                          timeout=300)
    if proc.returncode not in (0, 1):
        abort("sturdy %s failed (exit %d): %s" % (" ".join(args), proc.returncode,
                                                 proc.stderr.strip()[:300]))
    return proc.stdout


def table(rows):
    out = io.StringIO()
    w = csv.writer(out, lineterminator="\n")
    w.writerow(["A", "B", "y"])
    w.writerows(rows)
    return out.getvalue()


def check_json(name, data, extra=()):
    path = os.path.join(TMP, name + ".csv")
    with open(path, "w") as fh:
        fh.write(data)
    out = run(["check", path, "-y", "y", "-f", "A,B", "-B", "199", "--bootstrap", "999",
               "--format", "json", "--threads", "2"] + list(extra))
    return json.loads(out)["responses"][0]


def ranges_and_estimates(name, resp):
    """Every recommended interval lies in range; an interval that excludes its estimate
    (or was clamped) has the interval note."""
    for t in resp["terms"]:
        if t["f"] is None:
            continue
        for e in ES:
            rec = t["ci"][e]["recommended"]
            report(isinstance(rec["reason"], str) and rec["reason"] != "",
                   "%s %s %s: recommended interval has a reason" % (name, t["term"], e))
            if rec["interval"] is None:
                continue
            lo, hi = rec["interval"]
            report(0 <= lo <= hi <= TOP[e], "%s %s %s: recommended %s [%g, %g] within "
                   "[0, %g]" % (name, t["term"], e, rec["method"], lo, hi, TOP[e]))
            for kind in ("percentile", "bca", "test_inversion"):
                iv = t["ci"][e].get(kind)
                if not iv or iv[0] is None:
                    continue
                inside = iv[0] <= t[e] <= iv[1]
                if kind == "test_inversion" and rec["method"] != "test-inversion":
                    continue   # not printed
                report(inside or (t["ci_note"] or "").find("excludes") >= 0,
                       "%s %s %s %s [%g, %g] holds the estimate %g or the note says it "
                       "does not" % (name, t["term"], e, kind, iv[0], iv[1], t[e]))


TMP = tempfile.mkdtemp(prefix="sturdy_edges_")

# ---------------- fewer than 10 residual df: 2x2, 2 rows per cell ----------------
ys = [3.1, 3.9, 5.2, 4.4, 6.8, 7.9, 9.1, 8.2]
rows = [(a, b, ys[2 * (2 * a + b) + k]) for a in range(2) for b in range(2) for k in range(2)]
resp = check_json("df4", table([("a%d" % a, "b%d" % b, y) for a, b, y in rows]))
report(resp["error"]["df"] == 4, "df4: 4 residual df (got %s)" % resp["error"]["df"])
for t in resp["terms"]:
    declined = all(t["ci"][e]["percentile"] == [None, None] and
                   t["ci"][e]["bca"] == [None, None] for e in ES)
    report(declined, "df4 %s: percentile and BCa null for every effect size" % t["term"])
    note = t["boot_note"] or ""
    report("fewer than 10 residual degrees of freedom" in note and "51–89%" in note,
           "df4 %s: the bootstrap note says why: %r" % (t["term"], note))
    rec = t["ci"]["partial_eta2"]["recommended"]
    report(rec["method"] == "test-inversion" and
           rec["interval"] == t["ci"]["partial_eta2"]["test_inversion"],
           "df4 %s: test inversion recommended for partial eta^2 at 4 residual df (%s)"
           % (t["term"], rec["method"]))
    rec = t["ci"]["eta2"]["recommended"]
    report(rec["method"] is None and rec["interval"] is None and
           "10 residual degrees of freedom" in rec["reason"],
           "df4 %s: no interval for eta^2, reason %r" % (t["term"], rec["reason"]))
ranges_and_estimates("df4", resp)

# ---------------- fewer than 4 residual df: one cell with a single row ----------------
rows3 = [r for r in rows if not (r[0] == 1 and r[1] == 1 and r[2] == ys[7])]
resp = check_json("df3", table([("a%d" % a, "b%d" % b, y) for a, b, y in rows3]))
report(resp["error"]["df"] == 3, "df3: 3 residual df (got %s)" % resp["error"]["df"])
for t in resp["terms"]:
    rec = t["ci"]["partial_eta2"]["recommended"]
    report(rec["method"] == "noncentral-f" and "fewer than 4" in rec["reason"] and
           rec["interval"] == t["ci"]["partial_eta2"]["noncentral_f"],
           "df3 %s: noncentral F recommended below 4 residual df (%s: %r)"
           % (t["term"], rec["method"], rec["reason"]))
    f = t["ci"]["cohens_f"]["recommended"]["interval"]
    ncf = t["ci"]["partial_eta2"]["noncentral_f"]
    want = [math.sqrt(p / (1 - p)) for p in ncf]
    report(f is not None and all(abs(a - b) <= 1e-12 * max(1, b) for a, b in zip(f, want)),
           "df3 %s: Cohen's f interval = sqrt(eta/(1-eta)) of the noncentral-F one" % t["term"])

# ---------------- a null term: F < 1 by construction ----------------
# 3x3, 5 rows per cell; A has an effect, B's cell means are nearly equal (B's pattern is
# a permutation of the same within-cell values, with a tiny shift)
base = [-1.3, -0.4, 0.1, 0.5, 1.1]
rows = []
for a in range(3):
    for b in range(3):
        for k in range(5):
            y = 10 + 1.2 * a + base[(k + 2 * b + a) % 5] + 0.1 * (b == 1) + 0.02 * b * (a - 1)
            rows.append(("a%d" % a, "b%d" % b, round(y, 4)))
resp = check_json("null", table(rows))
tb = [t for t in resp["terms"] if t["term"] == "B"][0]
report(tb["f"] < 1, "null: B's F %.4g < 1 (the crafted null term)" % tb["f"])
ti = tb["ci"]["partial_eta2"]["test_inversion"]
report(ti[0] == 0 and ti[1] > 0, "null: B's test-inversion interval starts at exactly 0: "
       "%r" % ti)
rec = tb["ci"]["partial_eta2"]["recommended"]
report(rec["method"] == "test-inversion" and rec["interval"][0] == 0,
       "null: the recommended interval of B reaches 0 (%r)" % rec)
report(tb["omega2"] < 0, "null: B's omega^2 estimate %.4g is negative" % tb["omega2"])
pct = tb["ci"]["omega2"]["percentile"]
note = tb["ci_note"] or ""
report(pct[0] == 0 and "moved into it" in note and "ω²" in note,
       "null: omega^2 percentile clamped to start at 0 (%r), note %r" % (pct, note))
report("excludes the estimate" in note,
       "null: the note says an interval excludes the negative estimate")
ranges_and_estimates("null", resp)

# ---------------- text and CSV of the demo ----------------
text = run(["demo", "--bootstrap", "999", "--threads", "2"])
line = "while its 95% interval of partial η² starts at 0"
report(text.count(line) == 1, "demo text: the 'significant, yet reaches 0' line once "
       "(%d)" % text.count(line))
report("the 90% interval (--conf 0.9) is the one that matches the F-test at α = 0.05"
       in " ".join(text.split()), "demo text: names the 1-2α interval and --conf")
report("95% test inversion" in text and "(recommended)" in text,
       "demo text: the recommended interval leads the partial eta^2 line")
report("Effect sizes, with the recommended 95% interval under each: test inversion for "
       "partial η², partial ω² and Cohen's f; BCa for η² and ω²" in " ".join(text.split()),
       "demo text: the effect-size table names its methods")
demo_json = json.loads(run(["demo", "--bootstrap", "999", "--threads", "2", "--format",
                            "json"]))
dresp = demo_json["responses"][0]
sig0 = [t["term"] for t in dresp["terms"]
        if ((t["p"] or 1) < 0.05 or (t["p_perm"] or 1) < 0.05) and
        t["ci"]["partial_eta2"]["recommended"]["interval"][0] == 0]
report(len(sig0) >= 1, "demo: a significant term whose interval starts at 0: %s" % sig0)
ranges_and_estimates("demo", dresp)
rows = list(csv.DictReader(io.StringIO(run(["demo", "--bootstrap", "999", "--threads", "2",
                                            "--format", "csv"]))))
for r, t in zip(rows, dresp["terms"]):
    for e in ES:
        rec = t["ci"][e]["recommended"]
        got = (r["%s_rec_method" % e], r["%s_rec_lo" % e], r["%s_rec_hi" % e])
        want = (rec["method"] or "",) + tuple("" if rec["interval"] is None else repr(x)
                                              for x in (rec["interval"] or [None, None]))
        ok = got[0] == want[0] and all(
            (a == "" and b == "") or (a != "" and b != "" and float(a) == float(b))
            for a, b in zip(got[1:], want[1:]))
        report(ok, "demo csv %s %s: recommended %s = JSON's %s" % (t["term"], e, got, want))
finish()
