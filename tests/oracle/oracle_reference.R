# The R side of weft's live oracle test.
#
# Usage: Rscript oracle_reference.R panel.csv cases.txt out.json
#
# panel.csv: columns unit, period, outcome, regressor 1, regressor 2, ... (the header
# names are the term names); an empty cell is missing.
# cases.txt: one model text per line, e.g. "within periods" (estimator word first,
# optionally "periods" and "no-intercept"); every standard-error family (classical,
# hc0-hc3, cluster, cluster0, cluster-period, cluster-both, dk with the default lag, dk=0,
# dk=3) is computed for each case.
#
# Two routes, both written to out.json:
#  - "explicit": the transformed equation of CONVENTIONS.md is built here by hand on the
#    panel's own period grid (differences and lags never cross a gap), then estimated
#    with lm(); hc* and one-way cluster covariances come from sandwich::vcovHC/vcovCL,
#    the heteroskedasticity LM statistics from lmtest::bptest; the unit-and-period
#    cluster covariance, Driscoll-Kraay and the serial, Hausman and effects tests are
#    written out from their published definitions (cited beside each).
#  - "plm": the same quantities straight from plm (and sandwich/lmtest on plm
#    objects), only where plm's conventions coincide with weft's (see the reference
#    README "Where plm and the explicit route differ"): plm differences consecutive rows,
#    so fd is checked against plm only when no unit skips a grid period.
# A missing package is an error (exit status 2): the oracle must never pass silently.

for (p in c("sandwich", "lmtest", "plm", "jsonlite")) {
  if (!requireNamespace(p, quietly = TRUE)) {
    cat(sprintf("R package %s is not installed (Debian: r-cran-%s)\n", p, p), file = stderr())
    quit(status = 2)
  }
}
suppressPackageStartupMessages({
  library(sandwich); library(lmtest); library(plm); library(jsonlite)
})

args <- commandArgs(trailingOnly = TRUE)
if (length(args) != 3) stop("usage: Rscript oracle_reference.R panel.csv cases.txt out.json")
raw <- read.csv(args[1], na.strings = c("", "NA"), check.names = FALSE,
                stringsAsFactors = FALSE)
cases <- trimws(readLines(args[2]))
cases <- cases[nchar(cases) > 0]

x_names <- names(raw)[-(1:3)]
if (any(make.names(x_names) != x_names)) stop("regressor names must be syntactic R names")
# Observation weights (CONVENTIONS.md "Observation weights"): a column named wt holds
# them and the cases say weights=wt. A blank weight drops the row, a zero leaves it out
# before anything else; every equation is then fitted by lm(weights = ) (the weight of
# an fd difference is the later row's, a between unit's the mean of its rows' weights,
# unit means are weighted within the unit) and the hand-written meats use the weighted
# scores w u x (sandwich::estfun of a weighted lm). The heteroskedasticity and serial
# tests, plm and clubSandwich are not run on weighted panels (weft refuses the tests).
weighted <- "wt" %in% x_names
x_names <- setdiff(x_names, "wt")
names(raw)[1:3] <- c("unit", "period", "y")
raw$unit <- as.character(raw$unit)

# The period grid: distinct periods among rows with a unit and a period (CONVENTIONS.md
# "Panel index"), not only among the rows used.
grid <- sort(unique(raw$period[!is.na(raw$unit) & !is.na(raw$period)]))
raw$gi <- match(raw$period, grid)
used <- complete.cases(raw[, c("unit", "period", "y", x_names, if (weighted) "wt")])
if (weighted) used <- used & !is.na(raw$wt) & raw$wt > 0
d <- raw[used, ]
d$w <- if (weighted) d$wt else rep(1, nrow(d))
d <- d[order(d$unit, d$gi), ]
rownames(d) <- NULL

period_label <- function(t) paste("period", format(t, scientific = FALSE, trim = TRUE))

# ---- transformed equations -----------------------------------------------------------

