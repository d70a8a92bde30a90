#!/usr/bin/env Rscript
# make_reference.R -- independent reference values for the Slopewise engine.
#
# Usage:  Rscript testdata/r/make_reference.R [outdir]
#         (outdir defaults to the directory holding this script; any working
#         directory works.)
#
# Writes into outdir:
#   mtcars_bin.csv warp_cat.csv mtcars_cont.csv co2_cluster.csv
#   airq_weighted.csv airq_weighted78.csv petersen.csv bh1995.csv
#                                               -- the data, bit-exact
#   reference.txt                               -- "<case> <vtype> <key> <value>"
#
# Only base R (stats: lm, qt, pt, pf, quantile, p.adjust) and sandwich
# (vcovHC, vcovCL) are used.  The design matrix is built by hand in the column
# order the Go engine uses (see README.md), and every model is fitted as
# lm(y ~ 0 + X [, weights = w]).  The output is deterministic: no random
# numbers, no timestamps.
#
# Sources for the formulas:
#   White (1980), Econometrica 48:817-838                     -- HC0
#   MacKinnon & White (1985), J. Econometrics 29:305-325      -- HC1, HC2, HC3
#   Cameron & Miller (2015), J. Human Resources 50:317-372    -- CR1, df = G-1
#   Bloom (1995), Evaluation Review 19:547-556                -- minimum detectable
#                                                                difference
#   Johnson & Neyman (1936), Statistical Research Memoirs 1:57-93;
#   Bauer & Curran (2005), Multivariate Behavioral Research 40:373-400
#                                                             -- regions of
#                                                                significance
#   Benjamini & Hochberg (1995), JRSS-B 57:289-300            -- BH example
#   Holm (1979), Scand. J. Statistics 6:65-70                 -- Holm step-down
#   Petersen (2009), Review of Financial Studies 22:435-480   -- PetersenCL data

suppressPackageStartupMessages(library(sandwich))
stopifnot(exists("vcovHC"), exists("vcovCL"))

## ---------------------------------------------------------------------------
## Paths: output directory = first argument, else the script's own directory.
## ---------------------------------------------------------------------------
script_dir <- local({
  a <- commandArgs(trailingOnly = FALSE)
  f <- sub("^--file=", "", a[grepl("^--file=", a)])
  if (length(f) == 1) dirname(normalizePath(f)) else getwd()
})
args <- commandArgs(trailingOnly = TRUE)
outdir <- if (length(args) >= 1) args[1] else script_dir
dir.create(outdir, recursive = TRUE, showWarnings = FALSE)

## ---------------------------------------------------------------------------
## Small helpers
## ---------------------------------------------------------------------------
# 17 significant digits: enough for any IEEE double to round-trip exactly.
fmt <- function(x) sprintf("%.17g", as.double(x))

# Relative agreement used by the internal sanity checks.
close_enough <- function(a, b, tol = 1e-10) {
  a <- as.numeric(a); b <- as.numeric(b)
  isTRUE(all.equal(a, b, tolerance = tol, check.attributes = FALSE))
}

# CSV writer: header row, comma separated, NA -> empty field, numbers with
# %.17g, text unquoted unless it contains a comma, quote or line break.
csv_field <- function(s) {
  need <- grepl("[\",\r\n]", s)
  s[need] <- paste0("\"", gsub("\"", "\"\"", s[need]), "\"")
  s
}
write_exact_csv <- function(d, file) {
  cols <- lapply(d, function(x) {
    s <- if (is.numeric(x)) fmt(x) else as.character(x)
    s[is.na(x)] <- ""
    csv_field(s)
  })
  lines <- c(paste(csv_field(names(d)), collapse = ","),
             do.call(paste, c(cols, sep = ",")))
  con <- file(file, open = "wb")   # "\n" line ends on every platform
  writeLines(lines, con, sep = "\n")
  close(con)
}
# Read the CSV back and insist it reproduces the data exactly; the reference
# values are then computed from the read-back data, i.e. from exactly the bytes
# the Go engine will read.
write_and_reread <- function(d, name) {
  file <- file.path(outdir, paste0(name, ".csv"))
  write_exact_csv(d, file)
  r <- read.csv(file, na.strings = "", stringsAsFactors = FALSE,
                check.names = FALSE)
  stopifnot(identical(names(r), names(d)), nrow(r) == nrow(d))
  for (v in names(d)) {
    a <- d[[v]]; b <- r[[v]]
    if (is.numeric(a)) stopifnot(identical(as.double(a), as.double(b)))
    else stopifnot(identical(as.character(a), as.character(b)))
  }
  r
}

