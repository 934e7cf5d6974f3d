#!/usr/bin/env bash
# xcheck_anova_r.sh — sturdy's classical ANOVA table against base R, computed live:
# Type I from anova(lm(...)) with the terms written in sturdy's order, Type III from
# drop1(lm(..., contrasts = contr.sum for every factor), scope = . ~ ., test = "F")
# (the scope makes drop1 drop every term, not only the marginal ones).
#
# R invents the datasets itself (set.seed; unbalanced cold-brew coffee trials with 2, 3
# and 4 factors, one with a numeric covariate, one with a block), writes them as CSV,
# reads them back (so that R and sturdy see the same text) and writes its tables with
# 17 significant digits. Base R's `npk` data (a 2^3 trial in 6 blocks with N:P:K
# confounded with blocks) is exported with write.csv and checked the same way: N×P×K must
# have 0 df, no F and a note naming the block, and Type III must test the block on its 4
# estimable df as drop1 does. A Python step (/usr/bin/python3) runs sturdy on each file
# with -B 0 --bootstrap 0 --format json and compares every term's df (exact), SS, F
# and p, and the residual df and SS, to relative 1e-8 (SS: plus 1e-13·SST absolute,
# the rounding level of sums of squares). One line per check, "N passed, N failed"
# last, exit 1 on any failure. A missing Rscript or python3 is a failure, not a skip.
set -u
cd "$(dirname "$0")/.."
BIN="${STURDY_BIN:-./sturdy}"
PY=/usr/bin/python3

give_up() {
    echo "FAIL $1"
    echo "0 passed, 1 failed"
    exit 1
}

command -v Rscript >/dev/null 2>&1 || give_up "Rscript not found: install r-base-core (source: base R anova/drop1)"
[ -x "$PY" ] || give_up "$PY not found: install python3"
[ -x "$BIN" ] || give_up "binary $BIN not built (make sturdy)"

work=$(mktemp -d) || give_up "mktemp failed"
trap 'rm -rf "$work"' EXIT

cat >"$work/ref.R" <<'RSCRIPT'
# Invents the datasets, writes them, and writes base R's Type I and Type III tables.
args <- commandArgs(trailingOnly = TRUE)
dir <- args[1]
specs <- list()
out <- character()
fmt <- function(v) ifelse(is.na(v), "NA", sprintf("%.17g", v))

make <- function(name, seed, levels, resp, cov = NULL, block = NULL, order = NULL) {
  set.seed(seed)
  grid <- expand.grid(levels, stringsAsFactors = FALSE)
  counts <- sample(2:6, nrow(grid), replace = TRUE)        # unbalanced, no empty cell
  d <- grid[rep(seq_len(nrow(grid)), counts), , drop = FALSE]
  d <- d[sample(nrow(d)), , drop = FALSE]                 # file order is not cell order
  n <- nrow(d); nf <- length(levels)
  y <- 30 + rnorm(n, 0, 1.5)
  for (k in 1:nf) for (combo in combn(nf, k, simplify = FALSE)) {
    key <- do.call(paste, c(unname(as.list(d[combo])), sep = "|"))
    u <- unique(key)
    y <- y + setNames(rnorm(length(u), 0, 2 / k), u)[key]
  }
  if (!is.null(cov)) {                                    # correlated with factor 1
    x <- round(rnorm(n, 20, 4) + 2 * as.integer(factor(d[[1]])), 2)
    d[[cov]] <- x
    y <- y + 0.6 * x
  }
  if (!is.null(block)) {
    b <- sample(paste0("day", 1:3), n, replace = TRUE)
    d[[block]] <- b
    y <- y + setNames(rnorm(3, 0, 2), paste0("day", 1:3))[b]
  }
  d[[resp]] <- round(unname(y), 4)
  file <- file.path(dir, paste0(name, ".csv"))
  write.csv(d, file, row.names = FALSE, quote = FALSE)
  tables(name, file, names(levels), resp, cov, block, order)
}

