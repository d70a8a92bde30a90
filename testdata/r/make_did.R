#!/usr/bin/env Rscript
# make_did.R -- reference values of the before-and-after design
# (difference in differences by group, METHODS.md section 10) for the
# Slopewise engine.
#
# Usage:  Rscript testdata/r/make_did.R [outdir]
#         (outdir defaults to the directory holding this script.)
#
# Writes into outdir:
#   did_panel.csv  -- invented data (set.seed below; a known truth)
#   did_leads.csv  -- invented data with five years, three before the start
#   did.txt        -- "<case> <vtype> <key> <value>", the grammar of
#                     reference.txt (README.md), so the Go test reads both
#                     with one reader
#
# Only base R (stats: lm, qt, pt, pf, quantile) and sandwich (vcovHC,
# vcovCL).  The data are invented: 80 units (people in 16 sites), each
# measured once before and once after a programme started for half of
# them, with earnings that depend on the programme differently by region.
#
# Model (Angrist & Pischke 2009, ch. 5; Gruber 1994 for the triple
# difference): y = b0 + b1 T + b2 P + b3 T P + M + T M + P M + T P M + C + e,
# columns in the engine's order
#   1, T, P, T*P, M..., T*M..., P*M..., T*P*M..., controls...
# The effect in group L is b_{TP} + b_{TPM,L}; the difference between groups
# the triple-interaction coefficients.  Clustering by unit: CR1 =
# vcovCL(type = "HC1", cadjust = TRUE), G/(G-1) (N-1)/(N-K) (Cameron &
# Miller 2015; Bertrand, Duflo & Mullainathan 2004 for clustering by unit).
#
# Unit fixed effects (case did_fe): R fits the same columns with one
# indicator per unit, lm(y ~ 0 + X + factor(unit)); the columns that do not
# change within any unit (intercept, T, M, T*M) are left out of X, since
# the indicators absorb them.  Every estimator is R's block for X of that
# fit, except CR1's small-sample factor: units are nested in the clusters
# (clusters = units), so the unit indicators are not counted in K:
#   CR1 = vcovCL(type = "HC0", cadjust = TRUE) * (N-1)/(N-K_X),
# K_X the columns of X alone (Cameron & Miller 2015, fixed effects nested
# in clusters).  vcovCL(type = "HC1") of the indicator fit would count
# them, (N-1)/(N-K_X-G_u), which with two rows a unit is about twice as
# large.  The script checks the block for X against the same model fitted
# by hand on within-unit deviations.

suppressPackageStartupMessages(library(sandwich))

script_dir <- local({
  a <- commandArgs(trailingOnly = FALSE)
  f <- sub("^--file=", "", a[grepl("^--file=", a)])
  if (length(f) == 1) dirname(normalizePath(f)) else getwd()
})
args <- commandArgs(trailingOnly = TRUE)
outdir <- if (length(args) >= 1) args[1] else script_dir
dir.create(outdir, recursive = TRUE, showWarnings = FALSE)
fmt <- function(x) sprintf("%.17g", as.double(x))
close_enough <- function(a, b, tol = 1e-10) {
  isTRUE(all.equal(as.numeric(a), as.numeric(b), tolerance = tol,
                   check.attributes = FALSE))
}

## ---------------------------------------------------------------------------
## Invented data with a known truth.
## ---------------------------------------------------------------------------
set.seed(20261203)
units <- 80
region_of <- rep(c("East", "North", "South", "North"), length.out = units)
site_of <- sprintf("s%02d", (seq_len(units) - 1) %/% 5 + 1)
coached <- rep(c(0, 1, 1, 0, 1, 0, 0, 1), length.out = units)
score <- round(runif(units, 20, 80), 1)           # baseline test score
level <- rnorm(units, 0, 3)                        # each unit's own level
true_effect <- c(East = 1.0, North = 3.0, South = 5.0)
rows <- expand.grid(u = seq_len(units), post = c(0, 1))
rows <- rows[order(rows$u, rows$post), ]
u <- rows$u
post <- rows$post
age <- round(25 + 10 * runif(length(u)) + 0.5 * post, 1)
earn <- 20 + level[u] + 2 * post + 0.8 * coached[u] +
  (region_of[u] == "South") * 1.5 + 0.05 * age +
  true_effect[region_of[u]] * coached[u] * post +
  0.02 * (score[u] - 50) * coached[u] * post +
  rnorm(length(u), 0, 1.5)