# Level order: numeric if every level parses as a number, else byte order.
level_order <- function(x) {
  u <- unique(as.character(x[!is.na(x)]))
  num <- suppressWarnings(as.numeric(u))
  if (all(!is.na(num))) u[order(num)] else sort(u, method = "radix")
}
# Reference level: most rows; ties -> first in level order (which.max keeps
# the first maximum).
largest_level <- function(lab, lev) {
  tab <- tabulate(match(lab, lev), nbins = length(lev))
  lev[which.max(tab)]
}

## ---------------------------------------------------------------------------
## Design matrix in the engine's column order:
##   intercept, T, M..., T x M..., controls...
## ---------------------------------------------------------------------------
build_design <- function(d, spec, ref = NULL, centre = NULL) {
  used_cols <- c(spec$y, spec$treat, spec$mod, spec$controls,
                 spec$cluster, spec$weights)
  keep <- stats::complete.cases(d[, used_cols, drop = FALSE])
  du <- d[keep, , drop = FALSE]

  tr <- if (is.null(spec$treated)) as.double(du[[spec$treat]])
        else as.double(as.character(du[[spec$treat]]) == spec$treated)
  stopifnot(all(tr %in% c(0, 1)))

  if (spec$kind == "continuous") {
    cc <- if (is.null(centre)) spec$centre else centre
    Mm <- matrix(du[[spec$mod]] - cc, ncol = 1,
                 dimnames = list(NULL, spec$mod))
    lev <- NULL; ref_used <- NULL
  } else {
    lab <- as.character(du[[spec$mod]])
    lev <- level_order(lab)
    if (spec$kind == "binary") stopifnot(identical(lev, c("0", "1")))
    ref_used <- if (!is.null(ref)) ref
                else if (!is.null(spec$ref)) spec$ref
                else largest_level(lab, lev)
    others <- setdiff(lev, ref_used)
    Mm <- sapply(others, function(l) as.double(lab == l))
    Mm <- matrix(Mm, nrow = nrow(du),
                 dimnames = list(NULL, paste0(spec$mod, "=", others)))
    cc <- 0
  }
  TM <- tr * Mm
  colnames(TM) <- paste0(spec$treat, ":", colnames(Mm))

  Cm <- NULL
  for (v in spec$controls) {
    x <- du[[v]]
    if (is.numeric(x)) {
      Cm <- cbind(Cm, matrix(as.double(x), ncol = 1, dimnames = list(NULL, v)))
    } else {                      # text control: reference = largest level
      lx <- as.character(x); lv <- level_order(lx)
      rf <- largest_level(lx, lv)
      for (l in setdiff(lv, rf))
        Cm <- cbind(Cm, matrix(as.double(lx == l), ncol = 1,
                               dimnames = list(NULL, paste0(v, "=", l))))
    }
  }
  X <- cbind("(Intercept)" = 1, T = tr, Mm, TM, Cm)
  q <- ncol(Mm)
  list(X = X, y = as.double(du[[spec$y]]),
       w = if (is.null(spec$weights)) NULL else as.double(du[[spec$weights]]),
       cl = if (is.null(spec$cluster)) NULL else as.character(du[[spec$cluster]]),
       keep = keep, lev = lev, ref = ref_used, centre = cc,
       modv = if (spec$kind == "continuous") as.double(du[[spec$mod]]) else NULL,
       iT = 2L, iM = 2L + seq_len(q), iTM = 2L + q + seq_len(q), q = q)
}

fit_design <- function(D) {
  X <- D$X; y <- D$y
  if (is.null(D$w)) lm(y ~ 0 + X) else { w <- D$w; lm(y ~ 0 + X, weights = w) }
}

