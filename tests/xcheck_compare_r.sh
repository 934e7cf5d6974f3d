#!/usr/bin/env bash
# xcheck_compare_r.sh — sturdy's pairwise comparisons (responses[].comparisons[],
# Tukey–Kramer) against base R's TukeyHSD(aov(...)), computed live.
#
# R invents four datasets (set.seed): one-way balanced, one-way unbalanced (the
# Tukey–Kramer case), two-way balanced (main effects and the A:B cells), and a two-way
# balanced set with 4 and 3 levels (k = 12 cells; at k = 20, df = 40 R's ptukey was
# measured 2–3e-8 away from both sturdy and scipy, which agree to 1e-15, so larger k is
# checked against scipy in xcheck_compare.py). Two-way unbalanced: TukeyHSD compares the
# means of the sequential projections (model.tables), which are least-squares means
# exactly when the cell counts are proportional (n_ij = n_i· n_·j / n) and the model is
# additive (y ~ A + B; sturdy --order 1): the projections are then orthogonal and the
# equal-weight and count-weighted averages over the other factor differ by a constant
# common to all levels. Two such sets are checked (3 × 2 with counts 2:3:4 × 1:2, and
# 4 × 3 with counts 1:2:1:3 × 2:1:3), each with both factors' families. With an
# interaction, or counts not proportional, TukeyHSD's means are not least-squares
# means and R does not define sturdy's quantity; those are checked against statsmodels
# in xcheck_compare.py. For each row R reports diff, the adjusted p ("p adj",
# ptukey) and the interval. R's qtukey is accurate only to about 4 decimals (R's
# documentation), so the interval is rebuilt from R's own numbers with a precise
# quantile: half-width = (upr − diff) / qtukey(conf, k, df) × q*, where q* solves
# ptukey(q*, k, df) = conf by uniroot to 1e-14. Checks (source on every line):
# estimate relative 1e-10; p adjusted and interval ends absolute 1e-8. For the A:B rows
# only the simple effects (pairs that share one factor's level) are sturdy's family;
# their k is the number of cells, as in TukeyHSD. One line per check, "N passed, N
# failed" last, exit 1 on any failure. A missing Rscript or python3 is a failure.
set -u
cd "$(dirname "$0")/.."
BIN="${STURDY_BIN:-./sturdy}"
PY=/usr/bin/python3

give_up() {
    echo "FAIL $1"
    echo "0 passed, 1 failed"
    exit 1
}

command -v Rscript >/dev/null 2>&1 || give_up "Rscript not found: install r-base-core (source: base R TukeyHSD)"
[ -x "$PY" ] || give_up "$PY not found: install python3"
[ -x "$BIN" ] || give_up "binary $BIN not built (make sturdy)"

work=$(mktemp -d) || give_up "mktemp failed"
trap 'rm -rf "$work"' EXIT

cat >"$work/ref.R" <<'RSCRIPT'
args <- commandArgs(trailingOnly = TRUE)
dir <- args[1]
set.seed(20261202)
qstar <- function(conf, k, df)
    uniroot(function(q) ptukey(q, k, df) - conf, c(0.5, 50), tol = 1e-14)$root
emit <- function(name, d, factors, conf = 0.95, op = "*") {
    write.csv(d, file.path(dir, paste0(name, ".csv")), row.names = FALSE)
    d <- read.csv(file.path(dir, paste0(name, ".csv")), stringsAsFactors = TRUE)
    f <- as.formula(paste("y ~", paste(factors, collapse = op)))
    fit <- aov(f, data = d)
    tk <- TukeyHSD(fit, conf.level = conf)
    out <- NULL
    for (term in names(tk)) {
        tab <- tk[[term]]
        k <- if (grepl(":", term)) prod(sapply(strsplit(term, ":")[[1]],
                                               function(v) nlevels(d[[v]])))
             else nlevels(d[[term]])
        df <- fit$df.residual
        qs <- qstar(conf, k, df)
        qr <- qtukey(conf, k, df)
        half <- (tab[, "upr"] - tab[, "diff"]) / qr * qs
        out <- rbind(out, data.frame(data = name, term = term, pair = rownames(tab),
                                     diff = tab[, "diff"], lo = tab[, "diff"] - half,
                                     hi = tab[, "diff"] + half, padj = tab[, "p adj"],
                                     k = k, df = df))
    }
    out
}
mk <- function(lv, n, shift) {
    g <- expand.grid(lapply(lv, function(l) l))
    rows <- g[rep(seq_len(nrow(g)), n), , drop = FALSE]
    rows$y <- round(20 + shift(rows) + rexp(nrow(rows), 0.5), 3)
    rows
}
res <- NULL
d1 <- mk(list(A = c("a1", "a2", "a3", "a4")), 5, function(r) 1.5 * as.integer(factor(r$A)))
res <- rbind(res, emit("oneway_bal", d1, "A"))
d2 <- d1[-c(2, 3, 7, 12, 16), , drop = FALSE]
d2$y[1:4] <- d2$y[1:4] + 3
res <- rbind(res, emit("oneway_unbal", d2, "A"))
d3 <- mk(list(A = c("a1", "a2", "a3"), B = c("b1", "b2")), 4,
         function(r) 2 * (r$A == "a3") + (r$B == "b2") * (r$A == "a1"))