# Base R's Type I and III tables of the CSV file `file` (terms in sturdy's order).
# `order` (sturdy's --term-order, labels with ":"): these terms first, then the others;
# keep.order makes lm fit them in exactly that sequence.
tables <- function(name, file, f, resp, cov = NULL, block = NULL, order = NULL) {
  # read back the text sturdy reads; factors (and the block) as factors
  fac <- c(f, block)
  nf <- length(f)
  d <- read.csv(file, colClasses = "character")
  for (v in fac) d[[v]] <- factor(d[[v]])
  for (v in c(cov, resp)) d[[v]] <- as.numeric(d[[v]])

  # terms in sturdy's order: block, covariates, main effects, then 2-way (lexicographic
  # factor index lists), 3-way, ...
  terms <- c(block, cov)
  for (k in 1:nf) for (combo in combn(nf, k, simplify = FALSE))
    terms <- c(terms, paste(f[combo], collapse = ":"))
  if (!is.null(order)) {
    nuis <- setdiff(c(block, cov), order)
    terms <- c(nuis, order, setdiff(terms, c(nuis, order)))
  }
  form <- as.formula(paste(resp, "~", paste(terms, collapse = " + ")))
  fit1 <- lm(terms(form, keep.order = TRUE), data = d)
  a <- anova(fit1)
  rn <- trimws(rownames(a))
  for (i in seq_len(nrow(a))) {
    term <- if (rn[i] == "Residuals") "(residual)" else rn[i]
    out <<- c(out, paste(name, 1, term, fmt(a$Df[i]), fmt(a[["Sum Sq"]][i]),
                         fmt(a[["F value"]][i]), fmt(a[["Pr(>F)"]][i]), sep = "\t"))
  }
  ctr <- setNames(rep(list("contr.sum"), length(fac)), fac)
  fit3 <- lm(form, data = d, contrasts = ctr)
  dr <- drop1(fit3, scope = . ~ ., test = "F")
  rn <- trimws(rownames(dr))
  for (i in seq_len(nrow(dr))) {
    if (rn[i] == "<none>") next
    out <<- c(out, paste(name, 3, rn[i], fmt(dr$Df[i]), fmt(dr[["Sum of Sq"]][i]),
                         fmt(dr[["F value"]][i]), fmt(dr[["Pr(>F)"]][i]), sep = "\t"))
  }
  out <<- c(out, paste(name, 3, "(residual)", fmt(fit3$df.residual),
                       fmt(sum(residuals(fit3)^2)), "NA", "NA", sep = "\t"))
  out <<- c(out, paste(name, 0, "(total)", fmt(nrow(d) - 1),
                       fmt(sum((d[[resp]] - mean(d[[resp]]))^2)), "NA", "NA", sep = "\t"))
  specs[[length(specs) + 1]] <<- paste(name, resp, paste(f, collapse = ","),
                                       if (is.null(cov)) "-" else cov,
                                       if (is.null(block)) "-" else block,
                                       paste(gsub(":", "\u00d7", terms), collapse = ","),
                                       if (is.null(order)) "-"
                                       else paste(gsub(":", "\u00d7", order), collapse = ","),
                                       sep = "\t")
}

grind <- c("coarse", "medium", "fine")
make("brew2", 11, list(roast = c("light", "medium", "dark", "french"),
                       filter = c("paper", "metal")), "tds")
make("brew3", 12, list(grind = grind, water = c("soft", "hard"),
                       steep = c("h12", "h16", "h20")), "tds")
make("brew4", 13, list(bean = c("arabica", "robusta"), grind = c("coarse", "fine"),
                       steep = c("h12", "h16", "h20"), vessel = c("glass", "steel")), "tds")
# the same unbalanced four-factor trial, Type I in an order of the user's choosing
make("brew4order", 13, list(bean = c("arabica", "robusta"), grind = c("coarse", "fine"),
                            steep = c("h12", "h16", "h20"), vessel = c("glass", "steel")),
     "tds", order = c("vessel", "steep", "grind", "bean", "steep:vessel", "bean:grind"))
make("brewcov", 14, list(grind = grind, roast = c("light", "dark")), "tds",
     cov = "dose")
make("brewblock", 15, list(grind = grind, steep = c("h12", "h16", "h20")), "tds",
     block = "day")
# A 2^3 field trial in 6 blocks of 4 plots, N×P×K confounded with blocks: base R's own
# `npk` data set, exported as it is. Type I: N×P×K is aliased (absent from anova());
# Type III: drop1 tests the block on its 4 estimable df and N×P×K on 0.
write.csv(npk, file.path(dir, "npk.csv"), row.names = FALSE)
tables("npk", file.path(dir, "npk.csv"), c("N", "P", "K"), "yield", block = "block")
writeLines(out, file.path(dir, "ref.tsv"), useBytes = FALSE)
writeLines(unlist(specs), file.path(dir, "specs.tsv"))
RSCRIPT

Rscript "$work/ref.R" "$work" >"$work/r.log" 2>&1 ||
    give_up "Rscript failed (source: base R anova/drop1): $(tail -c 600 "$work/r.log" | tr '\n' ' ')"