## ---------------------------------------------------------------------------
## Covariance matrices: sandwich, and the same by hand as an internal check.
## For weighted fits everything works on sqrt(w)-transformed X and residuals.
## ---------------------------------------------------------------------------
vcov_by_type <- function(fit, D, type) {
  V <- switch(type,
    classical = vcov(fit),
    HC0 = vcovHC(fit, type = "HC0"),
    HC1 = vcovHC(fit, type = "HC1"),
    HC2 = vcovHC(fit, type = "HC2"),
    HC3 = vcovHC(fit, type = "HC3"),
    # HC1 inside vcovCL = (N-1)/(N-K); cadjust = TRUE adds G/(G-1).
    CR1 = vcovCL(fit, cluster = D$cl, type = "HC1", cadjust = TRUE))
  V <- unname(as.matrix(V))
  Vh <- vcov_by_hand(fit, D, type)
  if (!close_enough(V, Vh)) stop("hand-computed ", type, " differs from R")
  V
}
vcov_by_hand <- function(fit, D, type) {
  X <- D$X; n <- nrow(X); k <- ncol(X)
  sw <- if (is.null(D$w)) rep(1, n) else sqrt(D$w)
  Xs <- X * sw
  es <- as.double(residuals(fit)) * sw
  B <- solve(crossprod(Xs))                         # (X'WX)^-1
  if (type == "classical") return(B * sum(es^2) / (n - k))
  if (type == "CR1") {
    U <- rowsum(Xs * es, D$cl)                      # G x K cluster score sums
    G <- nrow(U)
    return(B %*% crossprod(U) %*% B * (G / (G - 1)) * ((n - 1) / (n - k)))
  }
  h <- rowSums((Xs %*% B) * Xs)                     # leverages
  om <- switch(type,
    HC0 = es^2,                                     # White (1980)
    HC1 = es^2 * n / (n - k),                       # MacKinnon & White (1985)
    HC2 = es^2 / (1 - h),
    HC3 = es^2 / (1 - h)^2)
  B %*% crossprod(Xs * sqrt(om)) %*% B
}

## ---------------------------------------------------------------------------
## Output collection
## ---------------------------------------------------------------------------
out <- character()
emit <- function(case, vtype, key, value) {
  v <- if (is.character(value)) value else fmt(value)
  stopifnot(length(v) == 1, !grepl(" ", key), !grepl(" ", v))
  out <<- c(out, paste(case, vtype, key, v))
}
# est, se, t, p, lo, hi (and mdd) for a linear combination g'b.
emit_lincomb <- function(case, vt, key, g, b, V, df, mdd = FALSE) {
  est <- sum(g * b)
  se <- sqrt(drop(t(g) %*% V %*% g))
  tc <- qt(0.975, df)
  tv <- est / se
  emit(case, vt, paste0(key, ".est"), est)
  emit(case, vt, paste0(key, ".se"), se)
  emit(case, vt, paste0(key, ".t"), tv)
  emit(case, vt, paste0(key, ".p"), 2 * pt(-abs(tv), df))
  emit(case, vt, paste0(key, ".lo"), est - tc * se)
  emit(case, vt, paste0(key, ".hi"), est + tc * se)
  # Bloom (1995): MDD at 5% two-sided, 80% power.
  if (mdd) emit(case, vt, paste0(key, ".mdd"), (tc + qt(0.80, df)) * se)
  c(est = est, se = se, t = tv)
}

info <- list()   # for the console summary