d <- data.frame(
  person = sprintf("p%03d", u), site = site_of[u], region = region_of[u],
  programme = ifelse(coached[u] == 1, "coached", "waitlist"),
  coached = coached[u], year = ifelse(post == 1, "2024", "2023"),
  post = post, score = score[u], age = age, earnings = round(earn, 2),
  stringsAsFactors = FALSE)
# Missing cells: both rows of two people, so that no person is left with
# one row (a unit of one row has leverage 1 with unit effects, and HC2/HC3
# are then undefined).
d$earnings[7:8] <- NA        # a missing outcome: rows 7 and 8 dropped
d$age[29:30] <- NA           # a missing control: dropped in cases with age
d$weight <- round(0.5 + runif(nrow(d)), 2)
d$high <- as.double(d$score > 50)    # a binary moderator: score above 50

## Exact CSV (as make_reference.R writes them) and read back.
write_exact_csv <- function(d, file) {
  cols <- lapply(d, function(x) {
    s <- if (is.numeric(x)) fmt(x) else as.character(x)
    s[is.na(x)] <- ""
    s
  })
  lines <- c(paste(names(d), collapse = ","), do.call(paste, c(cols, sep = ",")))
  con <- file(file, open = "wb")
  writeLines(lines, con, sep = "\n")
  close(con)
}
file <- file.path(outdir, "did_panel.csv")
write_exact_csv(d, file)
r <- read.csv(file, na.strings = "", stringsAsFactors = FALSE,
              colClasses = c(year = "character"))
for (v in names(d)) {
  if (is.numeric(d[[v]])) stopifnot(identical(as.double(d[[v]]), as.double(r[[v]])))
  else stopifnot(identical(d[[v]], r[[v]]))
}
d <- r

## ---------------------------------------------------------------------------
## Design in the engine's order.
## ---------------------------------------------------------------------------
level_order <- function(x) {
  u <- unique(as.character(x))
  num <- suppressWarnings(as.numeric(u))
  if (all(!is.na(num))) u[order(num)] else sort(u, method = "radix")
}
largest_level <- function(lab, lev) {
  lev[which.max(tabulate(match(lab, lev), nbins = length(lev)))]
}
build <- function(d, spec) {
  cols <- c(spec$y, spec$treat, spec$period, spec$mod, spec$controls,
            spec$cluster, spec$weights)
  keep <- complete.cases(d[, cols, drop = FALSE])
  du <- d[keep, , drop = FALSE]
  tr <- if (is.null(spec$treated)) as.double(du[[spec$treat]])
        else as.double(du[[spec$treat]] == spec$treated)
  pe <- if (is.null(spec$after)) as.double(du[[spec$period]])
        else as.double(as.character(du[[spec$period]]) == spec$after)
  if (spec$kind == "continuous") {
    M <- matrix(du[[spec$mod]], ncol = 1); lev <- NULL; ref <- NULL
  } else {
    lab <- as.character(du[[spec$mod]]); lev <- level_order(lab)
    ref <- if (!is.null(spec$ref)) spec$ref else largest_level(lab, lev)
    M <- sapply(setdiff(lev, ref), function(l) as.double(lab == l))
    M <- matrix(M, nrow = nrow(du))
  }
  q <- ncol(M)
  C <- if (length(spec$controls)) as.matrix(du[, spec$controls, drop = FALSE]) else NULL
  X <- cbind(1, tr, pe, tr * pe, M, tr * M, pe * M, tr * pe * M, C)
  list(X = unname(X), y = du[[spec$y]], keep = keep, lev = lev, ref = ref, q = q,
       modv = if (spec$kind == "continuous") du[[spec$mod]] else NULL,
       cl = if (is.null(spec$cluster)) NULL else du[[spec$cluster]],
       unit = if (is.null(spec$unit)) NULL else du[[spec$unit]],
       w = if (is.null(spec$weights)) NULL else du[[spec$weights]],
       iT = 4L, iM = 4L + seq_len(q), iTPM = 4L + 3L * q + seq_len(q))
}

