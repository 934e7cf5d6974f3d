"""Single rows and the resistant test in every format, and the family-wise headline
(issue 11, items 4 and 6).

On the decimal-slip data (3×2×2, seed 7 of xcheck_sensitivity.py) with --resistant:
  - CSV: rows_to_change, sens_direction, sens_rows, sens_lines, p_without, p_perm_without,
    rs_statistic, rs_p_perm, rs_p_perm_lo, rs_p_perm_hi, rs_scale equal the JSON's values
    exactly (shortest round-trip numbers), empty where the JSON has null; the residual and
    total rows keep the header's column count;
  - read back: sturdy_result_read_json's accessors (tests/probe_readback.c) give the JSON's
    numbers bit for bit (rows_to_change, p_without, p_perm_without, statistic, p_perm),
    NaN where null; without --resistant the resistant values read back as NaN;
  - family: JSON family counts equal the terms' own p-values counted at α; the headline
    says how many of those significant by resampling stay significant family-wise and
    names them; on the demo (7 terms, 2 significant by resampling, none family-wise) it
    says "0 of the 2".
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
from harness import finish, need_binary, report  # noqa: E402

try:
    import numpy as np
except ImportError as exc:
    from harness import missing_library
    missing_library(exc, "python3-numpy")

BIN = os.environ.get("STURDY_BIN", "./sturdy")
BUILD = os.environ.get("STURDY_BUILD", "build")
PROBE = os.path.join(BUILD, "tests", "probe_readback")


def dataset(path):
    rng = np.random.default_rng(7)
    rows = []
    for a in ("p1", "p2", "p3"):
        for b in ("c1", "c2"):
            for c in ("t1", "t2"):
                for _ in range(4):
                    rows.append([a, b, c, round(7.0 + (1.5 if a == "p1" else 0.0) +
                                                rng.normal(0, 0.5), 2)])
    k = int(rng.integers(len(rows)))
    rows[k][3] = round(rows[k][3] * 10, 1)
    with open(path, "w") as f:
        f.write("primer,cure,temp,y\n")
        for r in rows:
            f.write("%s,%s,%s,%s\n" % tuple(r))


def run(args):
    p = subprocess.run([BIN] + args + ["--quiet"], capture_output=True, text=True, timeout=120)
    if p.returncode != 0:
        report(False, "sturdy %s failed (exit %d): %s" % (" ".join(args), p.returncode,
                                                          p.stderr.strip()))
        finish()
    return p.stdout


def same(csv_field, value):
    """A CSV field against a JSON value: empty for null, else the same double."""
    if value is None:
        return csv_field == ""
    if isinstance(value, str):
        return csv_field == value
    return csv_field != "" and float(csv_field) == float(value)


def readback(path):
    p = subprocess.run([PROBE, path], capture_output=True, text=True, timeout=60)
    if p.returncode != 0:
        report(False, "probe_readback failed: %s" % p.stderr.strip())
        finish()
    out = {}
    for line in p.stdout.strip().split("\n"):
        f = line.split(" ")
        out[(int(f[0]), f[1])] = [float(x) for x in f[2:]]
    return out


def bits(x, y):
    if y is None:
        return math.isnan(x)
    return x == float(y)


def main():
    need_binary()
    if not os.path.exists(PROBE):
        report(False, "missing %s (make test-bins)" % PROBE)
        finish()
    with tempfile.TemporaryDirectory() as tmp:
        data = os.path.join(tmp, "slip.csv")
        dataset(data)
        base = ["check", data, "-y", "y", "-f", "primer,cure,temp", "-B", "999",
                "--bootstrap", "0"]
        jpath = os.path.join(tmp, "r.json")
        run(base + ["--resistant", "--format", "json", "-o", jpath])
        doc = json.load(open(jpath))
        terms = doc["responses"][0]["terms"]
        rows = list(csv.DictReader(io.StringIO(run(base + ["--resistant", "--format", "csv"]))))
        header = list(rows[0].keys())
        for want in ("rows_to_change", "sens_direction", "sens_rows", "sens_lines",
                     "p_without", "p_perm_without", "rs_statistic", "rs_p_perm",
                     "rs_p_perm_lo", "rs_p_perm_hi", "rs_scale"):
            report(want in header, "CSV header has %s" % want)
        bad = []
        for t, row in zip(terms, rows):
            sv, rs = t["sensitivity"], t["resistant"]
            pairs = [("rows_to_change", sv["rows_to_change"]),
                     ("sens_direction", sv["direction"]),
                     ("sens_rows", ";".join(str(x["row"]) for x in sv["rows"]) or None),
                     ("sens_lines", ";".join(str(x["line"]) for x in sv["rows"]) or None),
                     ("p_without", sv["p_without"]), ("p_perm_without", sv["p_perm_without"]),
                     ("rs_statistic", rs["statistic"]), ("rs_p_perm", rs["p_perm"]),
                     ("rs_p_perm_lo", rs["p_perm_ci"][0]), ("rs_p_perm_hi", rs["p_perm_ci"][1]),
                     ("rs_scale", rs["scale"])]
            for key, val in pairs:
                if isinstance(val, int) and not isinstance(val, bool):
                    val = str(val)
                if not same(row[key], val):
                    bad.append("%s %s: CSV %r, JSON %r" % (t["term"], key, row[key], val))
        report(not bad and len(rows) == len(terms) + 2,
               "CSV sensitivity and resistant columns equal the JSON for %d terms %s"
               % (len(terms), bad[:3]))
        report(all(len(r) == len(header) and None not in r.values() for r in rows[-2:]),
               "CSV residual and total rows keep the header's %d columns" % len(header))
        back = readback(jpath)
        bad = []
        for t in terms:
            sv, rs = t["sensitivity"], t["resistant"]
            got = back[(0, t["term"])]
            want = [sv["rows_to_change"], sv["p_without"], sv["p_perm_without"],
                    rs["statistic"], rs["p_perm"]]
            if not all(bits(g, w) for g, w in zip(got, want)):
                bad.append("%s: %r vs %r" % (t["term"], got, want))
        report(not bad and len(back) == len(terms),
               "read back: the accessors give the JSON's sensitivity and resistant numbers bit "
               "for bit (%d terms) %s" % (len(terms), bad[:2]))
        plain = os.path.join(tmp, "plain.json")
        run(base + ["--format", "json", "-o", plain])
        back = readback(plain)
        report(all(math.isnan(v[3]) and math.isnan(v[4]) for v in back.values()) and
               any(not math.isnan(v[2]) for v in back.values()),
               "read back without --resistant: resistant NaN, p_perm_without kept")
        # family-wise summary
        fam = doc["family"]
        a = doc["settings"]["alpha"]
        cnt = {"terms": sum(t["p_perm"] is not None for t in terms),
               "significant_perm": sum(t["p_perm"] is not None and t["p_perm"] <= a
                                       for t in terms),
               "significant_f": sum(t["p_perm"] is not None and t["p"] <= a for t in terms),
               "significant_fwer": sum(t["p_perm_fwer"] is not None and t["p_perm_fwer"] <= a
                                       for t in terms),
               "significant_holm": sum(t["p_perm_holm"] is not None and t["p_perm_holm"] <= a
                                       for t in terms)}
        report(all(fam[k] == v for k, v in cnt.items()) and fam["verdict_uses"] == "per-term",
               "JSON family %s equals the terms' counts %s" % (fam, cnt))
        demo = run(["demo"])
        head = " ".join(demo.split("In short", 1)[1].split("The run", 1)[0].split())
        ddoc = json.loads(run(["demo", "--format", "json"]))
        df = ddoc["family"]
        want = "over all %d tested terms, %d of the %d significant by resampling stay" % (
            df["terms"], df["significant_fwer"], df["significant_perm"])
        report(want in head and "These verdicts test each term on its own" in head,
               "demo headline: %r" % want)
        big = os.path.join(tmp, "strong.csv")
        rng = np.random.default_rng(5)
        with open(big, "w") as f:
            f.write("a,b,y\n")
            for i in range(36):
                f.write("a%d,b%d,%.4f\n" % (i % 3, (i // 3) % 2, 2.0 * (i % 3) + rng.normal()))
        sdoc = json.loads(run(["check", big, "-y", "y", "-f", "a,b", "-B", "999", "--bootstrap",
                               "0", "--format", "json"]))
        stext = run(["check", big, "-y", "y", "-f", "a,b", "-B", "999", "--bootstrap", "0"])
        shead = " ".join(stext.split("In short", 1)[1].split("The run", 1)[0].split())
        names = [t["term"] for t in sdoc["responses"][0]["terms"]
                 if t["p_perm_fwer"] is not None and t["p_perm_fwer"] <= 0.05]
        report(names == ["a"] and "stays significant (Westfall–Young; Holm: 1): a." in shead,
               "a strong main effect: the headline names the one term that stays significant "
               "family-wise (%s): %r" % (names, shead[-200:]))
    finish()


if __name__ == "__main__":
    main()