## ---------------------------------------------------------------------------
## One moderation case
## ---------------------------------------------------------------------------
run_case <- function(case, d, spec, vtypes) {
  D <- build_design(d, spec)
  fit <- fit_design(D)
  X <- D$X; n <- nrow(X); k <- ncol(X)
  b <- unname(coef(fit))
  stopifnot(!anyNA(b))
  w <- if (is.null(D$w)) rep(1, n) else D$w
  e <- as.double(residuals(fit))
  sigma <- sqrt(sum(w * e^2) / (n - k))
  stopifnot(close_enough(sigma, summary(fit)$sigma))

  # Weighted R^2 as summary.lm reports it for a model WITH an intercept:
  # 1 - sum(w e^2) / sum(w (y - ybar_w)^2).  Note: summary() of the
  # y ~ 0 + X fit itself would give the uncentred R^2 (it cannot see that
  # column 1 is an intercept), so we check against the same model written
  # with a formula intercept instead.
  ybar <- sum(w * D$y) / sum(w)
  r2 <- 1 - sum(w * e^2) / sum(w * (D$y - ybar)^2)
  Xr <- X[, -1, drop = FALSE]; yy <- D$y
  fit_i <- if (is.null(D$w)) lm(yy ~ Xr) else lm(yy ~ Xr, weights = w)
  stopifnot(close_enough(r2, summary(fit_i)$r.squared),
            close_enough(b, coef(fit_i)))

  dropped <- which(!D$keep)
  emit(case, "-", "n", n)
  emit(case, "-", "k", k)
  emit(case, "-", "dropped", length(dropped))
  if (length(dropped) > 0)
    emit(case, "-", "dropped_rows", paste(dropped, collapse = ","))
  emit(case, "-", "sigma", sigma)
  emit(case, "-", "r2", r2)
  for (i in seq_len(k)) emit(case, "-", sprintf("coef[%d]", i), b[i])

  cont <- spec$kind == "continuous"
  if (cont) {
    probes <- quantile(D$modv, c(.10, .25, .50, .75, .90), type = 7,
                       names = FALSE)
    plab <- c("p10", "p25", "p50", "p75", "p90")
    for (j in seq_along(probes))
      emit(case, "-", sprintf("probe[%s].value", plab[j]), probes[j])
    emit(case, "-", "mod.min", min(D$modv))
    emit(case, "-", "mod.max", max(D$modv))
  }

  # Gradient of theta(level) or theta(m) with respect to b.
  grad_level <- function(L) {
    g <- numeric(k); g[D$iT] <- 1
    if (L != D$ref) g[D$iTM[match(L, setdiff(D$lev, D$ref))]] <- 1
    g
  }
  grad_m <- function(m) {
    g <- numeric(k); g[D$iT] <- 1; g[D$iTM] <- m - D$centre; g
  }

  # Leverages on the sqrt(w) scale.  A row with leverage 1 (a moderator x
  # treatment cell holding a single row) has residual 0 and makes HC2/HC3
  # 0/0: those variance types are then not defined and are not written;
  # instead one line "<case> <vtype> leverage1_rows <rows>" lists the
  # offending 1-based data rows (HC0/HC1/classical stay well defined).
  hat <- unname(hatvalues(fit))
  lev1 <- which(D$keep)[hat > 1 - 1e-8]

  for (vt in vtypes) {
    if (vt %in% c("HC2", "HC3") && length(lev1) > 0) {
      emit(case, vt, "leverage1_rows", paste(lev1, collapse = ","))
      next
    }
    V <- vcov_by_type(fit, D, vt)
    df <- if (vt == "CR1") length(unique(D$cl)) - 1 else n - k
    emit(case, vt, "df", df)
    se <- sqrt(diag(V))
    for (i in seq_len(k)) emit(case, vt, sprintf("se[%d]", i), se[i])
    for (i in seq_len(k)) for (j in seq_len(k))
      emit(case, vt, sprintf("vcov[%d,%d]", i, j), V[i, j])

    if (!cont) {
      # Effects in every level, in level order.
      for (L in D$lev) {
        r <- emit_lincomb(case, vt, sprintf("effect[%s]", L), grad_level(L),
                          b, V, df)
        # Independent check: refit with L as the reference level; the
        # treatment coefficient and its SE must equal theta(L) (all of
        # HC0-HC3 and CR1 are invariant to this reparametrisation).
        D2 <- build_design(d, spec, ref = L); f2 <- fit_design(D2)
        V2 <- vcov_by_type(f2, D2, vt)
        stopifnot(close_enough(r[["est"]], coef(f2)[2], 1e-9),
                  close_enough(r[["se"]], sqrt(V2[2, 2]), 1e-9))
      }
      # Differences theta(b) - theta(a), a before b in (ref, others...).
      ord <- c(D$ref, setdiff(D$lev, D$ref))
      for (ia in seq_along(ord)) for (ib in seq_along(ord)) if (ia < ib) {
        a <- ord[ia]; bb <- ord[ib]
        emit_lincomb(case, vt, sprintf("diff[%s|%s]", a, bb),
                     grad_level(bb) - grad_level(a), b, V, df, mdd = TRUE)
      }
    } else {
      for (j in seq_along(probes)) {
        r <- emit_lincomb(case, vt, sprintf("effect[%s]", plab[j]),
                          grad_m(probes[j]), b, V, df)
        # Independent check: recentre the moderator at the probe value.
        D2 <- build_design(d, spec, centre = probes[j]); f2 <- fit_design(D2)
        V2 <- vcov_by_type(f2, D2, vt)
        stopifnot(close_enough(r[["est"]], coef(f2)[2], 1e-9),
                  close_enough(r[["se"]], sqrt(V2[2, 2]), 1e-9))
      }
      g_unit <- numeric(k); g_unit[D$iTM] <- 1
      emit_lincomb(case, vt, "diff[unit]", g_unit, b, V, df, mdd = TRUE)
      emit_lincomb(case, vt, "diff[p10|p90]", grad_m(probes[5]) - grad_m(probes[1]),
                   b, V, df, mdd = TRUE)
    }

    # Heterogeneity: Wald test that all interaction coefficients are zero.
    b3 <- b[D$iTM]; V33 <- V[D$iTM, D$iTM, drop = FALSE]
    W <- drop(t(b3) %*% solve(V33, b3)); q <- D$q; Fh <- W / q
    emit(case, vt, "het.F", Fh)
    emit(case, vt, "het.df1", q)
    emit(case, vt, "het.df2", df)
    emit(case, vt, "het.p", pf(Fh, q, df, lower.tail = FALSE))
    if (q == 1)  # one interaction: F must be the square of its t
      stopifnot(abs(Fh - (b3 / sqrt(V33[1, 1]))^2) <= 1e-10 * Fh)
    if (vt == "classical") {  # classical: must equal the nested-model F test
      X0 <- X[, -D$iTM, drop = FALSE]; y0 <- D$y
      f0 <- if (is.null(D$w)) lm(y0 ~ 0 + X0) else lm(y0 ~ 0 + X0, weights = w)
      Xf <- X
      f1 <- if (is.null(D$w)) lm(y0 ~ 0 + Xf) else lm(y0 ~ 0 + Xf, weights = w)
      stopifnot(close_enough(Fh, anova(f0, f1)$F[2], 1e-9))
    }

    # Johnson-Neyman boundaries (Johnson & Neyman 1936; Bauer & Curran 2005):
    # values u = m - c where theta(u)^2 = t^2 se(u)^2.
    if (cont) {
      tc <- qt(0.975, df)
      b1 <- b[D$iT]; b3s <- b[D$iTM]
      V11 <- V[D$iT, D$iT]; V13 <- V[D$iT, D$iTM]; V33s <- V[D$iTM, D$iTM]
      qa <- b3s^2 - tc^2 * V33s
      qb <- 2 * (b1 * b3s - tc^2 * V13)
      qc <- b1^2 - tc^2 * V11
      disc <- qb^2 - 4 * qa * qc
      emit(case, vt, "jn.a", qa)
      emit(case, vt, "jn.disc", disc)
      if (disc >= 0 && qa != 0) {
        u <- sort(c((-qb - sqrt(disc)) / (2 * qa), (-qb + sqrt(disc)) / (2 * qa)))
        roots <- u + D$centre
        for (rr in roots) {   # check: |t| at each boundary equals the critical t
          g <- grad_m(rr)
          stopifnot(abs(abs(sum(g * b)) / sqrt(drop(t(g) %*% V %*% g)) - tc) < 1e-8)
        }
        emit(case, vt, "jn.root1", roots[1])
        emit(case, vt, "jn.root2", roots[2])
      }
    }
  }
  info[[case]] <<- list(rows = nrow(d), n = n, k = k, dropped = length(dropped),
                        lev1 = lev1,
                        ref = D$ref, lev = D$lev, cols = colnames(X))
  invisible(fit)
}