out <- c("# R version and packages: see the next line; produced by make_did.R",
         sprintf("# %s, sandwich %s", R.version.string, packageVersion("sandwich")))
emit <- function(case, vt, key, value) {
  out <<- c(out, paste(case, vt, key, if (is.character(value)) value else fmt(value)))
}
emit_lincomb <- function(case, vt, key, g, b, V, df, mdd = FALSE) {
  est <- sum(g * b); se <- sqrt(drop(t(g) %*% V %*% g)); tc <- qt(0.975, df)
  tv <- est / se
  emit(case, vt, paste0(key, ".est"), est)
  emit(case, vt, paste0(key, ".se"), se)
  emit(case, vt, paste0(key, ".t"), tv)
  emit(case, vt, paste0(key, ".p"), 2 * pt(-abs(tv), df))
  emit(case, vt, paste0(key, ".lo"), est - tc * se)
  emit(case, vt, paste0(key, ".hi"), est + tc * se)
  if (mdd) emit(case, vt, paste0(key, ".mdd"), (tc + qt(0.80, df)) * se)
}

## ---------------------------------------------------------------------------
## One case.  With spec$fe the columns constant within every unit are left
## out and one indicator per unit is added.
## ---------------------------------------------------------------------------
run_case <- function(case, spec, vtypes) {
  D <- build(d, spec)
  X <- D$X; y <- D$y; w <- if (is.null(D$w)) rep(1, length(y)) else D$w
  n <- nrow(X); G_u <- 0
  kept <- seq_len(ncol(X))
  if (isTRUE(spec$fe)) {
    varies <- apply(X, 2, function(col) any(tapply(col, D$unit, function(v) any(v != v[1]))))
    kept <- which(varies)
    stopifnot(identical(kept, c(3L, 4L, 4L + 2L * D$q + seq_len(2L * D$q),
                                if (ncol(X) > 4L + 4L * D$q) (4L + 4L * D$q + 1):ncol(X))))
    G_u <- length(unique(D$unit))
  }
  Xk <- X[, kept, drop = FALSE]; k <- ncol(Xk)
  pos <- function(j) match(j, kept)          # engine index of a full column
  fit <- if (isTRUE(spec$fe)) {
    U <- factor(D$unit, levels = unique(D$unit))
    if (is.null(D$w)) lm(y ~ 0 + Xk + U) else lm(y ~ 0 + Xk + U, weights = w)
  } else if (is.null(D$w)) lm(y ~ 0 + Xk) else lm(y ~ 0 + Xk, weights = w)
  b <- unname(coef(fit))[seq_len(k)]
  stopifnot(!anyNA(coef(fit)))
  e <- as.double(residuals(fit))
  dfres <- n - k - G_u
  stopifnot(dfres == fit$df.residual)
  ybar <- sum(w * y) / sum(w)
  r2 <- 1 - sum(w * e^2) / sum(w * (y - ybar)^2)
  emit(case, "-", "n", n); emit(case, "-", "k", k)
  emit(case, "-", "dropped", sum(!D$keep))
  if (any(!D$keep)) emit(case, "-", "dropped_rows", paste(which(!D$keep), collapse = ","))
  emit(case, "-", "sigma", sqrt(sum(w * e^2) / dfres))
  emit(case, "-", "r2", r2)
  for (i in seq_len(k)) emit(case, "-", sprintf("coef[%d]", i), b[i])

  if (isTRUE(spec$fe)) {
    # The same coefficients from within-unit deviations (weighted means).
    dm <- function(v) v - ave(w * v, D$unit, FUN = sum) / ave(w, D$unit, FUN = sum)
    Xd <- apply(Xk, 2, dm); yd <- dm(y)
    bw <- coef(lm(yd ~ 0 + Xd, weights = w))
    stopifnot(close_enough(bw, b, 1e-9))
  }
  cont <- spec$kind == "continuous"
  if (cont) {
    probes <- quantile(D$modv, c(.1, .25, .5, .75, .9), type = 7, names = FALSE)
    plab <- c("p10", "p25", "p50", "p75", "p90")
    for (j in 1:5) emit(case, "-", sprintf("probe[%s].value", plab[j]), probes[j])
    emit(case, "-", "mod.min", min(D$modv)); emit(case, "-", "mod.max", max(D$modv))
  }
  iT <- pos(D$iT); iTPM <- pos(D$iTPM)
  others <- setdiff(D$lev, D$ref)
  grad_level <- function(L) {
    g <- numeric(k); g[iT] <- 1
    if (L != D$ref) g[iTPM[match(L, others)]] <- 1
    g
  }
  grad_m <- function(m) { g <- numeric(k); g[iT] <- 1; g[iTPM] <- m; g }
  for (vt in vtypes) {
    V <- switch(vt,
      classical = vcov(fit),
      HC0 = vcovHC(fit, type = "HC0"), HC1 = vcovHC(fit, type = "HC1"),
      HC2 = vcovHC(fit, type = "HC2"), HC3 = vcovHC(fit, type = "HC3"),
      CR1 = if (isTRUE(spec$fe))
              vcovCL(fit, cluster = D$cl, type = "HC0", cadjust = TRUE) * (n - 1) / (n - k)
            else vcovCL(fit, cluster = D$cl, type = "HC1", cadjust = TRUE))
    V <- unname(as.matrix(V))[seq_len(k), seq_len(k)]
    df <- if (vt == "CR1") length(unique(D$cl)) - 1 else dfres
    emit(case, vt, "df", df)
    for (i in seq_len(k)) emit(case, vt, sprintf("se[%d]", i), sqrt(V[i, i]))
    for (i in seq_len(k)) for (j in seq_len(k))
      emit(case, vt, sprintf("vcov[%d,%d]", i, j), V[i, j])
    if (!cont) {
      for (L in D$lev) emit_lincomb(case, vt, sprintf("effect[%s]", L), grad_level(L), b, V, df)
      ord <- c(D$ref, others)
      for (ia in seq_along(ord)) for (ib in seq_along(ord)) if (ia < ib)
        emit_lincomb(case, vt, sprintf("diff[%s|%s]", ord[ia], ord[ib]),
                     grad_level(ord[ib]) - grad_level(ord[ia]), b, V, df, mdd = TRUE)
    } else {
      for (j in 1:5) emit_lincomb(case, vt, sprintf("effect[%s]", plab[j]), grad_m(probes[j]), b, V, df)
      g <- numeric(k); g[iTPM] <- 1
      emit_lincomb(case, vt, "diff[unit]", g, b, V, df, mdd = TRUE)
      emit_lincomb(case, vt, "diff[p10|p90]", grad_m(probes[5]) - grad_m(probes[1]), b, V, df, mdd = TRUE)
      tc <- qt(0.975, df)
      qa <- b[iTPM]^2 - tc^2 * V[iTPM, iTPM]
      qb <- 2 * (b[iT] * b[iTPM] - tc^2 * V[iT, iTPM])
      qc <- b[iT]^2 - tc^2 * V[iT, iT]
      disc <- qb^2 - 4 * qa * qc
      emit(case, vt, "jn.a", qa); emit(case, vt, "jn.disc", disc)
      if (disc >= 0 && qa != 0) {
        roots <- sort(c((-qb - sqrt(disc)) / (2 * qa), (-qb + sqrt(disc)) / (2 * qa)))
        emit(case, vt, "jn.root1", roots[1]); emit(case, vt, "jn.root2", roots[2])
      }
    }
    b3 <- b[iTPM]; V33 <- V[iTPM, iTPM, drop = FALSE]
    Fh <- drop(t(b3) %*% solve(V33, b3)) / length(iTPM)
    emit(case, vt, "het.F", Fh); emit(case, vt, "het.df1", length(iTPM))
    emit(case, vt, "het.df2", df); emit(case, vt, "het.p", pf(Fh, length(iTPM), df, lower.tail = FALSE))
  }
  # The effect in every group from R's own formula interface, as a check
  # of the hand-built columns (no unit effects, no weights).
  if (!isTRUE(spec$fe) && is.null(D$w) && !cont) {
    du <- d[D$keep, ]
    du$T <- if (is.null(spec$treated)) du[[spec$treat]] else as.double(du[[spec$treat]] == spec$treated)
    du$P <- if (is.null(spec$after)) du[[spec$period]] else as.double(du[[spec$period]] == spec$after)
    du$M <- relevel(factor(du[[spec$mod]]), ref = D$ref)
    ff <- as.formula(paste(spec$y, "~ T * P * M", if (length(spec$controls)) paste("+", paste(spec$controls, collapse = "+")) else ""))
    cf <- coef(lm(ff, data = du))
    stopifnot(close_enough(cf[["T:P"]], b[iT], 1e-9))
  }
}

