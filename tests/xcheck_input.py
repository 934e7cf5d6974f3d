"""What a new user's first files trip over: level order, near-duplicate levels, names
with blanks, missing tokens, plan columns named by prefixes, rounding noise in the text
report, and CSV for spreadsheets. Crafted files in tests/data/input/ (README.md there).

References, each named at its check:
  - Python's own sorted() with a digit-run key (re.split) for the natural level order;
  - invariances that hold whatever the code: Type III sums of squares do not depend on
    the order of the levels; merging '60.0' into '60' equals rewriting the file;
    '-f a, b' equals '-f a,b'; a plan row equals the `check` it stands for;
  - Python's repr(float), the shortest text that reads back to the same double, for
    the CSV numbers; the JSON value beside the text report for rounding noise.
"""
import csv
import io
import json
import os
import re
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from harness import finish, report  # noqa: E402

BIN = os.environ.get("STURDY_BIN", "./sturdy")
DATA = os.path.join(os.path.dirname(os.path.abspath(__file__)), "data", "input")
NITROGEN = os.path.join(DATA, "nitrogen.csv")
ADHESION = os.path.join(DATA, "adhesion.csv")
QUICK = ["-B", "99", "--bootstrap", "0", "--quiet"]


def run(args, binary=True):
    p = subprocess.run([BIN] + args, capture_output=True, timeout=120)
    out = p.stdout if binary else p.stdout.decode("utf-8")
    # stderr on one line, so that it can be quoted in a check's line
    return p.returncode, out, " | ".join(p.stderr.decode("utf-8", "replace").split("\n"))


def check_json(args):
    """Runs check as JSON. Exit 4 (no requested term could be tested: the crafted files
    with split levels or no residual df) still writes the whole result (README, exit
    codes), so its JSON is read too."""
    rc, out, err = run(args + ["--format", "json"])
    return rc, (json.loads(out) if rc in (0, 4) and out else None), err


def natural_key(s):
    return [int(t) if t.isdigit() else t for t in re.split(r"(\d+)", s)]


def levels(doc, factor):
    return [f["levels"] for f in doc["design"]["factors"] if f["name"] == factor][0]


def terms_ss(doc):
    return {t["term"]: t["ss"] for t in doc["responses"][0]["terms"]}


def close(a, b, tol=1e-9):
    return set(a) == set(b) and all(
        a[k] is not None and b[k] is not None and abs(a[k] - b[k]) <= tol * max(1, abs(b[k]))
        for k in a)


def test_level_order():
    nit = ["check", NITROGEN, "-y", "dry_mass_g", "-f", "variety,nitrogen"] + QUICK
    rc, d, err = check_json(nit)
    got = levels(d, "nitrogen") if d else None
    want = sorted(["N120", "N0", "N80", "N40"], key=natural_key)
    report(got == want, "item 1: levels %s, as Python's sorted() with a digit-run key "
           "gives %s" % (got, want))
    rc2, d2, err2 = check_json(nit + ["--levels", "nitrogen=N120, N80,N40,N0"])
    got2 = levels(d2, "nitrogen") if d2 else err2
    report(got2 == ["N120", "N80", "N40", "N0"], "item 1: --levels sets the order: %s" % got2)
    report(d and d2 and close(terms_ss(d), terms_ss(d2)),
           "item 1: Type III SS do not depend on the level order (invariance)")
    # the library names the setting in words; the CLI's message adds the option (hints.c)
    for bad, frag in (("nitrogen=N0,N40,N80", "leaves out 'N120'"),
                      ("nitrogen=N0,N40,N80,N120,N160", "'N160' is not a level"),
                      ("colour=a,b", "'colour', which is not a factor (-f)"),
                      ("nitrogen=N0,N0,N40,N80,N120", "lists 'N0' twice"),
                      ("nitrogen", "--levels wants FACTOR=LEVEL")):
        rc, out, err = run(nit + ["--levels", bad])
        report(rc == 2 and frag in err and "--levels" in err and not out,
               "item 1: --levels %s → exit %d (want 2), message has %r: %s"
               % (bad, rc, frag, err.strip()[:160]))


