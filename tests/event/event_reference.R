# Independent computations of the event-study estimators, written from the papers with
# base R (lm, model.matrix) and sandwich (vcovCL), NOT from weft's code. Used by
# test_event_reference.cpp as the oracle.
#
# Usage: Rscript event_reference.R panel.csv out.json comparison anticipation before after
#   panel.csv: unit,period,y,d[,x1,...]; comparison "never" or "not-yet".
#
# Group-time (Callaway and Sant'Anna 2021, section 2-4; outcome regression of Sant'Anna
# and Zhao 2020, section 3.1 and their influence function of the "reg" panel estimator):
#   ATT(g,t) = mean over cohort g of (Y_t - Y_b) minus the comparison units' prediction
#   of that change from an OLS of the change on [1, x at b] (without controls: their
#   mean change). Base b = g-1-K when t >= g-K, else t-1 (the period before t).
#   Influence functions on the unit scale, aggregated by event time and overall with the
#   cohort-share weights and the influence of estimating those shares (their eq. for
#   the "simple"/dynamic aggregations). SE = sqrt(sum of squared influence / n^2).
# Imputation (Borusyak, Jaravel and Spiess 2024, Theorem 2 and 3): lm of untreated
#   observations on unit and period indicators (and x); tau = y - prediction; equal
#   weights by event time and cohort, cohort-size weights of cohort averages overall; v = w for treated, -Z0 (Z0'Z0)^-1 Z1' w for untreated (explicit dense
#   indicator matrix); residuals for treated = tau minus cohort-by-period mean of tau;
#   V = sum_i (sum_t v_it e_it)^2. Pre-trend: lm on untreated observations with
#   indicators of e = -before..-1-K, vcovCL by unit.
# twfe: lm(y ~ unit + period + event-time indicators (binned at the window ends, reference
#   -1-K) [+ x]) with vcovCL(cluster = unit, type = "HC0", cadjust = TRUE) times
#   (N-1)/(N-K) with K the coefficients other than the unit indicators and the intercept
#   (CONVENTIONS.md: absorbed unit effects not counted).
suppressMessages(library(sandwich))
suppressMessages(library(jsonlite))

args <- commandArgs(trailingOnly = TRUE)
d <- read.csv(args[1], stringsAsFactors = FALSE)
comparison <- args[3]
K <- as.integer(args[4])
before_arg <- as.integer(args[5]); after_arg <- as.integer(args[6])
xnames <- grep("^x", names(d), value = TRUE)

grid <- sort(unique(d$period))
d$p <- match(d$period, grid)
units <- sort(unique(d$unit))
first_treated <- tapply(ifelse(d$d == 1, d$p, Inf), d$unit, min)
first_obs <- tapply(d$p, d$unit, min)
cohort <- ifelse(is.infinite(first_treated), 0, first_treated)  # 0 = never
names(cohort) <- names(first_treated)
from_start <- cohort > 0 & cohort == first_obs[names(cohort)]
keep_units <- names(cohort)[!from_start]
d <- d[d$unit %in% keep_units, ]
cohort <- cohort[keep_units]
d$g <- cohort[as.character(d$unit)]
d$e <- ifelse(d$g > 0, d$p - d$g, NA)
n <- length(keep_units)
cohorts <- sort(unique(cohort[cohort > 0]))
emin <- min(d$e, na.rm = TRUE); emax <- max(d$e, na.rm = TRUE)
before <- if (before_arg >= 0) before_arg else max(0, -emin)
after <- if (after_arg >= 0) after_arg else max(0, emax)
before_twfe <- max(before, K + 1)

value_at <- function(col, p) { s <- d[d$p == p, ]; setNames(s[[col]], as.character(s$unit)) }