vt_all <- c("classical", "HC0", "HC1", "HC2", "HC3", "CR1")
# A binary moderator, 0/1 treatment and period, clustered by person.
run_case("did_bin", list(y = "earnings", treat = "coached", period = "post",
  mod = "high", kind = "binary", ref = "0", controls = "age",
  cluster = "person", unit = "person"), vt_all)
# A categorical moderator, labelled treatment and period, clustered by site
# (units nested in sites).
run_case("did_cat", list(y = "earnings", treat = "programme", treated = "coached",
  period = "year", after = "2024", mod = "region", kind = "categorical",
  cluster = "site", unit = "person"), vt_all)
# A continuous moderator (probes, Johnson-Neyman), weighted.
run_case("did_cont", list(y = "earnings", treat = "coached", period = "post",
  mod = "score", kind = "continuous", controls = "age", weights = "weight",
  cluster = "person", unit = "person"), vt_all)
# Unit fixed effects, categorical moderator, clustered by person.
run_case("did_fe", list(y = "earnings", treat = "coached", period = "post",
  mod = "region", kind = "categorical", controls = "age", cluster = "person",
  unit = "person", fe = TRUE), vt_all)
# Unit fixed effects with weights, binary moderator, units nested in sites.
run_case("did_fe_w", list(y = "earnings", treat = "coached", period = "post",
  mod = "high", kind = "binary", ref = "0", weights = "weight",
  cluster = "site", unit = "person", fe = TRUE), c("classical", "HC1", "HC3", "CR1"))

