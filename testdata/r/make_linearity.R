#!/usr/bin/env Rscript
# make_linearity.R -- reference values of the linearity check of a
# continuous moderator for the Slopewise engine.
#
# Usage:  Rscript testdata/r/make_linearity.R [outdir]
#         (outdir defaults to the directory holding this script.)
#
# Reads airq_weighted78.csv and co2_cluster.csv (written by
# make_reference.R) and writes linearity.txt: "<case> <key> <value>".
#
# Base R only, written from the formulas of Hainmueller, Mummolo & Xu
# (2019), Political Analysis 27(2), 163-192 (the binning estimator and the
# Wald test of the linear interaction model nested in it), as METHODS.md
# section 5 states them:
#   * cut the moderator M at its 1/3 and 2/3 quantiles (type 7); third 1 is
#     M <= q1, third 2 q1 < M <= q2, third 3 M > q2; m_j = median of M in j;
#   * binned model: y = sum_j G_j (mu_j + a_j T + e_j (M - m_j)
#     + b_j T (M - m_j)) + g'C + e, so a_j is the effect of T at M = m_j;
#   * the same model written as the linear one plus G_j, G_j M, G_j T,
#     G_j T M (j = 2, 3); the linear model holds when those 8 terms are 0,
#     tested by W = b8' V88^-1 b8, F = W / 8 on (8, df);
#   * the line: theta(m_j) = b_T + b_TM m_j from the linear model.
# Variances by hand: HC3 = B X' diag(e^2 / (1 - h)^2) X B (MacKinnon &
# White 1985); CR1 = c B (sum_g s_g s_g') B, c = G/(G-1) (N-1)/(N-K)
# (Cameron & Miller 2015), df = N - K or G - 1. Weights: X and y times
# sqrt(w). The script checks that a_j from the nested form equals the T
# coefficient of third j in the natural form.

script_dir <- local({
  a <- commandArgs(trailingOnly = FALSE)
  f <- sub("^--file=", "", a[grepl("^--file=", a)])
  if (length(f) == 1) dirname(normalizePath(f)) else getwd()
})
args <- commandArgs(trailingOnly = TRUE)
outdir <- if (length(args) >= 1) args[1] else script_dir
dir.create(outdir, recursive = TRUE, showWarnings = FALSE)
fmt <- function(x) sprintf("%.17g", as.double(x))

# Least squares with a variance estimator; Xs, ys already times sqrt(w).
ls_fit <- function(Xs, ys, vtype, cl = NULL) {
  qx <- qr(Xs)
  stopifnot(qx$rank == ncol(Xs))
  b <- qr.coef(qx, ys)
  e <- qr.resid(qx, ys)
  B <- chol2inv(qr.R(qx))[order(qx$pivot), order(qx$pivot)]
  N <- nrow(Xs); K <- ncol(Xs)
  if (vtype == "HC3") {
    h <- rowSums((Xs %*% B) * Xs)
    V <- B %*% crossprod(Xs * (e / (1 - h))) %*% B
    df <- N - K
  } else {
    G <- length(unique(cl))
    V <- G / (G - 1) * (N - 1) / (N - K) * B %*% crossprod(rowsum(Xs * e, cl)) %*% B
    df <- G - 1
  }
  list(b = b, V = V, df = df)
}

combo <- function(fit, a) {
  est <- sum(a * fit$b)
  se <- sqrt(drop(t(a) %*% fit$V %*% a))
  tc <- qt(0.975, fit$df)
  c(est = est, se = se, p = 2 * pt(-abs(est / se), fit$df), lo = est - tc * se, hi = est + tc * se)
}

lines <- c(
  sprintf("# %s, base R only; produced by make_linearity.R", R.version.string),
  "# grammar: <case> <key> <value>; linearity check (Hainmueller, Mummolo & Xu 2019) of a continuous moderator",
  "# keys: third[j].from .to .median .rows .est .se .p .lo .hi (binned model); line[j].est .se .lo .hi; wald.F .df1 .df2 .p")
emit <- function(case, key, v) lines <<- c(lines, paste(case, key, fmt(v)))