unit_mean <- function(v, unit) {
  if (!weighted) return(ave(v, unit, FUN = mean))
  ave(v * d$w, unit, FUN = sum) / ave(d$w, unit, FUN = sum)  # weighted (rows of d only)
}

period_indicators <- function(gi, omit) {
  keep <- setdiff(seq_along(grid), omit)
  keep <- keep[keep %in% gi]
  M <- sapply(keep, function(k) as.numeric(gi == k))
  M <- matrix(M, nrow = length(gi))
  colnames(M) <- period_label(grid[keep])
  M
}

# Swamy-Arora variance components as in the reference README ("random"), plm's form for
# unbalanced panels (Baltagi & Chang 1994 variant).
swamy_arora <- function(d, Xlev) {
  N <- nrow(d); n <- length(unique(d$unit))
  Ti <- ave(rep(1, N), d$unit, FUN = sum)
  Xw <- apply(Xlev, 2, function(v) v - unit_mean(v, d$unit))
  yw <- d$y - unit_mean(d$y, d$unit)
  fw <- lm.fit(Xw, yw)
  Kw <- fw$rank
  s2_idios <- sum(fw$residuals^2) / (N - n - Kw)
  Xb <- apply(Xlev, 2, function(v) unit_mean(v, d$unit))
  varies <- apply(Xb, 2, function(v) diff(range(v)) > 1e-12 * max(1, abs(v)))
  Zb <- cbind(1, Xb[, varies, drop = FALSE])
  yb <- unit_mean(d$y, d$unit)
  fb <- lm.fit(Zb, yb)
  qb <- fb$qr$pivot[seq_len(fb$rank)]
  Zb <- Zb[, qb, drop = FALSE]
  Kb <- ncol(Zb) - 1
  quad <- sum(lm.fit(Zb, yb)$residuals^2)
  balanced <- length(unique(Ti)) == 1
  if (balanced) {
    s2_id <- (quad / (n - Kb - 1) - s2_idios) / Ti[1]
  } else {
    Z <- cbind(1, Xlev[, varies, drop = FALSE])[, qb, drop = FALSE]
    Zs <- apply(Z, 2, function(v) ave(v, d$unit, FUN = sum))
    tr <- sum(diag(solve(crossprod(Zb), crossprod(Zs, Z))))
    s2_id <- (quad - (n - Kb - 1) * s2_idios) / (N - tr)
  }
  s2_id <- max(s2_id, 0)
  theta <- 1 - sqrt(s2_idios / (Ti * s2_id + s2_idios))
  list(s2_idios = s2_idios, s2_id = s2_id, theta = theta)
}

# CONVENTIONS.md: a regressor with no variation within units is dropped by within and fd
# (after the transform its column is zero).
drop_invariant <- function(M) {
  keep <- apply(M, 2, function(v) max(abs(v)) > 1e-9)
  M[, keep, drop = FALSE]
}