"$PY" - "$work" "$BIN" <<'PYTHON'
import json, math, os, subprocess, sys
work, BIN = sys.argv[1], sys.argv[2]
REL = 1e-8
SS_FLOOR = 1e-13   # sums of squares match to ~1e-13·SST at best (double rounding)
res = {"pass": 0, "fail": 0}

def report(ok, text):
    res["pass" if ok else "fail"] += 1
    print(("ok   " if ok else "FAIL ") + text)

def num(s):
    return None if s == "NA" else float(s)

def key(term):
    return term if term.startswith("(") else \
        "\u00d7".join(sorted(term.replace(":", "\u00d7").split("\u00d7")))

ref = {}
for line in open(os.path.join(work, "ref.tsv"), encoding="utf-8"):
    name, ss, term, df, sq, f, p = line.rstrip("\n").split("\t")
    # R names an interaction by its factors in the order they first appear in the
    # formula ("steep:bean" after a custom order): key terms by their set of factors
    ref.setdefault((name, int(ss)), {})[key(term)] = (num(df), num(sq), num(f), num(p))

for line in open(os.path.join(work, "specs.tsv"), encoding="utf-8"):
    name, resp, factors, cov, block, terms, order = line.rstrip("\n").split("\t")
    terms = terms.split(",")
    sst = ref[(name, 0)]["(total)"][1]
    for ss in (1, 3):
        tag = "%s --ss %d" % (name, ss)
        src = "source: base R %s" % ("anova(lm), Type I" if ss == 1 else
                                     "drop1(lm, contr.sum, scope = . ~ ., test = 'F')")
        args = [BIN, "check", os.path.join(work, name + ".csv"), "-y", resp, "-f", factors,
                "-B", "0", "--bootstrap", "0", "--ss", str(ss), "--format", "json"]
        if cov != "-":
            args += ["--covariates", cov]
        if block != "-":
            args += ["--block", block]
        if order != "-":
            args += ["--term-order", order]
        try:
            proc = subprocess.run(args, capture_output=True, text=True, timeout=60)
            out = json.loads(proc.stdout) if proc.returncode == 0 else None
        except (OSError, ValueError, subprocess.TimeoutExpired) as exc:
            proc, out = None, None
        if out is None:
            report(False, "%s: sturdy failed: exit %s %s" % (
                tag, proc and proc.returncode, proc and proc.stderr.strip()[:300]))
            continue
        r = out["responses"][0]
        got = [t["term"] for t in r["terms"]]
        report(got == terms, "%s: term order observed %s expected %s (%s)"
               % (tag, got, terms, src))
        table = ref[(name, ss)]
        checks = [("residual df", r["error"]["df"], table["(residual)"][0], 0, 0),
                  ("residual SS", r["error"]["ss"], table["(residual)"][1], REL,
                   SS_FLOOR * sst),
                  ("total SS", r["total"]["ss"], sst, REL, SS_FLOOR * sst)]
        for t in r["terms"]:
            e = table.get(key(t["term"]))
            if e is None and ss == 1:
                # aliased in R's sequential fit (anova() leaves it out): sturdy must give
                # it 0 df and no F, and name the block as the cause when there is one
                e = (0.0, None, None, None)
            if e is None:
                report(False, "%s %s: no such term in R's table (%s)" % (tag, t["term"], src))
                continue
            if e[0] == 0:
                note = t.get("note") or ""
                report(t["df"] == 0 and t["f"] is None and t["p"] is None,
                       "%s %s: df %r F %r, expected 0 df and no F (%s)"
                       % (tag, t["term"], t["df"], t["f"], src))
                if block != "-":
                    report("confounded with the block '%s'" % block in note,
                           "%s %s: note %r names the block as the cause (source: base R "
                           "alias(lm()) of the design)" % (tag, t["term"], note))
                continue
            checks += [(t["term"] + " df", t["df"], e[0], 0, 0),
                       (t["term"] + " SS", t["ss"], e[1], REL, SS_FLOOR * sst),
                       (t["term"] + " F", t["f"], e[2], REL, 0),
                       (t["term"] + " p", t["p"], e[3], REL, 0)]
        for what, o, x, rel, floor in checks:
            ok = o is not None and x is not None and \
                abs(o - x) <= rel * max(abs(o), abs(x)) + floor
            report(ok, "%s %s: observed %r expected %r tol rel %.0e + abs %.1e (%s)"
                   % (tag, what, o, x, rel, floor, src))
print("%d passed, %d failed" % (res["pass"], res["fail"]))
sys.exit(1 if res["fail"] else 0)
PYTHON