## ---------------------------------------------------------------------------
## More than one period before the start: the leads (METHODS section 10).
## 60 people measured each year 2020-2024, coached from 2023 on for half of
## them; the programme's effect 2 in East, 4 elsewhere; no trend of their
## own before the start.  Columns, in the engine's order:
##   1, T, D_2020, D_2021, D_2023, D_2024 (2022 the reference: the last year
##   before the start), T*P, T*D_2020, T*D_2021 (the leads), M..., T*M...,
##   P*M..., T*P*M..., controls
## where P = year >= 2023.  Lead[y] = b_{T*D_y}; leads.F tests them all.
## ---------------------------------------------------------------------------
set.seed(20261204)
u2 <- 60
reg2 <- rep(c("East", "North", "West"), length.out = u2)
tr2 <- rep(c(0, 1, 1, 1, 0, 0), length.out = u2)
lvl2 <- rnorm(u2, 0, 2)
p2 <- expand.grid(u = seq_len(u2), year = 2020:2024)
p2 <- p2[order(p2$u, p2$year), ]
after2 <- as.double(p2$year >= 2023)
dl <- data.frame(person = sprintf("q%02d", p2$u), year = p2$year, coached = tr2[p2$u],
  region = reg2[p2$u], hours = round(runif(nrow(p2), 10, 40)), stringsAsFactors = FALSE)
dl$earnings <- round(15 + lvl2[p2$u] + 0.3 * (p2$year - 2020) + 0.05 * dl$hours +
  ifelse(reg2[p2$u] == "East", 2, 4) * tr2[p2$u] * after2 + rnorm(nrow(p2), 0, 1.2), 2)
file2 <- file.path(outdir, "did_leads.csv")
write_exact_csv(dl, file2)
r2 <- read.csv(file2, stringsAsFactors = FALSE)
for (v in names(dl)) stopifnot(identical(as.character(dl[[v]]), as.character(r2[[v]])))
dl <- r2