build_equation <- function(est, periods, intercept = TRUE) {
  X0 <- as.matrix(d[, x_names, drop = FALSE])
  colnames(X0) <- x_names
  if (est == "pooled") {
    X <- X0
    if (periods) X <- cbind(X, period_indicators(d$gi, omit = 1))
    if (intercept) X <- cbind(intercept = 1, X)
    return(list(y = d$y, X = X, unit = d$unit, gi = d$gi, absorbed = 0, w = d$w,
                z = setdiff(colnames(X), "intercept")))
  }
  if (est == "fd") {
    key <- paste(d$unit, d$gi)
    prev <- match(paste(d$unit, d$gi - 1), key)
    ok <- !is.na(prev)
    dX <- X0[ok, , drop = FALSE] - X0[prev[ok], , drop = FALSE]
    X <- drop_invariant(dX)
    if (periods) X <- cbind(X, period_indicators(d$gi[ok], omit = 1:2))
    if (intercept) X <- cbind(intercept = 1, X)
    return(list(y = d$y[ok] - d$y[prev[ok]], X = X, unit = d$unit[ok], gi = d$gi[ok],
                absorbed = 0, w = d$w[ok], z = setdiff(colnames(X), "intercept")))
  }
  if (est == "within") {
    X <- X0
    if (periods) X <- cbind(X, period_indicators(d$gi, omit = 1))
    Xw <- apply(X, 2, function(v) v - unit_mean(v, d$unit))
    Xw <- drop_invariant(matrix(Xw, nrow = nrow(d), dimnames = list(NULL, colnames(X))))
    return(list(y = d$y - unit_mean(d$y, d$unit), X = Xw, unit = d$unit, gi = d$gi,
                absorbed = length(unique(d$unit)), w = d$w, z = colnames(Xw), Xlev = X))
  }
  if (est == "between") {
    units <- unique(d$unit)
    sw <- as.vector(rowsum(d$w, d$unit)[units, ])  # weights all 1 when unweighted
    X <- cbind(intercept = 1, rowsum(X0 * d$w, d$unit)[units, , drop = FALSE] / sw)
    yb <- as.vector(rowsum(d$y * d$w, d$unit)[units, ]) / sw
    return(list(y = yb, X = X, unit = units, gi = rep(NA, length(units)), absorbed = 0,
                w = sw / as.vector(table(d$unit)[units]),
                z = setdiff(colnames(X), "intercept")))
  }
  if (est == "random") {
    Xlev <- X0
    if (periods) Xlev <- cbind(Xlev, period_indicators(d$gi, omit = 1))
    vc <- swamy_arora(d, Xlev)
    th <- vc$theta
    Xq <- apply(Xlev, 2, function(v) v - th * unit_mean(v, d$unit))
    Xq <- matrix(Xq, nrow = nrow(d), dimnames = list(NULL, colnames(Xlev)))
    X <- cbind(intercept = 1 - th, Xq)
    return(list(y = d$y - th * unit_mean(d$y, d$unit), X = X, unit = d$unit, gi = d$gi,
                absorbed = 0, z = colnames(Xlev), Xlev = Xlev, theta = th, vc = vc))
  }
  stop("unknown estimator ", est)
}

# ---- covariances ---------------------------------------------------------------------

meat_cluster <- function(X, u, g) {
  S <- rowsum(X * u, g, reorder = FALSE)
  crossprod(S)
}

# Cameron, Gelbach & Miller (2011, section 2.3): negative eigenvalues set to 0, taken in
# the scaled basis S = D V D, D = diag(ref)^-1/2 with ref = V_unit + V_period, and only
# when S's smallest eigenvalue is below -1e-10 of its largest (weft's CONVENTIONS.md
# "Decisions that must not depend on units of measure", core/include/weft/tolerances.hpp)
clip_psd <- function(V, ref) {
  D <- 1 / sqrt(abs(diag(ref)))
  S <- D * t(D * V)
  e <- eigen((S + t(S)) / 2, symmetric = TRUE)
  rel <- min(e$values) / max(abs(e$values))
  W <- V
  if (rel < -1e-10) {
    C <- e$vectors %*% (pmax(e$values, 0) * t(e$vectors))
    W <- C / outer(D, D)
  }
  dimnames(W) <- dimnames(V)
  list(V = W, min_eig = min(eigen((V + t(V)) / 2, symmetric = TRUE, only.values = TRUE)$values),
       clipped = rel < -1e-10, min_scaled = rel)
}

