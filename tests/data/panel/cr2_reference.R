# Reference values for weft's cr2 (bias-reduced cluster covariance by unit, Satterthwaite
# df per term, HTZ joint tests), written to cr2_reference.json beside this script.
# Oracles: R clubSandwich (coef_test(..., vcov = "CR2", test = "Satterthwaite"),
# Wald_test(..., test = c("HTZ", "chi-sq"))), estimatr (lm_robust, se_type = "CR2"),
# plm for the within and first-difference fits. Run by hand from the repository root:
#   Rscript tests/data/panel/cr2_reference.R
# (the build never runs R). Data: grunfeld.csv (Grunfeld panel, 10 firms),
# cr2_leverage.csv (random numbers, made once by hand for the leverage-1 case) and
# few_clusters.csv, written here from a fixed seed (random data for the oracle
# comparison: both sides fit the same numbers; its column w holds invented weights);
# grunfeld_weighted.csv (written by weights_reference.R) for the weighted cases.
suppressMessages({
  library(plm); library(clubSandwich); library(estimatr); library(jsonlite)
})
dir <- "tests/data/panel"

set.seed(20261204)
G <- 6
sizes <- c(4, 7, 5, 9, 6, 8)
few <- do.call(rbind, lapply(seq_len(G), function(g) {
  t <- seq_len(sizes[g])
  x1 <- rnorm(sizes[g], mean = g / 3) + 0.2 * t
  x2 <- rexp(sizes[g]) * (1 + (g %% 2))
  u <- rnorm(1, sd = 1.5)
  y <- 1 + 0.7 * x1 - 0.4 * x2 + u + rnorm(sizes[g], sd = 0.5 + g / 4)
  data.frame(unit = g, period = 2000 + t, y = y, x1 = x1, x2 = x2)
}))
few[] <- lapply(few, function(v) sprintf("%.17g", v))
write.csv(few, file.path(dir, "few_clusters.csv"), row.names = FALSE, quote = FALSE)
few <- read.csv(file.path(dir, "few_clusters.csv"))
# invented weights for the weighted cases (their own seed, drawn after the data above,
# so the columns y, x1, x2 are those of the unweighted cases)
set.seed(20261207)
few[] <- lapply(few, function(v) sprintf("%.17g", v))
few$w <- sprintf("%.3f", runif(nrow(few), 0.3, 2.5))
write.csv(few, file.path(dir, "few_clusters.csv"), row.names = FALSE, quote = FALSE)
few <- read.csv(file.path(dir, "few_clusters.csv"))
gr <- read.csv(file.path(dir, "grunfeld.csv"))

one_case <- function(fit, cluster, terms, joint) {
  # plm fits find their unit clusters themselves (cluster = NULL)
  v <- if (is.null(cluster)) vcovCR(fit, type = "CR2") else vcovCR(fit, cluster = cluster, type = "CR2")
  ct <- coef_test(fit, vcov = v, test = "Satterthwaite")
  keep <- rownames(ct) %in% terms
  wt <- Wald_test(fit, constraints = constrain_zero(joint, reg_ex = FALSE), vcov = v,
                  test = c("HTZ", "chi-sq"))
  htz <- wt[wt$test == "HTZ", ]
  chi <- wt[wt$test == "chi-sq", ]
  list(terms = rownames(ct)[keep], estimate = ct$beta[keep], se = ct$SE[keep],
       df = ct$df_Satt[keep], p = ct$p_Satt[keep],
       joint = list(terms = joint, F = htz$Fstat, df1 = htz$df_num, df2 = htz$df_denom,
                    p = htz$p_val, chi2 = chi$Fstat * chi$df_num, chi2_df = chi$df_num,
                    chi2_p = chi$p_val))
}