res <- rbind(res, emit("twoway_bal", d3, c("A", "B")))
d4 <- mk(list(A = c("p", "q", "r", "s"), B = c("u", "v", "w")), 3,
         function(r) 0.8 * as.integer(factor(r$A)) - (r$B == "w"))
res <- rbind(res, emit("twoway_bal2", d4, c("A", "B")))
prop <- function(lv, ca, cb, shift) {
    g <- expand.grid(lapply(lv, function(l) l))
    cnt <- as.vector(outer(ca, cb))            # expand.grid: A fastest
    rows <- g[rep(seq_len(nrow(g)), cnt), , drop = FALSE]
    rows$y <- round(20 + shift(rows) + rexp(nrow(rows), 0.5), 3)
    rows
}
d5 <- prop(list(A = c("a1", "a2", "a3"), B = c("b1", "b2")), c(2, 3, 4), c(1, 2),
           function(r) 1.2 * (r$A == "a2") - 0.7 * (r$B == "b2") + (r$A == "a3") * (r$B == "b2"))
res <- rbind(res, emit("twoway_prop_additive", d5, c("A", "B"), op = "+"))
d6 <- prop(list(A = c("p", "q", "r", "s"), B = c("u", "v", "w")), c(1, 2, 1, 3), c(2, 1, 3),
           function(r) 0.6 * as.integer(factor(r$A)) + 0.9 * (r$B == "v"))
res <- rbind(res, emit("twoway_prop_additive2", d6, c("A", "B"), op = "+"))
write.csv(res, file.path(dir, "tukey.csv"), row.names = FALSE)
RSCRIPT

Rscript "$work/ref.R" "$work" >"$work/r.log" 2>&1 ||
    give_up "Rscript failed: $(tail -3 "$work/r.log")"

"$PY" - "$work" "$BIN" <<'PYEOF'
import csv, json, os, subprocess, sys
work, binary = sys.argv[1], sys.argv[2]
npass = nfail = 0
def check(ok, text):
    global npass, nfail
    if ok: npass += 1
    else: nfail += 1
    print(("ok   " if ok else "FAIL ") + text)
rows = list(csv.DictReader(open(os.path.join(work, "tukey.csv"))))
cache = {}
for r in rows:
    name = r["data"]
    if name not in cache:
        factors = ["A"] if name.startswith("oneway") else ["A", "B"]
        extra = ["--order", "1"] if "additive" in name else []
        out = subprocess.run([binary, "check", os.path.join(work, name + ".csv"), "-y", "y",
                              "-f", ",".join(factors), "-B", "0", "--bootstrap", "0",
                              "--format", "json", "--compare", "all"] + extra,
                             capture_output=True, text=True)
        if out.returncode:
            check(False, "sturdy on %s exited %d: %s" % (name, out.returncode, out.stderr))
            cache[name] = []
            continue
        cache[name] = json.loads(out.stdout)["responses"][0]["comparisons"]
    comps = cache[name]
    later, earlier = r["pair"].split("-")
    if r["term"] == "A:B":
        (a1, b1), (a0, b0) = later.split(":"), earlier.split(":")
        if a1 == a0:
            key = ("B", b1, b0, {"A": a1})
        elif b1 == b0:
            key = ("A", a1, a0, {"B": b1})
        else:
            continue          # not a simple effect: outside sturdy's family
        term = "A×B"
    else:
        key = (r["term"], later, earlier, None)
        term = r["term"]
    match = [c for c in comps if c["term"] == term and c["factor"] == key[0]
             and c["level"] == key[1] and c["versus"] == key[2] and c["within"] == key[3]]
    label = "%s %s %s" % (name, r["term"], r["pair"])
    if len(match) != 1:
        check(False, "%s: %d matching comparisons in sturdy's output" % (label, len(match)))
        continue
    c = match[0]
    src = "R TukeyHSD k=%s df=%s" % (r["k"], r["df"])
    for what, obs, exp, tol, rel in (("estimate", c["estimate"], float(r["diff"]), 1e-10, True),
                                     ("p_adjusted", c["p_adjusted"], float(r["padj"]), 1e-8, False),
                                     ("ci_simultaneous lo", c["ci_simultaneous"][0], float(r["lo"]), 1e-8, False),
                                     ("ci_simultaneous hi", c["ci_simultaneous"][1], float(r["hi"]), 1e-8, False)):
        err = abs(obs - exp)
        ok = err <= (tol * max(abs(exp), 1e-300) if rel else tol)
        check(ok, "%s %s: observed %.17g expected %.17g %s tol %.0e [%s%s]"
              % (label, what, obs, exp, "rel" if rel else "abs", tol, src,
                 "; interval with the precise quantile" if "ci" in what else ""))
print("%d passed, %d failed" % (npass, nfail))
sys.exit(1 if nfail else 0)
PYEOF