covariances <- function(eq, fit) {
  X <- eq$X; u <- residuals(fit); N <- nrow(X); K <- ncol(X)
  A <- chol2inv(qr.R(qr(X)))
  if (weighted) {
    # (X'WX)^-1 from lm's QR of sqrt(w) X; the scores w u x are those of rows X * w
    A <- chol2inv(qr.R(fit$qr))
    X <- X * eq$w
  }
  wv <- if (weighted) eq$w else 1
  dimnames(A) <- list(colnames(X), colnames(X))
  df_res <- N - K - eq$absorbed
  out <- list(); df <- list()
  out$classical <- sum(wv * u^2) / df_res * A; df$classical <- df_res
  hc0 <- sandwich::vcovHC(fit, type = "HC0")
  out$hc0 <- hc0; df$hc0 <- df_res
  # hc1 counts the absorbed unit effects (CONVENTIONS.md; reference key HC1_lsdv)
  out$hc1 <- hc0 * N / df_res; df$hc1 <- df_res
  out$hc2 <- sandwich::vcovHC(fit, type = "HC2"); df$hc2 <- df_res
  out$hc3 <- sandwich::vcovHC(fit, type = "HC3"); df$hc3 <- df_res
  if (all(is.na(eq$gi))) {
    # between: one row per unit, so clustering by unit is one row per cluster
    G <- length(unique(eq$unit))
    cr0 <- sandwich::vcovCL(fit, cluster = eq$unit, type = "HC0", cadjust = FALSE)
    out$cluster0 <- cr0; df$cluster0 <- G - 1
    out$cluster <- cr0 * G / (G - 1) * (N - 1) / (N - K); df$cluster <- G - 1
  } else {
    G <- length(unique(eq$unit)); Gp <- length(unique(eq$gi))
    cr0 <- sandwich::vcovCL(fit, cluster = eq$unit, type = "HC0", cadjust = FALSE)
    out$cluster0 <- cr0; df$cluster0 <- G - 1
    # CR1 (Cameron & Miller 2015): G/(G-1) (N-1)/(N-K), unit effects not in K
    out$cluster <- cr0 * G / (G - 1) * (N - 1) / (N - K); df$cluster <- G - 1
    crp <- sandwich::vcovCL(fit, cluster = eq$gi, type = "HC0", cadjust = FALSE)
    out[["cluster-period"]] <- crp * Gp / (Gp - 1) * (N - 1) / (N - K)
    df[["cluster-period"]] <- Gp - 1
    # Cameron, Gelbach & Miller (2011): V_unit + V_period - V_cells, one factor, clipped
    cell <- paste(eq$unit, eq$gi)
    both0 <- A %*% (meat_cluster(X, u, eq$unit) + meat_cluster(X, u, eq$gi) -
                      meat_cluster(X, u, cell)) %*% A
    Gmin <- min(G, Gp)
    cl <- clip_psd(both0 * Gmin / (Gmin - 1) * (N - 1) / (N - K),
                   A %*% (meat_cluster(X, u, eq$unit) + meat_cluster(X, u, eq$gi)) %*% A)
    out[["cluster-both"]] <- cl$V; df[["cluster-both"]] <- Gmin - 1
    # Driscoll & Kraay (1998): period sums of the scores, Bartlett weights 1 - j/(L+1),
    # lags counted in grid steps, L = floor(T^(1/4)), T = periods in the equation
    Tn <- length(unique(eq$gi))
    H <- matrix(0, length(grid), K)
    Hs <- rowsum(X * u, eq$gi)
    H[as.integer(rownames(Hs)), ] <- Hs
    for (L in c(NA, 0, 3)) {
      key <- if (is.na(L)) "dk" else paste0("dk=", L)
      if (is.na(L)) L <- floor(Tn^(1 / 4))
      S <- crossprod(H)
      if (L >= 1) for (j in 1:min(L, length(grid) - 1)) {
        Gj <- crossprod(H[(j + 1):length(grid), , drop = FALSE],
                        H[1:(length(grid) - j), , drop = FALSE])
        S <- S + (1 - j / (L + 1)) * (Gj + t(Gj))
      }
      out[[key]] <- A %*% S %*% A; df[[key]] <- Tn - 1
    }
  }
  list(V = out, df = df, both_clipped = if (exists("cl", inherits = FALSE)) cl$clipped else NULL)
}

# ---- tests ----------------------------------------------------------------------------

