#!/usr/bin/env Rscript
# make_bootstrap.R -- reference p-values of the restricted wild cluster
# bootstrap-t, with every possible draw listed, for the Slopewise engine.
#
# Usage:  Rscript testdata/r/make_bootstrap.R [outdir]
#         (outdir defaults to the directory holding this script.)
#
# Reads co2_cluster.csv and airq_weighted78.csv (written by make_reference.R)
# and schools10.csv (drawn by the Go tests' schoolsCSV), and writes
# bootstrap.txt: "<case> <key> <value>".
#
# Base R only. Written from the formulas of Cameron, Gelbach & Miller
# (2008), Review of Economics and Statistics 90(3), 414-427, section III
# (restricted wild cluster bootstrap-t), as stated in METHODS.md section 8,
# and nothing else: for each hypothesis a'b = 0 the restricted fit imposes
# it, y* = X b_restricted + v_g * u_restricted is rebuilt for every sign
# vector, the model is refitted by QR for each y*, and the cluster-robust
# (CR1) t statistic is recomputed from the refit's own residuals. This is the
# slow, direct way; the engine uses per-cluster blocks instead, so the two
# share no algebra beyond the definition.
#
# Weights: Rademacher (+-1) or Webb's six points (Webb 2014, Queen's
# Economics Department WP 1315): +-sqrt(3/2), +-1, +-sqrt(1/2). Every one of
# the L^G weight vectors is used once (enumeration), so the p-values are
# exact fractions with no random numbers.
#
# p = share of draws with |t*| >= |t| (F* >= F for the joint test), where a
# draw within a relative 1e-9 of the observed statistic counts as equal: the
# draw with all weights 1 rebuilds the data and so reproduces t exactly in
# exact arithmetic.

script_dir <- local({
  a <- commandArgs(trailingOnly = FALSE)
  f <- sub("^--file=", "", a[grepl("^--file=", a)])
  if (length(f) == 1) dirname(normalizePath(f)) else getwd()
})
args <- commandArgs(trailingOnly = TRUE)
outdir <- if (length(args) >= 1) args[1] else script_dir
dir.create(outdir, recursive = TRUE, showWarnings = FALSE)

fmt <- function(x) sprintf("%.17g", as.double(x))
tie <- 1e-9

rademacher <- c(-1, 1)
webb <- c(-sqrt(1.5), -1, -sqrt(0.5), sqrt(0.5), 1, sqrt(1.5))

# All L^G weight vectors, one per row.
all_draws <- function(values, G) {
  as.matrix(expand.grid(rep(list(values), G), KEEP.OUT.ATTRS = FALSE))
}

# CR1 factor (Cameron & Miller 2015): G/(G-1) * (N-1)/(N-K).
cr1_factor <- function(N, K, G) G / (G - 1) * (N - 1) / (N - K)