def test_near_duplicates():
    adh = ["check", ADHESION, "-y", "pull_off_MPa", "-f", "primer,cure_C"] + QUICK
    rc, d, err = check_json(adh)
    notes = d["notes"] if d else []
    for frag in ("factor 'cure_C' has levels that are equal as numbers, yet count as "
                 "different levels: '60' and '60.0'; if they are the same, merge levels "
                 "equal as numbers or correct the data",
                 "factor 'primer' has levels that differ only in letter case, yet count "
                 "as different levels: 'Epoxy' and 'epoxy'",
                 "factor 'primer' has levels that differ only in surrounding spaces, yet "
                 "count as different levels: ' urethane' and 'urethane'"):
        report(any(frag in n for n in notes), "item 2: JSON notes warn: %s…" % frag[:60])
    rc, text, err = run(adh)
    text = text.decode("utf-8")
    text = " ".join(text.split())            # undo the wrapping of paragraphs
    head = text.split("The run")[0]
    tail = text.split("The run")[-1]
    report("In short" in head and "'60' and '60.0'" in head and "'Epoxy' and 'epoxy'" in head,
           "item 2: the text report shows the warnings under 'In short', before 'The run'")
    report("'60' and '60.0'" not in tail, "item 2: … and does not repeat them in the notes")
    # merging: the same as rewriting the file with '60' for '60.0'
    rc, dm, err = check_json(adh + ["--merge-numeric-levels"])
    report(dm is not None and levels(dm, "cure_C") == ["60", "80"],
           "item 2: --merge-numeric-levels: cure_C levels %s (want ['60', '80'])"
           % (levels(dm, "cure_C") if dm else err.strip()))
    report(dm is not None and any("were merged" in n or "was merged" in n for n in dm["notes"]),
           "item 2: a note says the levels were merged")
    with tempfile.TemporaryDirectory() as tmp:
        fixed = os.path.join(tmp, "adhesion.csv")
        with open(ADHESION) as f:
            body = f.read().replace(",60.0,", ",60,")
        with open(fixed, "w") as f:
            f.write(body)
        rc, dr, err = check_json(["check", fixed, "-y", "pull_off_MPa", "-f",
                                  "primer,cure_C"] + QUICK)
        same = dm is not None and dr is not None and dm["responses"] == dr["responses"]
        report(same, "item 2: merged result = the result of the file with 60.0 rewritten as 60")


def test_name_lists():
    base = ["check", NITROGEN] + QUICK
    rc1, a, _ = run(base + ["-y", "dry_mass_g", "-f", "variety,nitrogen", "--format", "json"])
    rc2, b, err = run(base + ["-y", " dry_mass_g ", "-f", "variety, nitrogen",
                              "--covariates", " bench", "--format", "json"])
    rc3, c, _ = run(base + ["-y", "dry_mass_g", "-f", "variety,nitrogen", "--covariates",
                            "bench", "--format", "json"])
    report(rc2 == 0 and a and b and rc3 == 0 and b == c,
           "item 3: '-f variety, nitrogen' and blanks around -y/--covariates names work "
           "(exit %d; %s)" % (rc2, err.strip()[:120]))
    rc, out, err = run(base + ["-y", "dry_mass_g", "-f", "variety, "])
    report(rc == 2 and "empty name" in err, "item 3: '-f variety, ' is an empty name (exit %d)"
           % rc)


def test_unknown_column():
    rc, out, err = run(["check", ADHESION, "-y", "pull_off_mpa", "-f", "primer,cure_C"] + QUICK)
    report(rc == 2 and "did you mean 'pull_off_MPa'?" in err and
           "The file's columns: panel, primer, cure_C, pull_off_MPa" in err,
           "item 4: pull_off_mpa → suggests pull_off_MPa and lists the columns: %s"
           % err.strip()[:200])
    rc, out, err = run(["check", ADHESION, "-y", "strength", "-f", "primer,cure_C"] + QUICK)
    report(rc == 2 and "did you mean" not in err and "The file's columns:" in err,
           "item 4: nothing close → no suggestion, the columns listed")