wald <- function(b, V, terms, df2) {
  R <- diag(length(b))[match(terms, names(b)), , drop = FALSE]
  rb <- R %*% b
  # a clipped two-way covariance can leave no variance in a tested direction: weft must
  # then refuse the test (the driver checks that it does)
  # judged in the scaled basis D (R V R') D, D = diag(R V R')^-1/2, relative 1e-12, as
  # weft's CONVENTIONS.md "Decisions that must not depend on units of measure" asks
  M <- R %*% V %*% t(R)
  dg <- abs(diag(M)); D <- ifelse(dg > 0, 1 / sqrt(dg), 1)
  ev <- eigen(D * t(D * M), symmetric = TRUE, only.values = TRUE)$values
  if (max(abs(ev)) <= 0 || min(ev) <= 1e-12 * max(abs(ev))) return(list(singular = TRUE))
  W <- as.numeric(t(rb) %*% solve(R %*% V %*% t(R), rb))
  q <- length(terms)
  list(chi2 = W, q = q, p_chi2 = pchisq(W, q, lower.tail = FALSE),
       F = W / q, df1 = q, df2 = df2, p = pf(W / q, q, df2, lower.tail = FALSE))
}

# Auxiliary-regression heteroskedasticity tests on the estimated equation's residuals:
# Koenker (1981) and Breusch & Pagan (1979) via lmtest::bptest, White (1980) special
# and full forms as n R^2 of u^2 on the stated columns.
hetero <- function(eq, fit) {
  u2 <- residuals(fit)^2; N <- length(u2)
  Z <- eq$X[, intersect(eq$z, colnames(eq$X)), drop = FALSE]
  aux_stats <- function(W) {
    a <- lm(u2 ~ W)
    q <- a$rank - 1
    r2 <- summary(a)$r.squared
    Fs <- (r2 / q) / ((1 - r2) / (N - q - 1))
    list(lm = N * r2, df = q, p = pchisq(N * r2, q, lower.tail = FALSE),
         f = Fs, f_df1 = q, f_df2 = N - q - 1,
         f_p = pf(Fs, q, N - q - 1, lower.tail = FALSE), r2 = r2)
  }
  k <- aux_stats(Z)
  # bptest regresses the residuals of the model it is given: the estimated equation
  ek <- lmtest::bptest(fit, varformula = ~ Z, studentize = TRUE)
  eb <- lmtest::bptest(fit, varformula = ~ Z, studentize = FALSE)
  koenker <- k; koenker$lm <- unname(ek$statistic); koenker$p <- unname(ek$p.value)
  koenker$df <- unname(ek$parameter)
  bp <- k; bp$lm <- unname(eb$statistic); bp$p <- unname(eb$p.value)
  bp$df <- unname(eb$parameter)
  yhat <- fitted(fit)
  ws <- aux_stats(cbind(yhat, yhat^2))
  out <- list(koenker = koenker, bp = bp, "white-special" = ws)
  p <- ncol(Z)
  if (p * (p + 3) / 2 < N / 2) {
    cols <- list(Z)
    for (i in seq_len(p)) for (j in i:p) cols[[length(cols) + 1]] <- Z[, i] * Z[, j]
    out[["white-full"]] <- aux_stats(do.call(cbind, cols))
  }
  lapply(out, function(v) { v$r2 <- NULL; v })
}

# AR(1) of the residuals within units over grid-adjacent pairs; the level-error test
# with a CR1-by-unit standard error (Wooldridge 2010, sections 10.5.4 and 10.6.3).
serial <- function(eq, fit, est) {
  u <- residuals(fit)
  key <- paste(eq$unit, eq$gi)
  prev <- match(paste(eq$unit, eq$gi - 1), key)
  ok <- !is.na(prev)
  uc <- u[ok]; ul <- u[prev[ok]]; g <- eq$unit[ok]
  a <- lm(uc ~ ul)
  s <- summary(a)$coefficients
  np <- length(uc); G <- length(unique(g))
  cr0 <- sandwich::vcovCL(a, cluster = g, type = "HC0", cadjust = FALSE)
  se1 <- sqrt(cr0[2, 2] * G / (G - 1) * (np - 1) / (np - 2))
  se0 <- sqrt(cr0[2, 2])
  slope <- unname(coef(a)[2])
  out <- list(slope = slope, se = s[2, 2], t = s[2, 3], df = np - 2, p = s[2, 4],
              pairs = np, units = G)
  if (est %in% c("fd", "within")) {
    # T = periods among the rows of the estimated equation
    Tn <- length(unique(eq$gi))
    r0 <- if (est == "fd") -0.5 else -1 / (Tn - 1)
    Fv <- ((slope - r0) / se1)^2
    out <- c(out, list(level_null = r0, level_se = se1, level_f = Fv, level_df1 = 1,
                       level_df2 = G - 1, level_p = pf(Fv, 1, G - 1, lower.tail = FALSE),
                       level_se_cluster0 = se0))
  }
  out
}