cases <- list()
make_cases <- function(d, y, xs, unit, period, prefix) {
  f <- reformulate(xs, y)
  pd <- pdata.frame(d, index = c(unit, period))
  out <- list()
  pooled <- lm(f, data = d)
  out[[paste0(prefix, "_pooled")]] <- one_case(pooled, d[[unit]], c("(Intercept)", xs), xs)
  d$cl_ <- d[[unit]]
  er <- lm_robust(f, data = d, clusters = cl_, se_type = "CR2")
  out[[paste0(prefix, "_pooled")]]$estimatr <- list(se = unname(er$std.error), df = unname(er$df))
  within <- plm(f, data = pd, model = "within")
  out[[paste0(prefix, "_within")]] <- one_case(within, NULL, xs, xs)
  dummies <- lm(reformulate(c(xs, paste0("factor(", unit, ")")), y), data = d)
  out[[paste0(prefix, "_within")]]$dummy_fit <- one_case(dummies, d[[unit]], xs, xs)
  fdfit <- plm(f, data = pd, model = "fd")
  out[[paste0(prefix, "_fd")]] <- one_case(fdfit, NULL, c("(Intercept)", xs), xs)
  # the same first differences by hand, through lm and estimatr
  dd <- do.call(rbind, lapply(split(d, d[[unit]]), function(s) {
    s <- s[order(s[[period]]), ]
    keep <- diff(s[[period]]) == 1
    data.frame(unit = s[[unit]][-1][keep],
               dy = diff(s[[y]])[keep],
               sapply(xs, function(x) diff(s[[x]])[keep], simplify = FALSE))
  }))
  efd <- lm_robust(reformulate(xs, "dy"), data = dd, clusters = unit, se_type = "CR2")
  out[[paste0(prefix, "_fd")]]$estimatr <- list(se = unname(efd$std.error), df = unname(efd$df))
  means <- aggregate(d[c(y, xs)], by = list(unit = d[[unit]]), FUN = mean)
  between <- lm(f, data = means)
  out[[paste0(prefix, "_between")]] <- one_case(between, means$unit, c("(Intercept)", xs), xs)
  out
}
cases <- c(make_cases(gr, "inv", c("value", "capital"), "firm", "year", "grunfeld"),
           make_cases(few, "y", c("x1", "x2"), "unit", "period", "few"))