def test_missing_tokens():
    f = os.path.join(DATA, "missing_tokens.csv")
    m = ["check", f, "-y", "yield", "-f", "variety,dose"] + QUICK
    rc, out, err = run(m)
    report(rc == 3 and "'n/a' is not a number" in err and
           "declare 'n/a' a missing-value token (--missing)" in err,
           "item 9: 'n/a' without --missing → exit %d, hint at --missing: %s"
           % (rc, err.strip()[:160]))
    rc, d, err = check_json(m + ["--missing", "n/a"])
    report(d is not None and d["input"]["rows_used"] == 9,
           "item 9: --missing n/a adds to the defaults: NA, n/a and the empty field dropped "
           "(rows used %s, want 9)" % (d["input"]["rows_used"] if d else err.strip()))
    rc, out, err = run(m + ["--missing-only", "n/a"])
    report(rc == 3 and "line 3 (row 2), column 'yield': 'NA' is not a number" in err,
           "item 9: --missing-only n/a replaces the defaults: NA is then an error (exit %d)"
           % rc)
    rc, d, err = check_json(m + ["--missing-only", "n/a,NA,"])
    report(d is not None and d["input"]["rows_used"] == 9,
           "item 9: --missing-only n/a,NA, (empty field listed) drops the three rows")


def test_alpha_example():
    rc, out, err = run(["check", NITROGEN, "-y", "dry_mass_g", "-f", "variety", "--alpha",
                        "0.95x"] + QUICK)
    report(rc == 2 and "(e.g. 0.05)" in err, "item 7: --alpha's example is an alpha: %s"
           % err.strip().split("\n")[0])


def sig_digits(s):
    mant = s.lower().split("e")[0].lstrip("+-").replace(".", "")
    return len(mant.strip("0")) or 1


def test_numbers():
    # rounding noise: the JSON holds the computed value, the text prints 0
    sat = os.path.join(DATA, "saturated.csv")
    rc, d, err = check_json(["check", sat, "-y", "y", "-f", "a,b"] + QUICK)
    ss = d["responses"][0]["error"]["ss"] if d else None
    total = d["responses"][0]["total"]["ss"] if d else None
    report(ss is not None and 0 < abs(ss) < 1e-10 * total,
           "item 13: saturated.csv: the residual SS is rounding noise in the JSON (%r)" % ss)
    rc, text, err = run(["check", sat, "-y", "y", "-f", "a,b"] + QUICK)
    row = [ln for ln in text.decode().split("\n") if ln.strip().startswith("residual ")]
    report(bool(row) and row[0].split()[:3] == ["residual", "0", "0"],
           "item 13: … and the text prints it as 0: %r" % (row[0] if row else None))
    sym = os.path.join(DATA, "symmetric.csv")
    rc, d, err = check_json(["check", sym, "-y", "y", "-f", "a,b"] + QUICK)
    sk = d["responses"][0]["diagnostics"]["skewness"] if d else None
    report(sk is not None and 0 < abs(sk) < 1e-10,
           "item 13: symmetric.csv: skewness is rounding noise in the JSON (%r)" % sk)
    rc, text, err = run(["check", sym, "-y", "y", "-f", "a,b"] + QUICK)
    report("skewness 0," in text.decode(), "item 13: … and the text prints 'skewness 0'")
    # CSV numbers: the shortest text that reads back to the same double (Python's repr)
    rc, out, err = run(["demo", "-B", "199", "--bootstrap", "200", "--format", "csv",
                        "--quiet"])
    rows = list(csv.reader(io.StringIO(out.decode("utf-8"))))
    bad, n = [], 0
    for r in rows[1:]:
        for x in r[2:]:
            try:
                v = float(x)
            except ValueError:
                continue
            n += 1
            if float(x) != v or sig_digits(x) != sig_digits(repr(v)):
                bad.append((x, repr(v)))
    report(n > 200 and not bad, "item 13: %d CSV numbers have as many digits as Python's "
           "shortest round-trip repr (mismatches: %s)" % (n, bad[:3]))