VT5 <- c("classical", "HC0", "HC1", "HC2", "HC3")

## ---------------------------------------------------------------------------
## A. mtcars_bin: mpg ~ am * vs + wt + hp (binary moderator, reference 0)
## ---------------------------------------------------------------------------
mt <- data.frame(car = rownames(datasets::mtcars), datasets::mtcars,
                 stringsAsFactors = FALSE, check.names = FALSE)
rownames(mt) <- NULL
dA <- write_and_reread(mt, "mtcars_bin")
run_case("mtcars_bin", dA,
         list(y = "mpg", treat = "am", mod = "vs", kind = "binary", ref = "0",
              controls = c("wt", "hp")), VT5)

## ---------------------------------------------------------------------------
## B. warp_cat: breaks ~ wool(B) * tension; tension L/M/H, 18 rows each, so the
##    default reference is the first level in byte order: "H".
## ---------------------------------------------------------------------------
wb <- data.frame(breaks = datasets::warpbreaks$breaks,
                 wool = as.character(datasets::warpbreaks$wool),
                 tension = as.character(datasets::warpbreaks$tension),
                 stringsAsFactors = FALSE)
dB <- write_and_reread(wb, "warp_cat")
run_case("warp_cat", dB,
         list(y = "breaks", treat = "wool", treated = "B", mod = "tension",
              kind = "categorical", controls = character()), VT5)