# ---- group-time ------------------------------------------------------------------------
cells <- list()
for (g in cohorts) {
  if (g - 1 - K < 1) next
  for (t in seq_along(grid)) {
    b <- if (t >= g - K) g - 1 - K else t - 1
    if (b < 1) next
    yt <- value_at("y", t); yb <- value_at("y", b)
    both <- intersect(names(yt), names(yb))
    gu <- cohort[both]
    treat <- both[gu == g]
    if (comparison == "never") ctrl <- both[gu == 0]
    else ctrl <- both[gu == 0 | (gu > max(t, b) + K & gu != g)]
    if (length(treat) == 0 || length(ctrl) == 0) next
    dy <- yt[both] - yb[both]
    if (length(xnames) > 0) {
      X <- cbind(1, sapply(xnames, function(x) value_at(x, b)[both]))
    } else X <- matrix(1, length(both), 1)
    rownames(X) <- both
    Xc <- X[ctrl, , drop = FALSE]
    fit <- lm.fit(Xc, dy[ctrl])
    beta <- fit$coefficients; beta[is.na(beta)] <- 0
    pred <- drop(X %*% beta)
    # Sant'Anna and Zhao (2020) reg estimator on the subsample of size m
    m <- length(treat) + length(ctrl)
    D <- as.numeric(c(rep(1, length(treat)), rep(0, length(ctrl))))
    ids <- c(treat, ctrl)
    dyv <- dy[ids]; pv <- pred[ids]; Xv <- X[ids, , drop = FALSE]
    att <- mean(D * dyv) / mean(D) - mean(D * pv) / mean(D)
    eta_t <- mean(D * dyv) / mean(D); eta_c <- mean(D * pv) / mean(D)
    wols_x <- (1 - D) * Xv
    wols_ex <- (1 - D) * (dyv - pv) * Xv
    XpX_inv <- solve(crossprod(wols_x, Xv) / m)
    lin_ols <- wols_ex %*% XpX_inv
    inf_treat <- (D * dyv - D * eta_t) / mean(D)
    inf_cont1 <- D * pv - D * eta_c
    M1 <- colMeans(D * Xv)
    inf_cont2 <- lin_ols %*% M1
    inf <- inf_treat - (inf_cont1 + inf_cont2) / mean(D)
    psi <- setNames(rep(0, n), keep_units)
    psi[ids] <- inf / m          # sum scale: estimate - truth ~ sum psi
    cells[[length(cells) + 1]] <- list(g = g, t = t, e = t - g, att = att, psi = psi)
  }
}
pg_of <- function(g) sum(cohort == g) / n
aggregate <- function(parts) {  # parts: list of (g, att, psi)
  pg <- sapply(parts, function(p) pg_of(p$g)); S <- sum(pg); w <- pg / S
  att <- sapply(parts, function(p) p$att)
  theta <- sum(w * att)
  psi <- Reduce(`+`, Map(function(p, wk) wk * p$psi, parts, w))
  # influence of the estimated shares (Callaway and Sant'Anna 2021, "wif")
  G <- cohort[keep_units]
  if1 <- sapply(seq_along(parts), function(k) ((G == parts[[k]]$g) - pg[k]) / S)
  if2 <- rowSums(sapply(seq_along(parts), function(k) (G == parts[[k]]$g) - pg[k])) %*% t(pg / S^2)
  wif <- if1 - if2
  psi <- psi + drop(wif %*% att) / n
  list(est = theta, psi = psi, se = sqrt(sum(psi^2)))
}
gt_event <- list(); pre_psi <- NULL; pre_est <- c()
for (e in -before:after) {
  parts <- Filter(function(c) c$e == e, cells)
  if (length(parts) == 0) next
  a <- aggregate(parts)
  gt_event[[length(gt_event) + 1]] <- list(e = e, est = a$est, se = a$se)
  if (e < -K) { pre_psi <- cbind(pre_psi, a$psi); pre_est <- c(pre_est, a$est) }
}
cohort_parts <- list(); gt_cohort <- list()
for (g in cohorts) {
  parts <- Filter(function(c) c$g == g && c$t >= g, cells)
  if (length(parts) == 0) next
  att <- mean(sapply(parts, function(p) p$att))
  psi <- Reduce(`+`, lapply(parts, function(p) p$psi)) / length(parts)
  cohort_parts[[length(cohort_parts) + 1]] <- list(g = g, att = att, psi = psi)
  gt_cohort[[length(gt_cohort) + 1]] <- list(cohort = grid[g], est = att, se = sqrt(sum(psi^2)))
}
ov <- aggregate(cohort_parts)
gt_pre <- if (length(pre_est) > 0) {
  V <- crossprod(pre_psi); list(stat = drop(t(pre_est) %*% solve(V, pre_est)), df = length(pre_est))
} else NULL
group_time <- list(event = gt_event, overall = list(est = ov$est, se = ov$se), cohorts = gt_cohort, pre = gt_pre)

# ---- imputation ----------------------------------------------------------------------
d$treated <- !is.na(d$e) & d$e >= -K
d$uf <- factor(d$unit); d$pf <- factor(d$period)
d0 <- d[!d$treated, ]; d1 <- d[d$treated, ]
d1 <- d1[d1$period %in% d0$period & d1$unit %in% d0$unit, ]
rhs <- paste(c("uf", "pf", xnames), collapse = " + ")
Z0 <- model.matrix(as.formula(paste("~", rhs)), d0)
Z1 <- model.matrix(as.formula(paste("~", rhs)), d1)
fit0 <- lm.fit(Z0, d0$y)
ok <- !is.na(fit0$coefficients)
Z0 <- Z0[, ok, drop = FALSE]; Z1 <- Z1[, ok, drop = FALSE]
coef0 <- fit0$coefficients[ok]
d1$tau <- d1$y - drop(Z1 %*% coef0)
res0 <- d0$y - drop(Z0 %*% coef0)
cellmean <- ave(d1$tau, d1$g, d1$p)
res1 <- d1$tau - cellmean
Z0Z0inv <- solve(crossprod(Z0))
imp_effect <- function(sel, w = rep(1, length(sel))) {
  if (!any(sel)) return(NULL)
  w1 <- ifelse(sel, w, 0); w1 <- w1 / sum(w1)
  v0 <- -drop(Z0 %*% (Z0Z0inv %*% crossprod(Z1, w1)))
  psi <- tapply(c(w1 * res1, v0 * res0), c(as.character(d1$unit), as.character(d0$unit)), sum)
  list(est = sum(w1 * d1$tau), se = sqrt(sum(psi^2)))
}
imp_event <- list()
for (e in -K:after) {
  r <- imp_effect(d1$e == e)
  if (!is.null(r)) imp_event[[length(imp_event) + 1]] <- list(e = e, est = r$est, se = r$se)
}
imp_cohort <- list()
for (g in cohorts) {
  r <- imp_effect(d1$e >= 0 & d1$g == g)
  if (!is.null(r)) imp_cohort[[length(imp_cohort) + 1]] <- list(cohort = grid[g], est = r$est, se = r$se)
}
# overall: cohort averages weighted by cohort size (n_g / post rows of g per row)
post_rows <- table(d1$g[d1$e >= 0])
imp_overall <- imp_effect(d1$e >= 0, sapply(seq_len(nrow(d1)), function(k)
  if (d1$e[k] >= 0) sum(cohort == d1$g[k]) / post_rows[[as.character(d1$g[k])]] else 0))
