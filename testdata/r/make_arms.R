#!/usr/bin/env Rscript
# make_arms.R -- reference values of a treatment with several arms
# (METHODS.md section 11) for the Slopewise engine.
#
# Usage:  Rscript testdata/r/make_arms.R [outdir]
#         (outdir defaults to the directory holding this script.)
#
# Writes into outdir:
#   arms.csv  -- invented data (set.seed below; a known truth)
#   arms_panel.csv -- invented data before and after (a second seed)
#   arms.txt  -- "<case> <vtype> <key> <value>" (reference.txt's grammar)
#
# Only base R (lm, qt, pt, pf, p.adjust) and sandwich (vcovHC, vcovCL).
# The data: 240 people in 24 sites, a waiting list (the comparison arm),
# coaching, and coaching with a stipend, in three regions, with earnings
# whose response to each arm differs by region.
#
# Model, columns in the engine's order (arms in level order, the
# comparison left out; interactions arm by arm):
#   1, A_coaching, A_stipend, M..., A_coaching*M..., A_stipend*M..., controls
# Arm a's effect in group L: b_a + b_{a x M, L}; differences between groups
# for arm a: its interaction coefficients; its heterogeneity F: the Wald
# test of them; the joint F: of every interaction; Holm (1979) over the
# arms' heterogeneity p-values (p.adjust(method = "holm")).  Every effect
# is also checked against a refit with that group as the moderator's
# reference (the arm's coefficient and its SE).

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
close_enough <- function(a, b, tol = 1e-9) {
  isTRUE(all.equal(as.numeric(a), as.numeric(b), tolerance = tol, check.attributes = FALSE))
}

set.seed(14014)
n <- 240
arm <- rep(c("waitlist", "coaching", "stipend"), length.out = n)
region <- sample(c("East", "North", "South"), n, replace = TRUE, prob = c(0.3, 0.45, 0.25))
site <- sprintf("s%02d", sample(1:24, n, replace = TRUE))
age <- round(runif(n, 20, 60))
truth <- list(coaching = c(East = 1, North = 2, South = 3),
              stipend = c(East = 2, North = 2, South = 5))
eff <- mapply(function(a, r) if (a == "waitlist") 0 else truth[[a]][[r]], arm, region, USE.NAMES = FALSE)
earnings <- round(20 + 0.05 * age + (region == "South") * 1 + eff + rnorm(n, 0, 2), 2)
earnings[c(5, 77)] <- NA
d <- data.frame(person = sprintf("p%03d", 1:n), site = site, region = region,
                arm = arm, age = age, earnings = earnings, stringsAsFactors = FALSE)

file <- file.path(outdir, "arms.csv")
lines <- c(paste(names(d), collapse = ","),
           do.call(paste, c(lapply(d, function(x) {
             s <- if (is.numeric(x)) fmt(x) else x
             s[is.na(x)] <- ""
             s
           }), sep = ",")))
con <- file(file, open = "wb"); writeLines(lines, con, sep = "\n"); close(con)
r <- read.csv(file, na.strings = "", stringsAsFactors = FALSE)
for (v in names(d)) stopifnot(identical(d[[v]], r[[v]]) || identical(as.double(d[[v]]), as.double(r[[v]])))
d <- r

out <- c("# produced by make_arms.R",
         sprintf("# %s, sandwich %s", R.version.string, packageVersion("sandwich")))
emit <- function(case, vt, key, value) {
  out <<- c(out, paste(case, vt, key, if (is.character(value)) value else fmt(value)))
}
emit_lincomb <- function(case, vt, key, g, b, V, df, mdd = FALSE) {
  est <- sum(g * b); se <- sqrt(drop(t(g) %*% V %*% g)); tc <- qt(0.975, df); tv <- est / se
  emit(case, vt, paste0(key, ".est"), est); emit(case, vt, paste0(key, ".se"), se)
  emit(case, vt, paste0(key, ".t"), tv); emit(case, vt, paste0(key, ".p"), 2 * pt(-abs(tv), df))
  emit(case, vt, paste0(key, ".lo"), est - tc * se); emit(case, vt, paste0(key, ".hi"), est + tc * se)
  if (mdd) emit(case, vt, paste0(key, ".mdd"), (tc + qt(0.80, df)) * se)
  c(est = est, se = se)
}
wald <- function(b, V, idx, df) {
  Fv <- drop(t(b[idx]) %*% solve(V[idx, idx], b[idx])) / length(idx)
  c(F = Fv, p = pf(Fv, length(idx), df, lower.tail = FALSE))
}