stopifnot(identical(info$warp_cat$ref, "H"))

## ---------------------------------------------------------------------------
## C. mtcars_cont: mpg ~ am * (wt - 3) + hp (continuous moderator, centre 3)
## ---------------------------------------------------------------------------
dC <- write_and_reread(mt, "mtcars_cont")
run_case("mtcars_cont", dC,
         list(y = "mpg", treat = "am", mod = "wt", kind = "continuous",
              centre = 3, controls = "hp"), VT5)

## ---------------------------------------------------------------------------
## D. co2_cluster: uptake ~ Treatment(chilled) * Type + conc, clustered by
##    Plant (12 plants).  Type: 42/42 tie -> reference "Mississippi".
## ---------------------------------------------------------------------------
co <- data.frame(Plant = as.character(datasets::CO2$Plant),
                 Type = as.character(datasets::CO2$Type),
                 Treatment = as.character(datasets::CO2$Treatment),
                 conc = as.double(datasets::CO2$conc),
                 uptake = as.double(datasets::CO2$uptake),
                 stringsAsFactors = FALSE)
dD <- write_and_reread(co, "co2_cluster")
run_case("co2_cluster", dD,
         list(y = "uptake", treat = "Treatment", treated = "chilled",
              mod = "Type", kind = "categorical", controls = "conc",
              cluster = "Plant"), c(VT5, "CR1"))
stopifnot(identical(info$co2_cluster$ref, "Mississippi"))

## ---------------------------------------------------------------------------
## E. airq_weighted: Ozone ~ hot * Month + Wind + Solar.R, weights w = Day.
##    Listwise deletion (Ozone, Solar.R missing); reference = largest month
##    among used rows.
## ---------------------------------------------------------------------------
aq <- datasets::airquality
aq$hot <- as.integer(aq$Temp >= 80)
aq$w <- aq$Day
dE <- write_and_reread(aq, "airq_weighted")
run_case("airq_weighted", dE,
         list(y = "Ozone", treat = "hot", mod = "Month", kind = "categorical",
              controls = c("Wind", "Solar.R"), weights = "w"), VT5)

## ---------------------------------------------------------------------------
## E2. airq_weighted78 (supplementary): as E but hot = Temp >= 78.  In E the
##     May x hot cell has a single used row (leverage 1), so weighted HC2/HC3
##     are undefined there; at 78 every month x hot cell has >= 2 rows and all
##     variance types are well defined.
## ---------------------------------------------------------------------------
aq78 <- datasets::airquality
aq78$hot <- as.integer(aq78$Temp >= 78)
aq78$w <- aq78$Day
dE2 <- write_and_reread(aq78, "airq_weighted78")
run_case("airq_weighted78", dE2,
         list(y = "Ozone", treat = "hot", mod = "Month", kind = "categorical",
              controls = c("Wind", "Solar.R"), weights = "w"), VT5)
stopifnot(length(info$airq_weighted78$lev1) == 0)