run_leads <- function(case, fe, vtypes) {
  y <- dl$earnings; tr <- dl$coached; yr <- dl$year
  P <- as.double(yr >= 2023)
  D <- sapply(c(2020, 2021, 2023, 2024), function(v) as.double(yr == v))
  L <- sapply(c(2020, 2021), function(v) tr * (yr == v))
  lev <- sort(unique(dl$region), method = "radix")
  ref <- lev[which.max(tabulate(match(dl$region, lev)))]
  others <- setdiff(lev, ref)
  M <- sapply(others, function(l) as.double(dl$region == l))
  X <- unname(cbind(1, tr, D, tr * P, L, M, tr * M, P * M, tr * P * M, dl$hours))
  q <- length(others)
  iT <- 7L; iLead <- 8:9; iTPM <- 9L + 3L * q + seq_len(q)
  kept <- seq_len(ncol(X)); G_u <- 0
  if (fe) {
    kept <- which(apply(X, 2, function(col) any(tapply(col, dl$person, function(v) any(v != v[1])))))
    G_u <- length(unique(dl$person))
  }
  Xk <- X[, kept, drop = FALSE]; k <- ncol(Xk); n <- nrow(Xk)
  pos <- function(j) match(j, kept)
  fit <- if (fe) { U <- factor(dl$person, levels = unique(dl$person)); lm(y ~ 0 + Xk + U) } else lm(y ~ 0 + Xk)
  b <- unname(coef(fit))[seq_len(k)]
  e <- residuals(fit)
  stopifnot(fit$df.residual == n - k - G_u)
  emit(case, "-", "n", n); emit(case, "-", "k", k); emit(case, "-", "dropped", 0)
  emit(case, "-", "sigma", sqrt(sum(e^2) / (n - k - G_u)))
  emit(case, "-", "r2", 1 - sum(e^2) / sum((y - mean(y))^2))
  for (i in seq_len(k)) emit(case, "-", sprintf("coef[%d]", i), b[i])
  jT <- pos(iT); jTPM <- pos(iTPM); jLead <- pos(iLead)
  grad <- function(Lv) { g <- numeric(k); g[jT] <- 1; if (Lv != ref) g[jTPM[match(Lv, others)]] <- 1; g }
  for (vt in vtypes) {
    V <- unname(as.matrix(switch(vt,
      classical = vcov(fit), HC1 = vcovHC(fit, type = "HC1"), HC3 = vcovHC(fit, type = "HC3"),
      CR1 = if (fe) vcovCL(fit, cluster = dl$person, type = "HC0", cadjust = TRUE) * (n - 1) / (n - k)
            else vcovCL(fit, cluster = dl$person, type = "HC1", cadjust = TRUE))))[seq_len(k), seq_len(k)]
    df <- if (vt == "CR1") u2 - 1 else n - k - G_u
    emit(case, vt, "df", df)
    for (i in seq_len(k)) emit(case, vt, sprintf("se[%d]", i), sqrt(V[i, i]))
    for (i in seq_len(k)) for (j in seq_len(k)) emit(case, vt, sprintf("vcov[%d,%d]", i, j), V[i, j])
    for (Lv in lev) emit_lincomb(case, vt, sprintf("effect[%s]", Lv), grad(Lv), b, V, df)
    ord <- c(ref, others)
    for (ia in seq_along(ord)) for (ib in seq_along(ord)) if (ia < ib)
      emit_lincomb(case, vt, sprintf("diff[%s|%s]", ord[ia], ord[ib]), grad(ord[ib]) - grad(ord[ia]), b, V, df, mdd = TRUE)
    for (l in 1:2) { g <- numeric(k); g[jLead[l]] <- 1
      emit_lincomb(case, vt, sprintf("lead[%d]", c(2020, 2021)[l]), g, b, V, df) }
    Fl <- drop(t(b[jLead]) %*% solve(V[jLead, jLead], b[jLead])) / 2
    emit(case, vt, "leads.F", Fl); emit(case, vt, "leads.p", pf(Fl, 2, df, lower.tail = FALSE))
    Fh <- drop(t(b[jTPM]) %*% solve(V[jTPM, jTPM], b[jTPM])) / q
    emit(case, vt, "het.F", Fh); emit(case, vt, "het.df1", q); emit(case, vt, "het.df2", df)
    emit(case, vt, "het.p", pf(Fh, q, df, lower.tail = FALSE))
  }
}
run_leads("did_leads", FALSE, c("classical", "HC3", "CR1"))
run_leads("did_leads_fe", TRUE, c("classical", "HC1", "HC3", "CR1"))

writeLines(out, file.path(outdir, "did.txt"), sep = "\n")
cat(sprintf("make_did.R: %d reference values\n", length(out) - 2))