# One case: X and y already multiplied by sqrt(weights); cl = cluster index
# 1..G per row; hyps = named list of coefficient vectors a (single
# restrictions); joint = column indices of the joint test (or NULL), whose
# keys start with joint_name.
boot_case <- function(X, y, cl, values, hyps, joint, joint_name = "het") {
  N <- nrow(X); K <- ncol(X); G <- max(cl)
  cfac <- cr1_factor(N, K, G)
  qx <- qr(X)
  stopifnot(qx$rank == K)
  b <- qr.coef(qx, y)
  e <- qr.resid(qx, y)
  Bread <- solve(crossprod(X))
  V <- cfac * Bread %*% crossprod(rowsum(X * e, cl)) %*% Bread
  draws <- all_draws(values, G)           # D x G
  D <- nrow(draws)
  out <- list(draws = D)
  for (name in names(hyps)) {
    a <- hyps[[name]]
    est <- sum(a * b)
    t0 <- est / sqrt(drop(t(a) %*% V %*% a))
    Ba <- Bread %*% a
    br <- b - Ba * (est / drop(t(a) %*% Ba))     # imposes a'b = 0
    fitted_r <- drop(X %*% br)
    ur <- y - fitted_r
    Ystar <- fitted_r + t(draws)[cl, , drop = FALSE] * ur   # N x D
    Bstar <- qr.coef(qx, Ystar)                  # K x D: a refit per draw
    Estar <- qr.resid(qx, Ystar)
    h <- drop(X %*% Ba)                          # a'B x_i
    num <- drop(t(a) %*% Bstar)
    wg <- rowsum(h * Estar, cl)                  # G x D: a'B X_g'e*_g
    tstar <- num / sqrt(cfac * colSums(wg^2))
    out[[paste0(name, ".t")]] <- t0
    out[[paste0(name, ".pboot")]] <- mean(abs(tstar) >= abs(t0) * (1 - tie))
  }
  if (!is.null(joint)) {
    q <- length(joint)
    R <- diag(K)[joint, , drop = FALSE]
    Rb <- drop(R %*% b)
    F0 <- drop(t(Rb) %*% solve(R %*% V %*% t(R), Rb)) / q
    RBR <- R %*% Bread %*% t(R)
    br <- b - Bread %*% t(R) %*% solve(RBR, Rb)   # imposes R b = 0
    fitted_r <- drop(X %*% br)
    ur <- y - fitted_r
    Ystar <- fitted_r + t(draws)[cl, , drop = FALSE] * ur
    Bstar <- qr.coef(qx, Ystar)
    Estar <- qr.resid(qx, Ystar)
    H <- X %*% Bread %*% t(R)                    # N x q
    count <- 0
    for (d in seq_len(D)) {
      U <- rowsum(H * Estar[, d], cl)            # G x q
      Vd <- cfac * crossprod(U)
      rb <- drop(R %*% Bstar[, d])
      Fd <- drop(t(rb) %*% solve(Vd, rb)) / q
      if (Fd >= F0 * (1 - tie)) count <- count + 1
    }
    out[[paste0(joint_name, ".F")]] <- F0
    out[[paste0(joint_name, ".pboot")]] <- count / D
  }
  out
}

lines <- c(
  sprintf("# %s, base R only; produced by make_bootstrap.R", R.version.string),
  "# grammar: <case> <key> <value>; restricted wild cluster bootstrap-t, all draws enumerated",
  "# keys: draws; <quantity>.t (CR1 t of the data); <quantity>.pboot; het.F, het.pboot; lin.F, lin.pboot (linearity check)")
emit <- function(case, out) {
  for (k in names(out)) lines <<- c(lines, paste(case, k, fmt(out[[k]])))
}
unit <- function(K, j) { a <- numeric(K); a[j] <- 1; a }

## ---------------------------------------------------------------------------
## co2 cases: CO2 data (12 plants), Rademacher weights, 2^12 = 4096 draws.
## ---------------------------------------------------------------------------
co2 <- read.csv(file.path(script_dir, "co2_cluster.csv"), stringsAsFactors = FALSE)
cl_co2 <- match(co2$Plant, unique(co2$Plant))
tr <- as.double(co2$Treatment == "chilled")

# co2_type: uptake on chilled, Type (reference Mississippi), chilled x Type,
# conc. Columns 1, T, [Quebec], T[Quebec], conc.
q <- as.double(co2$Type == "Quebec")
X <- cbind(1, tr, q, tr * q, co2$conc)
K <- ncol(X)
emit("co2_type", boot_case(X, co2$uptake, cl_co2, rademacher, list(
  "effect[Mississippi]" = unit(K, 2),
  "effect[Quebec]" = unit(K, 2) + unit(K, 4),
  "diff[Mississippi|Quebec]" = unit(K, 4)), joint = 4))

# co2_conc: conc as seven groups (all 12 rows: the tie goes to the first in
# numeric order, 95, as reference). Columns 1, T, [175..1000], T[175..1000].
lev <- sort(unique(co2$conc))
M <- sapply(lev[-1], function(l) as.double(co2$conc == l))
X <- cbind(1, tr, M, tr * M)
K <- ncol(X)
icol <- c(NA, 2 + length(lev) - 1 + seq_len(length(lev) - 1))  # by level
names(icol) <- lev
hyps <- list()
for (l in lev) {
  a <- unit(K, 2)
  if (!is.na(icol[[as.character(l)]])) a <- a + unit(K, icol[[as.character(l)]])
  hyps[[sprintf("effect[%s]", l)]] <- a
}
for (i in seq_along(lev)) for (j in seq_along(lev)) if (i < j) {
  a <- numeric(K)
  if (!is.na(icol[j])) a <- a + unit(K, icol[j])
  if (!is.na(icol[i])) a <- a - unit(K, icol[i])
  hyps[[sprintf("diff[%s|%s]", lev[i], lev[j])]] <- a
}
emit("co2_conc", boot_case(X, co2$uptake, cl_co2, rademacher, hyps,
                           joint = icol[-1]))

