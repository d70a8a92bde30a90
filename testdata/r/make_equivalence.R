#!/usr/bin/env Rscript
# make_equivalence.R -- reference values of the two one-sided tests of
# equivalence of a difference between groups, for the Slopewise engine.
#
# Usage:  Rscript testdata/r/make_equivalence.R [outdir]
#         (outdir defaults to the directory holding this script.)
#
# Reads warp_cat.csv and mtcars_cont.csv (written by make_reference.R) and
# writes equivalence.txt: "<case> <key> <value>".
#
# Base R only (lm, vcov, qt, pt), from Schuirmann (1987), J.
# Pharmacokinetics and Biopharmaceutics 15(6), 657-680, as METHODS.md
# section 7 states it: given a margin D, the difference d is tested by
#   t1 = (d + D) / se,  p1 = P(T > t1)   (H0: d <= -D)
#   t2 = (D - d) / se,  p2 = P(T > t2)   (H0: d >= D)
# with T ~ t(df); p = max(p1, p2); equivalent when p < alpha, which is when
# the (1 - 2 alpha) interval d -/+ qt(1 - alpha, df) se lies inside (-D, D).
# Classical standard errors (vcov of lm), alpha = 0.05.

script_dir <- local({
  a <- commandArgs(trailingOnly = FALSE)
  f <- sub("^--file=", "", a[grepl("^--file=", a)])
  if (length(f) == 1) dirname(normalizePath(f)) else getwd()
})
args <- commandArgs(trailingOnly = TRUE)
outdir <- if (length(args) >= 1) args[1] else script_dir
dir.create(outdir, recursive = TRUE, showWarnings = FALSE)
fmt <- function(x) sprintf("%.17g", as.double(x))
alpha <- 0.05

lines <- c(
  sprintf("# %s, base R only; produced by make_equivalence.R", R.version.string),
  "# grammar: <case> <key> <value>; two one-sided tests (Schuirmann 1987), classical SEs, alpha 0.05",
  "# keys: margin; diff[a|b].lo .hi (90% interval) .p (larger one-sided p) .equivalent (1 or 0)")
emit <- function(case, key, v) lines <<- c(lines, paste(case, key, fmt(v)))

tost <- function(case, d, se, df, margin, key) {
  q <- qt(1 - alpha, df)
  p <- max(pt((d + margin) / se, df, lower.tail = FALSE), pt((margin - d) / se, df, lower.tail = FALSE))
  lo <- d - q * se; hi <- d + q * se
  stopifnot((p < alpha) == (lo > -margin && hi < margin))
  emit(case, paste0(key, ".lo"), lo)
  emit(case, paste0(key, ".hi"), hi)
  emit(case, paste0(key, ".p"), p)
  emit(case, paste0(key, ".equivalent"), as.integer(p < alpha))
}

# warp_cat: breaks on wool (B treated) x tension (reference H), margin 25.
wb <- read.csv(file.path(script_dir, "warp_cat.csv"), stringsAsFactors = FALSE)
tr <- as.double(wb$wool == "B")
L <- as.double(wb$tension == "L"); M <- as.double(wb$tension == "M")
X <- cbind(1, tr, L, M, tr * L, tr * M)
fit <- lm(wb$breaks ~ 0 + X)
b <- coef(fit); V <- vcov(fit); df <- fit$df.residual
margin <- 25
emit("warp_cat", "margin", margin)
icol <- c(H = NA, L = 5, M = 6)
lev <- c("H", "L", "M")
for (i in 1:2) for (j in (i + 1):3) {
  a <- numeric(6)
  if (!is.na(icol[lev[j]])) a[icol[lev[j]]] <- a[icol[lev[j]]] + 1
  if (!is.na(icol[lev[i]])) a[icol[lev[i]]] <- a[icol[lev[i]]] - 1
  tost("warp_cat", sum(a * b), sqrt(drop(t(a) %*% V %*% a)), df, margin, sprintf("diff[%s|%s]", lev[i], lev[j]))
}

# mtcars_cont: mpg on am x (wt - 3) + hp; the difference between the
# effects at the 90th and 10th percentiles of wt, margin 13.
mc <- read.csv(file.path(script_dir, "mtcars_cont.csv"))
u <- mc$wt - 3
X <- cbind(1, mc$am, u, mc$am * u, mc$hp)
fit <- lm(mc$mpg ~ 0 + X)
b <- coef(fit); V <- vcov(fit); df <- fit$df.residual
pr <- quantile(mc$wt, c(0.1, 0.9), type = 7, names = FALSE)
a <- c(0, 0, 0, pr[2] - pr[1], 0)
margin <- 13
emit("mtcars_cont", "margin", margin)
tost("mtcars_cont", sum(a * b), sqrt(drop(t(a) %*% V %*% a)), df, margin, "diff[p10|p90]")

con <- file(file.path(outdir, "equivalence.txt"), open = "wb")
writeLines(lines, con, sep = "\n")
close(con)