# Hausman (1978) contrast of the one-way within fit with the random-effects fit on the
# same rows, classical covariances, raw statistic; and the Mundlak (1978) auxiliary
# regression (Wooldridge 2010 section 10.7.3) with a CR1 Wald test.
hausman <- function(periods) {
  ew <- build_equation("within", periods); fw <- lm(ew$y ~ ew$X - 1)
  er <- build_equation("random", periods); fr <- lm(er$y ~ er$X - 1)
  names(fw$coefficients) <- colnames(ew$X); names(fr$coefficients) <- colnames(er$X)
  Vw <- covariances(ew, fw)$V$classical; Vr <- covariances(er, fr)$V$classical
  cf <- intersect(x_names, colnames(ew$X))  # time-varying regressors, in both fits
  db <- coef(fw)[cf] - coef(fr)[cf]
  Vd <- Vw[cf, cf] - Vr[cf, cf]
  ev <- eigen(Vd, symmetric = TRUE)$values
  rank <- sum(abs(ev) > 1e-10 * max(abs(ev)))
  H <- as.numeric(t(db) %*% solve(Vd, db))
  q <- length(cf)
  # auxiliary regression on [X*, (1 - theta_i) xbar_i]
  th <- er$theta
  M <- sapply(cf, function(v) (1 - th) * unit_mean(d[[v]], d$unit))
  M <- matrix(M, nrow = nrow(d), dimnames = list(NULL, paste0("mean_", cf)))
  Xa <- cbind(er$X, M)
  fa <- lm(er$y ~ Xa - 1); names(fa$coefficients) <- colnames(Xa)
  N <- nrow(Xa); K <- ncol(Xa); G <- length(unique(d$unit))
  cr0 <- sandwich::vcovCL(fa, cluster = d$unit, type = "HC0", cadjust = FALSE)
  dimnames(cr0) <- list(colnames(Xa), colnames(Xa))
  w <- wald(coef(fa), cr0 * G / (G - 1) * (N - 1) / (N - K), colnames(M), G - 1)
  list(stat = H, df = q, p = pchisq(H, q, lower.tail = FALSE), rank = rank,
       positive_definite = all(ev > 0),
       aux_chi2 = w$chi2, aux_q = w$q, aux_p_chi2 = w$p_chi2,
       aux_f = w$F, aux_df1 = w$df1, aux_df2 = w$df2, aux_p = w$p)
}

# Do the units differ in level? F test of within against pooled OLS with an intercept and
# the same regressors and period indicators on the same rows.
effects_f <- function(eq, fit, periods) {
  ep <- build_equation("pooled", periods)
  fp <- lm(ep$y ~ ep$X - 1)
  ssr_p <- sum(residuals(fp)^2); df_p <- nrow(ep$X) - ncol(ep$X)
  ssr_w <- sum(residuals(fit)^2); df_w <- nrow(eq$X) - ncol(eq$X) - eq$absorbed
  Fv <- ((ssr_p - ssr_w) / (df_p - df_w)) / (ssr_w / df_w)
  list(f = Fv, df1 = df_p - df_w, df2 = df_w,
       p = pf(Fv, df_p - df_w, df_w, lower.tail = FALSE))
}

# ---- the explicit route, case by case -------------------------------------------------

