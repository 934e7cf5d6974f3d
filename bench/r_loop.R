# r_loop.R — baseline: the hand-written base-R loop of refits that sturdy replaces.
# Freedman–Lane (Freedman & Lane 1983), Type III, sum-to-zero coding, every term of the
# full factorial: for each rearrangement and term, y* = fitted_R + e_R[perm], then refit
# the full and the reduced model with lm.fit and form F* from the two residual sums of
# squares. Design matrices are built once (model.matrix, contr.sum). Runs only B' (small)
# rearrangements and scales the loop's time up to B.
#
# usage: Rscript bench/r_loop.R DATA.csv RESPONSE FACTOR,FACTOR,... B B_SMALL
# Prints one JSON line: {"tool", "n", "B", "B_run", "setup_seconds", "loop_seconds",
# "seconds" (setup + loop scaled to B), "terms": [{"term", "f", "exceed", "p_perm"}]}.
# exceed/p_perm are over the B' rearrangements run (too few for accuracy: timing only).
t_start <- proc.time()[["elapsed"]]
args <- commandArgs(trailingOnly = TRUE)
path <- args[1]; response <- args[2]
factors <- strsplit(args[3], ",", fixed = TRUE)[[1]]
B <- as.integer(args[4]); B_run <- as.integer(args[5])
tie_rtol <- 1e-10                      # the exceedance rule's tolerance, as in sturdy

d <- read.csv(path, stringsAsFactors = FALSE)
for (f in factors) d[[f]] <- factor(d[[f]])
y <- d[[response]]
n <- length(y)
contr <- setNames(rep(list("contr.sum"), length(factors)), factors)
X <- model.matrix(as.formula(paste("~", paste(factors, collapse = "*"))), data = d,
                  contrasts.arg = contr)
assign <- attr(X, "assign")
labels <- attr(terms(as.formula(paste("~", paste(factors, collapse = "*")))), "term.labels")
# order terms as sturdy does: by order, then lexicographically by factor index
idx <- lapply(strsplit(labels, ":", fixed = TRUE), function(v) match(v, factors))
key <- vapply(idx, function(v) sprintf("%02d%s", length(v),
                                       paste(sprintf("%02d", v), collapse = "")), "")
ord <- order(key)

p <- ncol(X); dfe <- n - p
rss <- function(Xm, v) sum(lm.fit(Xm, v)$residuals^2)
setup <- lapply(seq_along(labels), function(t) {
    Xr <- X[, assign != t, drop = FALSE]
    fr <- lm.fit(Xr, y)
    df <- p - ncol(Xr)
    f_obs <- ((rss(Xr, y) - rss(X, y)) / df) / (rss(X, y) / dfe)
    list(Xr = Xr, fit = fr$fitted.values, e = fr$residuals, df = df, f = f_obs)
})
set.seed(12345)
count <- integer(length(labels))
t_loop <- proc.time()[["elapsed"]]
for (b in seq_len(B_run)) {
    perm <- sample.int(n)
    for (t in seq_along(setup)) {
        s <- setup[[t]]
        ys <- s$fit + s$e[perm]
        r_full <- rss(X, ys)
        f_star <- ((rss(s$Xr, ys) - r_full) / s$df) / (r_full / dfe)
        if (f_star >= s$f * (1 - tie_rtol)) count[t] <- count[t] + 1L
    }
}
t_end <- proc.time()[["elapsed"]]
loop_s <- t_end - t_loop
setup_s <- t_loop - t_start
term_json <- vapply(ord, function(t) {
    lab <- paste(factors[idx[[t]]], collapse = "\u00d7")
    sprintf('{"term": "%s", "f": %.17g, "exceed": %d, "p_perm": %.17g}', lab, setup[[t]]$f,
            count[t], (1 + count[t]) / (1 + B_run))
}, "")
cat(sprintf(paste0('{"tool": "R", "n": %d, "B": %d, "B_run": %d, "setup_seconds": %.6f, ',
                   '"loop_seconds": %.6f, "seconds": %.6f, "terms": [%s]}\n'),
            n, B, B_run, setup_s, loop_s, setup_s + loop_s * B / B_run,
            paste(term_json, collapse = ", ")))