build <- function(du, control, ref) {
  lev <- sort(unique(du$region), method = "radix")
  arms <- setdiff(sort(unique(du$arm), method = "radix"), control)
  others <- setdiff(lev, ref)
  A <- sapply(arms, function(a) as.double(du$arm == a))
  M <- sapply(others, function(l) as.double(du$region == l))
  AM <- do.call(cbind, lapply(arms, function(a) A[, a] * M))
  X <- unname(cbind(1, A, M, AM, du$age))
  q <- length(others)
  list(X = X, y = du$earnings, arms = arms, lev = lev, ref = ref, others = others,
       iA = 1L + seq_along(arms),
       iAM = lapply(seq_along(arms), function(j) 1L + length(arms) + q + (j - 1L) * q + seq_len(q)))
}

run_case <- function(case, control, vtypes) {
  du <- d[complete.cases(d[, c("earnings", "arm", "region", "age")]), ]
  tab <- table(du$region)
  lev <- sort(unique(du$region), method = "radix")
  ref <- lev[which.max(tab[lev])]
  D <- build(du, control, ref)
  fit <- lm(D$y ~ 0 + D$X)
  b <- unname(coef(fit)); n <- nrow(D$X); k <- ncol(D$X); e <- residuals(fit)
  emit(case, "-", "n", n); emit(case, "-", "k", k)
  emit(case, "-", "dropped", sum(!complete.cases(d[, c("earnings", "arm", "region", "age")])))
  emit(case, "-", "sigma", sqrt(sum(e^2) / (n - k)))
  emit(case, "-", "r2", 1 - sum(e^2) / sum((D$y - mean(D$y))^2))
  for (i in seq_len(k)) emit(case, "-", sprintf("coef[%d]", i), b[i])
  grad <- function(j, L) {
    g <- numeric(k); g[D$iA[j]] <- 1
    if (L != D$ref) g[D$iAM[[j]][match(L, D$others)]] <- 1
    g
  }
  for (vt in vtypes) {
    V <- unname(as.matrix(switch(vt,
      classical = vcov(fit), HC0 = vcovHC(fit, type = "HC0"), HC1 = vcovHC(fit, type = "HC1"),
      HC2 = vcovHC(fit, type = "HC2"), HC3 = vcovHC(fit, type = "HC3"),
      CR1 = vcovCL(fit, cluster = du$site, type = "HC1", cadjust = TRUE))))
    df <- if (vt == "CR1") length(unique(du$site)) - 1 else n - k
    emit(case, vt, "df", df)
    for (i in seq_len(k)) emit(case, vt, sprintf("se[%d]", i), sqrt(V[i, i]))
    for (i in seq_len(k)) for (j in seq_len(k)) emit(case, vt, sprintf("vcov[%d,%d]", i, j), V[i, j])
    ord <- c(D$ref, D$others)
    ps <- numeric()
    for (j in seq_along(D$arms)) {
      a <- D$arms[j]
      for (L in D$lev) {
        r <- emit_lincomb(case, vt, sprintf("effect[%s|%s]", a, L), grad(j, L), b, V, df)
        if (vt != "CR1") {   # the arm's coefficient with L as the reference
          D2 <- build(du, control, L); f2 <- lm(D2$y ~ 0 + D2$X)
          V2 <- switch(vt, classical = vcov(f2), vcovHC(f2, type = vt))
          stopifnot(close_enough(r[["est"]], coef(f2)[D2$iA[j]]), close_enough(r[["se"]], sqrt(V2[D2$iA[j], D2$iA[j]])))
        }
      }
      for (ia in seq_along(ord)) for (ib in seq_along(ord)) if (ia < ib)
        emit_lincomb(case, vt, sprintf("diff[%s|%s|%s]", a, ord[ia], ord[ib]),
                     grad(j, ord[ib]) - grad(j, ord[ia]), b, V, df, mdd = TRUE)
      w <- wald(b, V, D$iAM[[j]], df)
      emit(case, vt, sprintf("armhet[%s].F", a), w[["F"]])
      emit(case, vt, sprintf("armhet[%s].p", a), w[["p"]])
      ps <- c(ps, w[["p"]])
    }
    holm <- p.adjust(ps, method = "holm")
    for (j in seq_along(D$arms)) emit(case, vt, sprintf("armhet[%s].holm", D$arms[j]), holm[j])
    w <- wald(b, V, unlist(D$iAM), df)
    emit(case, vt, "het.F", w[["F"]]); emit(case, vt, "het.df1", length(unlist(D$iAM)))
    emit(case, vt, "het.df2", df); emit(case, vt, "het.p", w[["p"]])
  }
}