run_case <- function(text) {
  words <- strsplit(text, "[ ,]+")[[1]]
  est <- words[1]; periods <- "periods" %in% words
  eq <- build_equation(est, periods, intercept = !("no-intercept" %in% words))
  fit <- if (weighted) lm(eq$y ~ eq$X - 1, weights = eq$w) else lm(eq$y ~ eq$X - 1)
  names(fit$coefficients) <- colnames(eq$X)
  b <- coef(fit)
  cv <- covariances(eq, fit)
  res <- list(coef = as.list(b), se = list(), wald = list())
  for (fam in names(cv$V)) {
    V <- cv$V[[fam]]; dimnames(V) <- list(names(b), names(b))
    res$se[[fam]] <- as.list(sqrt(diag(V)))
    res$wald[[fam]] <- wald(b, V, intersect(x_names, names(b)), cv$df[[fam]])
  }
  # the model's joint test of all regressors (issue 15) is this same Wald test
  res$joint <- res$wald
  if (!is.null(cv$both_clipped)) res$cluster_both_clipped <- as.numeric(cv$both_clipped)
  # a general restriction R b = r under the classical covariance: x1 - x2 = 0.25
  if (length(x_names) >= 2) {
    R <- matrix(0, 1, length(b)); R[match(x_names[1], names(b))] <- 1
    R[match(x_names[2], names(b))] <- -1
    V <- cv$V$classical
    rb <- R %*% b - 0.25
    W <- as.numeric(t(rb) %*% solve(R %*% V %*% t(R), rb))
    res$restriction <- list(chi2 = W, F = W, df1 = 1, df2 = cv$df$classical,
                            p = pf(W, 1, cv$df$classical, lower.tail = FALSE),
                            p_chi2 = pchisq(W, 1, lower.tail = FALSE))
  }
  if (weighted) return(res)  # weft refuses the tests below under weights
  res$hetero <- hetero(eq, fit)
  if (est != "between") res$serial <- serial(eq, fit, est)
  if (est == "random") res$hausman <- hausman(periods)
  if (est == "within") res$effects <- effects_f(eq, fit, periods)
  res
}

# ---- plm directly, where its conventions are weft's -----------------------------------