## ---------------------------------------------------------------------------
## airq_cont: airquality with hot = Temp >= 78, weights w = Day, a continuous
## moderator (Wind) and 5 clusters (Month): Webb weights, 6^5 = 7776 draws.
## ---------------------------------------------------------------------------
aq <- read.csv(file.path(script_dir, "airq_weighted78.csv"), na.strings = "")
aq <- aq[complete.cases(aq[, c("Ozone", "hot", "Wind", "Solar.R", "Month", "w")]), ]
sw <- sqrt(aq$w)
X <- cbind(1, aq$hot, aq$Wind, aq$hot * aq$Wind, aq$Solar.R)
K <- ncol(X)
probes <- quantile(aq$Wind, c(0.10, 0.25, 0.50, 0.75, 0.90), type = 7, names = FALSE)
hyps <- list()
for (i in seq_along(probes)) {
  hyps[[sprintf("effect[p%d]", c(10, 25, 50, 75, 90)[i])]] <- unit(K, 2) + probes[i] * unit(K, 4)
}
hyps[["diff[unit]"]] <- unit(K, 4)
hyps[["diff[p10|p90]"]] <- (probes[5] - probes[1]) * unit(K, 4)
cl_aq <- match(aq$Month, unique(aq$Month))
emit("airq_cont", boot_case(X * sw, aq$Ozone * sw, cl_aq, webb, hyps, joint = NULL))

## ---------------------------------------------------------------------------
## The linearity check of a continuous moderator (Hainmueller, Mummolo & Xu
## 2019; METHODS.md section 5): the binned model is the linear one plus G_j,
## G_j M, G_j T, G_j T M for thirds j = 2, 3 (cuts at the type-7 1/3 and 2/3
## quantiles; third 2 is q1 < M <= q2), and the line is tested by the Wald
## F of those 8 terms; here its restricted wild cluster bootstrap, with the
## effects at the probes and the differences of the linear model.
## ---------------------------------------------------------------------------
cont_case <- function(case, y, Tr, M, C, cl, values) {
  Xlin <- cbind(1, Tr, M, Tr * M, C)
  K <- ncol(Xlin)
  probes <- quantile(M, c(0.10, 0.25, 0.50, 0.75, 0.90), type = 7, names = FALSE)
  hyps <- list()
  for (i in seq_along(probes)) {
    hyps[[sprintf("effect[p%d]", c(10, 25, 50, 75, 90)[i])]] <- unit(K, 2) + probes[i] * unit(K, 4)
  }
  hyps[["diff[unit]"]] <- unit(K, 4)
  hyps[["diff[p10|p90]"]] <- (probes[5] - probes[1]) * unit(K, 4)
  emit(case, boot_case(Xlin, y, cl, values, hyps, joint = NULL))
  q <- quantile(M, c(1, 2) / 3, type = 7, names = FALSE)
  G2 <- as.double(M > q[1] & M <= q[2]); G3 <- as.double(M > q[2])
  Xext <- cbind(Xlin, G2, G3, G2 * M, G3 * M, G2 * Tr, G3 * Tr, G2 * Tr * M, G3 * Tr * M)
  out <- boot_case(Xext, y, cl, values, list(), joint = K + 1:8, joint_name = "lin")
  out$draws <- NULL
  emit(case, out)
}

# schools10: the invented study of issue 19 (300 pupils, 10 schools, a
# straight-line effect; drawn by schoolsCSV in internal/estimate), reading
# on tutored x prior, CR1 by school. Rademacher weights (forced; the
# engine's default for 10 clusters is Webb), 2^10 = 1024 draws.
sc <- read.csv(file.path(script_dir, "schools10.csv"), stringsAsFactors = FALSE)
cont_case("schools10", sc$reading, as.double(sc$tutored), sc$prior, NULL,
          match(sc$school, unique(sc$school)), rademacher)

# co2_lin: case D data, uptake on chilled x conc (continuous) + Type,
# CR1 by Plant; Rademacher (forced), 2^12 = 4096 draws.
cont_case("co2_lin", co2$uptake, tr, co2$conc, cbind(as.double(co2$Type == "Quebec")),
          cl_co2, rademacher)

con <- file(file.path(outdir, "bootstrap.txt"), open = "wb")
writeLines(lines, con, sep = "\n")
close(con)