run_case("arms3", "waitlist", c("classical", "HC0", "HC1", "HC2", "HC3", "CR1"))

## ---------------------------------------------------------------------------
## Several arms before and after (METHODS sections 10 and 11): 150 people
## measured in 2023 and 2024; the arms start in 2024.  Columns, in the
## engine's order:
##   1, A_c, A_s, P, A_c*P, A_s*P, M..., A_c*M..., A_s*M..., P*M...,
##   A_c*P*M..., A_s*P*M...
## Arm a's effect in group L: b_{A_a*P} + b_{A_a*P*M,L}.  With unit effects
## (case arms_did_fe) the columns constant within a person (1, A, M, A*M)
## are left out and one indicator per person added; CR1's factor as in
## make_did.R (persons nested in the clusters: (N-1)/(N-K), K the columns
## kept).
## ---------------------------------------------------------------------------
set.seed(14015)
u3 <- 150
arm3 <- rep(c("waitlist", "coaching", "stipend"), length.out = u3)
reg3 <- sample(c("East", "North", "South"), u3, replace = TRUE, prob = c(0.3, 0.45, 0.25))
lvl3 <- rnorm(u3, 0, 2)
pp <- expand.grid(u = seq_len(u3), year = c(2023, 2024))
pp <- pp[order(pp$u, pp$year), ]
post3 <- as.double(pp$year == 2024)
eff3 <- mapply(function(a, r) if (a == "waitlist") 0 else truth[[a]][[r]], arm3[pp$u], reg3[pp$u], USE.NAMES = FALSE)
dp <- data.frame(person = sprintf("r%03d", pp$u), year = pp$year, arm = arm3[pp$u], region = reg3[pp$u],
  earnings = round(18 + lvl3[pp$u] + 1.2 * post3 + eff3 * post3 + rnorm(nrow(pp), 0, 1.5), 2),
  stringsAsFactors = FALSE)
file3 <- file.path(outdir, "arms_panel.csv")
lines <- c(paste(names(dp), collapse = ","),
           do.call(paste, c(lapply(dp, function(x) if (is.numeric(x)) fmt(x) else x), sep = ",")))
con <- file(file3, open = "wb"); writeLines(lines, con, sep = "\n"); close(con)
r3 <- read.csv(file3, stringsAsFactors = FALSE)
for (v in names(dp)) stopifnot(identical(as.character(dp[[v]]), as.character(r3[[v]])))
dp <- r3