cr1 <- function(fit, data, absorbed) {
  V <- vcovCL(fit, cluster = data$unit, type = "HC0", cadjust = TRUE)
  N <- nrow(data); Kx <- fit$rank - absorbed
  V * (N - 1) / (N - Kx)
}
pre_names <- c()
for (e in if (before >= K + 1) -before:(-1 - K) else integer(0)) {
  nm <- paste0("pre", -e)
  d0[[nm]] <- as.numeric(!is.na(d0$e) & d0$e == e)
  if (sum(d0[[nm]]) > 0) pre_names <- c(pre_names, nm)
}
imp_pre_event <- list(); imp_pre <- NULL
if (length(pre_names) > 0) {
  f <- lm(as.formula(paste("y ~", paste(c("uf", "pf", pre_names, xnames), collapse = " + "))), d0)
  V <- cr1(f, d0, length(unique(d0$unit)))
  b <- coef(f)[pre_names]; okp <- !is.na(b); b <- b[okp]
  Vp <- V[names(b), names(b), drop = FALSE]
  for (nm in names(b)) imp_pre_event[[length(imp_pre_event) + 1]] <- list(e = -as.integer(sub("pre", "", nm)), est = unname(b[nm]), se = sqrt(Vp[nm, nm]))
  imp_pre <- list(stat = drop(t(b) %*% solve(Vp, b)), df = length(b))
}
imputation <- list(event = c(imp_pre_event, imp_event), overall = imp_overall, cohorts = imp_cohort, pre = imp_pre)

# ---- twfe ------------------------------------------------------------------------------
ref <- -1 - K
ev <- c()
for (e in -before_twfe:after) {
  if (e == ref) next
  nm <- paste0("ev", ifelse(e < 0, paste0("m", -e), e))
  eb <- pmin(pmax(d$e, -before_twfe), after)
  d[[nm]] <- as.numeric(!is.na(eb) & eb == e)
  ev <- c(ev, setNames(e, nm))
}
f <- lm(as.formula(paste("y ~", paste(c("uf", "pf", names(ev), xnames), collapse = " + "))), d)
V <- cr1(f, d, n)
b <- coef(f)[names(ev)]
tw_event <- list(); pre_b <- c()
for (nm in names(ev)) if (!is.na(b[nm])) {
  tw_event[[length(tw_event) + 1]] <- list(e = unname(ev[nm]), est = unname(b[nm]), se = sqrt(V[nm, nm]))
  if (ev[nm] < -K) pre_b <- c(pre_b, b[nm])
}
tw_pre <- if (length(pre_b) > 0) { Vp <- V[names(pre_b), names(pre_b), drop = FALSE]
  list(stat = drop(t(pre_b) %*% solve(Vp, pre_b)), df = length(pre_b)) } else NULL
d$post <- as.numeric(!is.na(d$e) & d$e >= 0)
d$antic <- as.numeric(!is.na(d$e) & d$e < 0 & d$e >= -K)
extra <- if (K > 0) "antic" else c()
f <- lm(as.formula(paste("y ~", paste(c("uf", "pf", "post", extra, xnames), collapse = " + "))), d)
V <- cr1(f, d, n)
tw_overall <- list(est = unname(coef(f)["post"]), se = sqrt(V["post", "post"]))
tw_cohort <- list(); cn <- c()
for (g in cohorts) { nm <- paste0("post", g); d[[nm]] <- d$post * (d$g == g); cn <- c(cn, nm) }
f <- lm(as.formula(paste("y ~", paste(c("uf", "pf", cn, extra, xnames), collapse = " + "))), d)
V <- cr1(f, d, n)
for (k in seq_along(cohorts)) if (!is.na(coef(f)[cn[k]]))
  tw_cohort[[length(tw_cohort) + 1]] <- list(cohort = grid[cohorts[k]], est = unname(coef(f)[cn[k]]), se = sqrt(V[cn[k], cn[k]]))
twfe <- list(event = tw_event, overall = tw_overall, cohorts = tw_cohort, pre = tw_pre)

writeLines(toJSON(list(group_time = group_time, imputation = imputation, twfe = twfe),
                  auto_unbox = TRUE, digits = NA, null = "null"), args[2])