def test_csv_options():
    args = ["check", NITROGEN, "-y", "dry_mass_g", "-f", "variety,nitrogen"] + QUICK
    rc, plain, _ = run(args + ["--format", "csv"])
    rc, ascii_, err = run(args + ["--format", "csv", "--ascii-terms"])
    terms = [r[1] for r in csv.reader(io.StringIO(ascii_.decode("ascii", "replace")))][1:]
    terms = [t for t in terms if t not in ("residual", "total")]  # the error rows
    report(rc == 0 and terms == ["variety", "nitrogen", "variety_by_nitrogen"] and
           all(b < 128 for b in ascii_),
           "item 18: --ascii-terms: term names %s, every byte ASCII" % terms)
    report("variety×nitrogen" in plain.decode("utf-8") and not plain.startswith(b"\xef\xbb\xbf"),
           "item 18: by default '×' and no byte-order mark")
    rc, bom, err = run(args + ["--format", "csv", "--csv-bom"])
    report(rc == 0 and bom == b"\xef\xbb\xbf" + plain,
           "item 18: --csv-bom: a UTF-8 byte-order mark, then the same bytes")
    rc, out, err = run(args + ["--ascii-terms"])
    report(rc == 2 and "applies to CSV output" in err and not out,
           "item 18: --ascii-terms with text output → exit %d (want 2)" % rc)


def test_plan_prefixes():
    with tempfile.TemporaryDirectory() as tmp:
        plan = os.path.join(tmp, "plan.csv")
        with open(plan, "w") as f:
            f.write("name,data,resp,fac,perm,bootstrap,lev,merge,seed\n")
            f.write('n1,%s,dry_mass_g,"variety, nitrogen",99,0,"nitrogen=N120,N80,N40,N0",'
                    'yes,7\n' % NITROGEN)
        rc, out, err = run(["batch", plan, "-o", os.path.join(tmp, "res"), "--quiet"])
        got = open(os.path.join(tmp, "res", "n1.json"), "rb").read() if rc == 0 else b""
        rc2, want, err2 = run(["check", NITROGEN, "--response", "dry_mass_g", "--factors",
                               "variety,nitrogen", "--permutations", "99", "--bootstrap", "0",
                               "--levels", "nitrogen=N120,N80,N40,N0",
                               "--merge-numeric-levels", "--seed", "7", "--format", "json",
                               "--quiet"])
        report(rc == 0 and got == want,
               "item 8: plan columns by unique prefix (resp, fac, perm, lev, merge) give "
               "the bytes of the spelled-out check (exit %d; %s)" % (rc, err.strip()[:160]))
        rc, out, err = run(["check", NITROGEN, "--resp", "dry_mass_g", "--fac",
                            "variety,nitrogen", "--perm", "99", "--bootstrap", "0", "--lev",
                            "nitrogen=N120,N80,N40,N0", "--merge", "--seed", "7",
                            "--format", "json", "--quiet"])
        report(rc == 0 and out == want, "item 8: the same prefixes on the command line")
        for col, frag in (("m", "start of several option names"),
                          ("thr", "'threads' is an option of the whole batch"),
                          ("colour", "unknown column")):
            with open(plan, "w") as f:
                f.write("name,data,response,factors,%s\n" % col)
                f.write("n1,%s,dry_mass_g,variety,1\n" % NITROGEN)
            rc, out, err = run(["batch", plan, "-o", os.path.join(tmp, "res2"), "--quiet"])
            report(rc == 3 and frag in err, "item 8: plan column %r → exit %d (want 3), %r"
                   % (col, rc, err.strip().split("\n")[0][:160]))
        rc, out, err = run(["check", NITROGEN, "-y", "dry_mass_g", "-f", "variety", "--m", "x"])
        report(rc == 2 and "ambiguous" in err, "item 8: '--m' is ambiguous on the command "
               "line too (exit %d)" % rc)


def main():
    test_level_order()
    test_near_duplicates()
    test_name_lists()
    test_unknown_column()
    test_missing_tokens()
    test_alpha_example()
    test_numbers()
    test_csv_options()
    test_plan_prefixes()
    finish()


if __name__ == "__main__":
    main()