run_did_arms <- function(case, fe, vtypes) {
  lev <- sort(unique(dp$region), method = "radix")
  ref <- lev[which.max(tabulate(match(dp$region, lev)))]
  others <- setdiff(lev, ref); q <- length(others)
  arms <- c("coaching", "stipend")
  A <- sapply(arms, function(a) as.double(dp$arm == a))
  P <- as.double(dp$year == 2024)
  M <- sapply(others, function(l) as.double(dp$region == l))
  AM <- do.call(cbind, lapply(arms, function(a) A[, a] * M))
  APM <- do.call(cbind, lapply(arms, function(a) A[, a] * P * M))
  X <- unname(cbind(1, A, P, A * P, M, AM, P * M, APM))
  iA <- c(5L, 6L); iAPM <- lapply(1:2, function(j) 6L + 4L * q + (j - 1L) * q + seq_len(q))
  kept <- seq_len(ncol(X)); G_u <- 0
  if (fe) {
    kept <- which(apply(X, 2, function(col) any(tapply(col, dp$person, function(v) any(v != v[1])))))
    stopifnot(identical(kept, c(4L, 5L, 6L, 6L + 3L * q + seq_len(3L * q))))
    G_u <- u3
  }
  Xk <- X[, kept, drop = FALSE]; k <- ncol(Xk); n <- nrow(Xk); y <- dp$earnings
  pos <- function(j) match(j, kept)
  fit <- if (fe) { U <- factor(dp$person, levels = unique(dp$person)); lm(y ~ 0 + Xk + U) } else lm(y ~ 0 + Xk)
  stopifnot(fit$df.residual == n - k - G_u, !anyNA(coef(fit)))
  b <- unname(coef(fit))[seq_len(k)]; e <- residuals(fit)
  emit(case, "-", "n", n); emit(case, "-", "k", k); emit(case, "-", "dropped", 0)
  emit(case, "-", "sigma", sqrt(sum(e^2) / (n - k - G_u)))
  emit(case, "-", "r2", 1 - sum(e^2) / sum((y - mean(y))^2))
  for (i in seq_len(k)) emit(case, "-", sprintf("coef[%d]", i), b[i])
  grad <- function(j, L) {
    g <- numeric(k); g[pos(iA[j])] <- 1
    if (L != ref) g[pos(iAPM[[j]][match(L, others)])] <- 1
    g
  }
  for (vt in vtypes) {
    V <- unname(as.matrix(switch(vt,
      classical = vcov(fit), HC3 = vcovHC(fit, type = "HC3"),
      CR1 = if (fe) vcovCL(fit, cluster = dp$person, type = "HC0", cadjust = TRUE) * (n - 1) / (n - k)
            else vcovCL(fit, cluster = dp$person, type = "HC1", cadjust = TRUE))))[seq_len(k), seq_len(k)]
    df <- if (vt == "CR1") u3 - 1 else n - k - G_u
    emit(case, vt, "df", df)
    for (i in seq_len(k)) emit(case, vt, sprintf("se[%d]", i), sqrt(V[i, i]))
    for (i in seq_len(k)) for (j in seq_len(k)) emit(case, vt, sprintf("vcov[%d,%d]", i, j), V[i, j])
    ord <- c(ref, others); ps <- numeric()
    for (j in 1:2) {
      for (L in lev) emit_lincomb(case, vt, sprintf("effect[%s|%s]", arms[j], L), grad(j, L), b, V, df)
      for (ia in seq_along(ord)) for (ib in seq_along(ord)) if (ia < ib)
        emit_lincomb(case, vt, sprintf("diff[%s|%s|%s]", arms[j], ord[ia], ord[ib]),
                     grad(j, ord[ib]) - grad(j, ord[ia]), b, V, df, mdd = TRUE)
      w <- wald(b, V, pos(iAPM[[j]]), df)
      emit(case, vt, sprintf("armhet[%s].F", arms[j]), w[["F"]]); emit(case, vt, sprintf("armhet[%s].p", arms[j]), w[["p"]])
      ps <- c(ps, w[["p"]])
    }
    holm <- p.adjust(ps, method = "holm")
    for (j in 1:2) emit(case, vt, sprintf("armhet[%s].holm", arms[j]), holm[j])
    w <- wald(b, V, pos(unlist(iAPM)), df)
    emit(case, vt, "het.F", w[["F"]]); emit(case, vt, "het.df1", 2 * q)
    emit(case, vt, "het.df2", df); emit(case, vt, "het.p", w[["p"]])
  }
}
run_did_arms("arms_did", FALSE, c("classical", "HC3", "CR1"))
run_did_arms("arms_did_fe", TRUE, c("classical", "HC3", "CR1"))

writeLines(out, file.path(outdir, "arms.txt"), sep = "\n")
cat(sprintf("make_arms.R: %d reference values\n", length(out) - 2))