# One case: y, T, M, controls C (matrix, may have 0 columns), weights w,
# variance type and clusters.
lin_case <- function(case, y, Tr, M, C, w, vtype, cl = NULL) {
  sw <- sqrt(w)
  Xlin <- cbind(1, Tr, M, Tr * M, C)
  K <- ncol(Xlin)
  q <- quantile(M, c(1, 2) / 3, type = 7, names = FALSE)
  third <- ifelse(M <= q[1], 1, ifelse(M <= q[2], 2, 3))
  G2 <- as.double(third == 2); G3 <- as.double(third == 3)
  Xext <- cbind(Xlin, G2, G3, G2 * M, G3 * M, G2 * Tr, G3 * Tr, G2 * Tr * M, G3 * Tr * M)
  fl <- ls_fit(Xlin * sw, y * sw, vtype, cl)
  fe <- ls_fit(Xext * sw, y * sw, vtype, cl)
  # The natural form: per third an intercept, T, M - m_j, T (M - m_j).
  med <- sapply(1:3, function(j) median(M[third == j]))
  Xnat <- NULL
  for (j in 1:3) {
    g <- as.double(third == j)
    Xnat <- cbind(Xnat, g, g * Tr, g * (M - med[j]), g * Tr * (M - med[j]))
  }
  fn <- ls_fit(cbind(Xnat, C) * sw, y * sw, vtype, cl)
  for (j in 1:3) {
    a <- numeric(ncol(Xext)); a[2] <- 1; a[4] <- med[j]
    if (j > 1) { a[K + (j - 1) + 4] <- 1; a[K + (j - 1) + 6] <- med[j] }
    r <- combo(fe, a)
    stopifnot(abs(r[["est"]] - fn$b[4 * (j - 1) + 2]) <= 1e-8 * abs(r[["est"]]))
    inj <- M[third == j]
    emit(case, sprintf("third[%d].from", j), min(inj))
    emit(case, sprintf("third[%d].to", j), max(inj))
    emit(case, sprintf("third[%d].median", j), med[j])
    emit(case, sprintf("third[%d].rows", j), length(inj))
    for (k in c("est", "se", "p", "lo", "hi")) emit(case, sprintf("third[%d].%s", j, k), r[[k]])
    al <- numeric(K); al[2] <- 1; al[4] <- med[j]
    rl <- combo(fl, al)
    for (k in c("est", "se", "lo", "hi")) emit(case, sprintf("line[%d].%s", j, k), rl[[k]])
  }
  idx <- K + 1:8
  b8 <- fe$b[idx]
  Fstat <- drop(t(b8) %*% solve(fe$V[idx, idx], b8)) / 8
  emit(case, "wald.F", Fstat)
  emit(case, "wald.df1", 8)
  emit(case, "wald.df2", fe$df)
  emit(case, "wald.p", pf(Fstat, 8, fe$df, lower.tail = FALSE))
}

# airq_lin: Ozone on hot x Wind (continuous) + Solar.R, weights w, HC3.
aq <- read.csv(file.path(script_dir, "airq_weighted78.csv"), na.strings = "")
aq <- aq[complete.cases(aq[, c("Ozone", "hot", "Wind", "Solar.R", "w")]), ]
lin_case("airq_lin", aq$Ozone, aq$hot, aq$Wind, cbind(aq$Solar.R), aq$w, "HC3")

# co2_lin: uptake on chilled x conc (continuous) + Type (indicator of
# Quebec; Mississippi is the reference), CR1 by Plant (12 clusters).
co2 <- read.csv(file.path(script_dir, "co2_cluster.csv"), stringsAsFactors = FALSE)
lin_case("co2_lin", co2$uptake, as.double(co2$Treatment == "chilled"), co2$conc,
         cbind(as.double(co2$Type == "Quebec")), rep(1, nrow(co2)), "CR1",
         match(co2$Plant, unique(co2$Plant)))

con <- file(file.path(outdir, "linearity.txt"), open = "wb")
writeLines(lines, con, sep = "\n")
close(con)