# ---- Weighted cases. Weights are precision weights: weft fits OLS on the rows
# sqrt(w) [x, y] (weights_reference.R has the rows of each estimator) and takes cr2 on
# that scaled equation, A_g the symmetric inverse square root of I - H_gg of the scaled
# design. The reference is clubSandwich on the same scaled equation as an unweighted lm
# (working model Phi = I in the scaled rows, i.e. Var(u_i) proportional to 1/w_i in the
# original rows). For information the JSON also keeps clubSandwich on the weighted lm
# itself: with inverse_var = TRUE (target 1/w; Pustejovsky and Tipton 2018 take the
# square root in the original rows, A_g = D_g' B_g^-1/2 D_g, which differs from the
# scaled-row root when the weights vary within a cluster) and with its default for a
# weighted lm (inverse_var = FALSE, target = identity), which estimatr's weighted CR2
# also uses.
scaled_fit <- function(ys, X, s) {
  sd_ <- data.frame(ys_ = s * ys, s * X, check.names = FALSE)
  lm(reformulate(paste0("`", colnames(X), "`"), "ys_", intercept = FALSE), data = sd_)
}
rename_terms <- function(case) {
  case$terms <- sub("`", "", sub("`$", "", case$terms))
  case
}
weighted_case <- function(ys, X, w, cluster, terms, joint, raw = NULL) {
  fit <- scaled_fit(ys, X, sqrt(w))
  names(fit$coefficients) <- colnames(X)
  out <- one_case(fit, cluster, terms, joint)
  if (!is.null(raw)) {
    v_iv <- vcovCR(raw, cluster = cluster, type = "CR2", inverse_var = TRUE)
    v_df <- vcovCR(raw, cluster = cluster, type = "CR2")
    ct_iv <- coef_test(raw, vcov = v_iv, test = "Satterthwaite")
    ct_df <- coef_test(raw, vcov = v_df, test = "Satterthwaite")
    keep <- rownames(ct_iv) %in% terms
    out$weighted_lm_inverse_var <- list(se = ct_iv$SE[keep], df = ct_iv$df_Satt[keep])
    out$weighted_lm_default <- list(se = ct_df$SE[keep], df = ct_df$df_Satt[keep])
  }
  out
}
design <- function(d, xs, intercept = TRUE, unit = NULL) {
  X <- as.matrix(d[xs])
  if (intercept) X <- cbind(`(Intercept)` = 1, X)
  if (!is.null(unit)) X <- cbind(X, model.matrix(~ 0 + factor(d[[unit]])))
  X
}
make_weighted <- function(d, y, xs, unit, period, prefix) {
  d <- d[d$w > 0, ]
  d <- d[order(d[[unit]], d[[period]]), ]
  f <- reformulate(xs, y)
  all_terms <- c("(Intercept)", xs)
  out <- list()
  raw <- lm(f, data = d, weights = w)
  out[[paste0(prefix, "_pooled_weighted")]] <- weighted_case(d[[y]], design(d, xs), d$w, d[[unit]],
                                                             all_terms, xs, raw)
  d$cl_ <- d[[unit]]
  er <- lm_robust(f, data = d, weights = w, clusters = cl_, se_type = "CR2")
  out[[paste0(prefix, "_pooled_weighted")]]$estimatr_weighted <- list(se = unname(er$std.error),
                                                                      df = unname(er$df))
  # within: the explicit dummy-variable regression (full design, unit indicators scaled
  # by sqrt(w) like every column)
  rawd <- lm(reformulate(c(xs, paste0("factor(", unit, ")")), y), data = d, weights = w)
  out[[paste0(prefix, "_within_weighted")]] <- weighted_case(d[[y]], design(d, xs, FALSE, unit), d$w,
                                                             d[[unit]], xs, xs, rawd)
  # fd: adjacent periods of one unit, the weight of the later row
  later <- which(c(FALSE, diff(d[[period]]) == 1 & diff(d[[unit]]) == 0))
  fdd <- data.frame(unit = d[[unit]][later], w = d$w[later], dy = d[[y]][later] - d[[y]][later - 1])
  for (x in xs) fdd[[x]] <- d[[x]][later] - d[[x]][later - 1]
  rawf <- lm(reformulate(xs, "dy"), data = fdd, weights = w)
  out[[paste0(prefix, "_fd_weighted")]] <- weighted_case(fdd$dy, design(fdd, xs), fdd$w, fdd$unit,
                                                         all_terms, xs, rawf)
  # between: unit means weighted within the unit, the unit weighted by its mean weight
  wm <- function(v) tapply(v * d$w, d[[unit]], sum) / tapply(d$w, d[[unit]], sum)
  bd <- data.frame(unit = sort(unique(d[[unit]])), w = as.vector(tapply(d$w, d[[unit]], mean)))
  for (v in c(y, xs)) bd[[v]] <- as.vector(wm(d[[v]]))
  rawb <- lm(f, data = bd, weights = w)
  out[[paste0(prefix, "_between_weighted")]] <- weighted_case(bd[[y]], design(bd, xs), bd$w, bd$unit,
                                                              all_terms, xs, rawb)
  out
}
grw <- read.csv(file.path(dir, "grunfeld_weighted.csv"))
cases <- c(cases, make_weighted(grw, "inv", c("value", "capital"), "firm", "year", "grunfeld"),
           make_weighted(few, "y", c("x1", "x2"), "unit", "period", "few"))
# A period present in one unit only (cr2_leverage.csv: 7 units, periods 1-5, and period
# 6 for unit 3 alone): its indicator has leverage 1 within that cluster, so the CR2
# adjustment takes the pseudo-inverse (clubSandwich: eigenvalues below 1e-12 set to 0).
lev <- read.csv(file.path(dir, "cr2_leverage.csv"))
lev_fit <- lm(y ~ x1 + x2 + factor(period), data = lev)
lev_case <- one_case(lev_fit, lev$unit, names(coef(lev_fit)), c("x1", "x2"))
lev_case$terms <- sub("factor\\(period\\)", "period ", sub("\\(Intercept\\)", "intercept", lev_case$terms))
cases$leverage_pooled_periods <- lev_case
cases$software <- list(R = R.version.string,
                       clubSandwich = as.character(packageVersion("clubSandwich")),
                       estimatr = as.character(packageVersion("estimatr")),
                       plm = as.character(packageVersion("plm")))
writeLines(toJSON(cases, digits = NA, auto_unbox = TRUE, pretty = TRUE),
           file.path(dir, "cr2_reference.json"))