## ---------------------------------------------------------------------------
## F. petersen: y ~ x; classical and firm-clustered (CR1) standard errors.
## ---------------------------------------------------------------------------
pe_env <- new.env()
data("PetersenCL", package = "sandwich", envir = pe_env)
pe <- pe_env$PetersenCL[, c("firm", "year", "x", "y")]
dF <- write_and_reread(pe, "petersen")
local({
  X <- cbind("(Intercept)" = 1, x = dF$x); y <- dF$y
  fit <- lm(y ~ 0 + X)
  D <- list(X = X, y = y, w = NULL, cl = as.character(dF$firm))
  b <- unname(coef(fit))
  Vc <- vcov_by_type(fit, D, "classical")
  Vr <- vcov_by_type(fit, D, "CR1")
  # Same numbers from the textbook formula call.
  f2 <- lm(y ~ x, data = dF)
  stopifnot(close_enough(b, coef(f2)),
            close_enough(Vr, vcovCL(f2, cluster = ~firm, type = "HC1")))
  for (i in 1:2) emit("petersen", "-", sprintf("coef[%d]", i), b[i])
  for (i in 1:2) emit("petersen", "classical", sprintf("se[%d]", i), sqrt(Vc[i, i]))
  for (i in 1:2) emit("petersen", "CR1", sprintf("se[%d]", i), sqrt(Vr[i, i]))
  info$petersen <<- list(rows = nrow(dF), n = nrow(X), G = length(unique(dF$firm)),
                         b = b, se_cl = sqrt(diag(Vc)), se_cr = sqrt(diag(Vr)))
})

## ---------------------------------------------------------------------------
## G. bh1995: the 15 p-values of Benjamini & Hochberg (1995), Holm and BH.
## ---------------------------------------------------------------------------
bh <- data.frame(i = 1:15,
                 p = c(0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298,
                       0.0344, 0.0459, 0.3240, 0.4262, 0.5719, 0.6528, 0.7590,
                       1.0000))
dG <- write_and_reread(bh, "bh1995")
local({
  p <- dG$p
  holm <- p.adjust(p, "holm"); bhq <- p.adjust(p, "BH")
  for (i in seq_along(p)) emit("bh1995", "-", sprintf("p[%d]", i), p[i])
  for (i in seq_along(p)) emit("bh1995", "-", sprintf("holm[%d]", i), holm[i])
  for (i in seq_along(p)) emit("bh1995", "-", sprintf("bh[%d]", i), bhq[i])
  # The paper rejects the 4 smallest at q = 0.05 (BH) -- a cheap sanity check.
  stopifnot(sum(bhq <= 0.05) == 4)
  info$bh1995 <<- list(rows = length(p))
})

## ---------------------------------------------------------------------------
## reference.txt
## ---------------------------------------------------------------------------
producer <- sprintf(
  "# R %s.%s lm + sandwich %s vcovHC/vcovCL; produced by make_reference.R",
  R.version$major, R.version$minor, as.character(packageVersion("sandwich")))
header <- c(producer,
  "# grammar: <case> <vtype> <key> <value>; vtype in {classical,HC0,HC1,HC2,HC3,CR1} or - (does not depend on the variance type)",
  "# numbers printed with sprintf(\"%.17g\"); see README.md for cases, models and keys")
con <- file(file.path(outdir, "reference.txt"), open = "wb")
writeLines(c(header, out), con, sep = "\n")
close(con)

## Console summary (not part of the reference).
for (nm in names(info)) {
  z <- info[[nm]]
  cat(sprintf("%-14s rows=%d", nm, z$rows))
  if (!is.null(z$n)) cat(sprintf(" used=%d", z$n))
  if (!is.null(z$k)) cat(sprintf(" k=%d dropped=%d", z$k, z$dropped))
  if (!is.null(z$ref)) cat(sprintf(" levels=%s ref=%s",
                                   paste(z$lev, collapse = "/"), z$ref))
  if (length(z$lev1)) cat(sprintf(" leverage1_rows=%s", paste(z$lev1, collapse = ",")))
  cat("\n")
  if (!is.null(z$cols)) cat("   columns:", paste(z$cols, collapse = " | "), "\n")
}
cat(sprintf("wrote %d reference values to %s\n", length(out),
            file.path(outdir, "reference.txt")))