plm_case <- function(text) {
  words <- strsplit(text, "[ ,]+")[[1]]
  est <- words[1]; periods <- "periods" %in% words
  if ("no-intercept" %in% words || weighted) return(NULL)  # not compared with plm
  pd <- d
  dummies <- character(0)
  if (periods) {
    P <- period_indicators(d$gi, omit = if (est == "fd") 1:2 else 1)
    # plm differences whatever is in the formula; for fd use level indicators of the
    # grid (omit first) so the slopes agree, intercept and indicators are not compared
    if (est == "fd") P <- period_indicators(d$gi, omit = 1)
    dummies <- paste0("pdum", seq_len(ncol(P)))
    for (k in seq_len(ncol(P))) pd[[dummies[k]]] <- P[, k]
    dlab <- colnames(P)
  }
  # plm's fd differences consecutive rows: only comparable when every unit's used rows
  # sit on consecutive grid periods
  if (est == "fd") {
    gaps <- tapply(d$gi, d$unit, function(g) any(diff(sort(g)) != 1))
    if (any(gaps)) return(NULL)
  }
  pdf <- pdata.frame(pd[, c("unit", "gi", "y", x_names, dummies)], index = c("unit", "gi"))
  fml <- as.formula(paste("y ~", paste(c(x_names, dummies),
                                       collapse = " + ")))
  model <- c(pooled = "pooling", fd = "fd", within = "within", between = "between",
             random = "random")[[est]]
  m <- plm(fml, data = pdf, model = model)
  b <- coef(m)
  rename <- function(v) {
    n <- names(v); n[n == "(Intercept)"] <- "intercept"; n <- gsub("`", "", n)
    if (periods) n[n %in% dummies] <- dlab[match(n[n %in% dummies], dummies)]
    names(v) <- n; v
  }
  keep <- function(v) {
    v <- rename(v)
    if (est == "fd") v <- v[intersect(x_names, names(v))]  # fd: slopes only
    as.list(v)
  }
  out <- list(coef = keep(b), se = list())
  out$se$classical <- keep(sqrt(diag(vcov(m))))
  if (est != "between") {
    out$se$cluster0 <- keep(sqrt(diag(plm::vcovHC(m, method = "arellano", type = "HC0"))))
    out$se$hc0 <- keep(sqrt(diag(plm::vcovHC(m, method = "white1", type = "HC0"))))
    if (est %in% c("pooled", "random"))
      out$se$hc1 <- keep(sqrt(diag(plm::vcovHC(m, method = "white1", type = "HC1"))))
    if (est != "fd") {
      out$se$hc2 <- keep(sqrt(diag(plm::vcovHC(m, method = "white1", type = "HC2"))))
      out$se$hc3 <- keep(sqrt(diag(plm::vcovHC(m, method = "white1", type = "HC3"))))
    }
    # plm's "sss" = CR1 with K = columns of plm's design: weft's cluster
    out$se$cluster <- keep(sqrt(diag(plm::vcovHC(m, method = "arellano", type = "sss"))))
    # vcovSCC lags on the time index: equals grid-step lags when the periods of the
    # equation are consecutive grid periods
    gi_eq <- sort(unique(if (est == "fd") d$gi[duplicated(d$unit)] else d$gi))
    if (all(diff(gi_eq) == 1))
      out$se$dk <- keep(sqrt(diag(plm::vcovSCC(m, type = "HC0"))))
  }
  if (est == "within") {
    mp <- plm(fml, data = pdf, model = "pooling")
    ft <- pFtest(m, mp)
    out$effects <- list(f = unname(ft$statistic), df1 = unname(ft$parameter[1]),
                        df2 = unname(ft$parameter[2]), p = ft$p.value)
    # pwartest: CR0 F form of the level-error test, lags consecutive rows
    gaps <- tapply(d$gi, d$unit, function(g) any(diff(sort(g)) != 1))
    if (!periods && !any(gaps)) {
      wt <- pwartest(fml, data = pdf)
      out$serial_cluster0_level_f <- unname(wt$statistic)
    }
  }
  if (est == "fd" && !periods) {
    wt <- pwfdtest(fml, data = pdf, h0 = "fe")
    out$serial_cluster0_level_f <- unname(wt$statistic)
  }
  if (est == "random") {
    mw <- plm(fml, data = pdf, model = "within")
    ht <- phtest(mw, m)
    if (!periods) {
      # with period indicators phtest contrasts them too (df differs): compare only
      # without them
      out$hausman <- list(abs_stat = unname(ht$statistic), df = unname(ht$parameter))
      # plm's auxiliary regression adds the plain unit means xbar_i rather than the
      # quasi-demeaned (1 - theta_i) xbar_i of Wooldridge (2010, 10.7.3); the two span
      # the same columns only when theta is one number, i.e. on balanced panels
      if (length(unique(table(d$unit))) == 1) {
        ha <- phtest(fml, data = pdf, method = "aux")
        out$hausman_aux_classical_chi2 <- unname(ha$statistic)
      }
    }
  }
  if (est == "pooled" && !periods) {
    bt <- lmtest::bptest(lm(fml, data = pd))
    out$hetero <- list(koenker = list(lm = unname(bt$statistic), p = bt$p.value))
  }
  out
}

result <- list(explicit = list(), plm = list(), plm_errors = list(), software = list(
  R = paste(R.version$major, R.version$minor, sep = "."),
  plm = as.character(packageVersion("plm")),
  sandwich = as.character(packageVersion("sandwich")),
  lmtest = as.character(packageVersion("lmtest"))))
for (cs in cases) {
  result$explicit[[cs]] <- run_case(cs)
  # plm itself can fail where the explicit route does not (e.g. aliased unit means of
  # period indicators in its variance components): say so, the explicit route still
  # covers the case
  pc <- tryCatch(plm_case(cs), error = function(e) {
    result$plm_errors[[cs]] <<- conditionMessage(e); NULL })
  if (!is.null(pc)) result$plm[[cs]] <- pc
}
writeLines(toJSON(result, auto_unbox = TRUE, digits = NA, na = "null", pretty = TRUE),
           args[3])
