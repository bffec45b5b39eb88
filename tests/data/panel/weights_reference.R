# Reference values for weft's observation weights (CONVENTIONS.md "Observation weights"),
# written to weights_reference.json beside this script. Run by hand from the repository
# root:  Rscript tests/data/panel/weights_reference.R   (the build never runs R).
#
# Data: grunfeld.csv (the Grunfeld panel as shipped in R plm, 10 firms, 1935-1954) with
# an invented weight column w (uniform on [0.2, 3] from a fixed seed, 3 decimals; two
# rows set to 0), written to grunfeld_weighted.csv.
#
# Every estimated equation is built here by hand with weft's rules and fitted with R's
# lm(weights = ); covariances from sandwich (vcovHC, vcovCL, vcovPL), which read the
# weights back from the lm fit (estfun.lm: w u x; hatvalues: weighted leverage); a
# second source, estimatr's lm_robust(weights = ), for pooled, fd and between. Rules:
#  - a row with weight 0 is left out before anything else (not in N, no difference is
#    formed across it);
#  - pooled: lm(inv ~ value + capital [+ factor(year)], weights = w);
#  - fd: differences of rows in adjacent years of one firm, weighted by the later row's
#    weight, period indicators of the later year (the first two years omitted);
#  - within: the weighted dummy-variable regression lm(inv ~ value + capital
#    [+ factor(year)] + factor(firm), weights = w) for the estimates, classical, hc0,
#    hc1 and the unit effects; hc2, hc3 and the cluster families from the explicit
#    equation (y and x minus their weighted unit means, no intercept, weights w), whose
#    leverages and K are weft's (CONVENTIONS.md "Standard errors": within's h_ii from the
#    demeaned design, unit effects not in the cluster K);
#  - between: unit means weighted within the unit, regressed with unit weight = the mean
#    of the unit's weights.
suppressMessages({ library(sandwich); library(estimatr); library(jsonlite) })
dir <- "tests/data/panel"

gr <- read.csv(file.path(dir, "grunfeld.csv"))
set.seed(20261205)
gr$w <- round(runif(nrow(gr), 0.2, 3), 3)
gr$w[gr$firm == 3 & gr$year == 1940] <- 0
gr$w[gr$firm == 7 & gr$year == 1954] <- 0
write.csv(gr, file.path(dir, "grunfeld_weighted.csv"), row.names = FALSE, quote = FALSE)
gr <- read.csv(file.path(dir, "grunfeld_weighted.csv"))
d <- gr[gr$w > 0, ]
d <- d[order(d$firm, d$year), ]

wmean <- function(v, g, w) ave(v * w, g, FUN = sum) / ave(w, g, FUN = sum)

# Cameron, Gelbach & Miller (2011): V_unit + V_period - V_cells (CR0 each), one factor
# Gmin/(Gmin-1) (N-1)/(N-K); negative eigenvalues set to 0 in the scaled basis
# S = D V D, D = diag(V_unit + V_period)^-1/2, and only when S's smallest eigenvalue is
# below -1e-10 of its largest (weft's CONVENTIONS.md "Decisions that must not depend on
# units of measure"; the same rule as tests/oracle/oracle_reference.R). min_eig is V's
# smallest eigenvalue before clipping.
clip_psd <- function(V, ref) {
  D <- 1 / sqrt(abs(diag(ref)))
  S <- D * t(D * V)
  e <- eigen((S + t(S)) / 2, symmetric = TRUE)
  W <- V
  if (min(e$values) / max(abs(e$values)) < -1e-10)
    W <- (e$vectors %*% (pmax(e$values, 0) * t(e$vectors))) / outer(D, D)
  dimnames(W) <- dimnames(V)
  W
}
cluster_both <- function(fit, unit, period) {
  N <- nobs(fit); K <- length(coef(fit))
  vu <- vcovCL(fit, cluster = unit, type = "HC0", cadjust = FALSE)
  vp <- vcovCL(fit, cluster = period, type = "HC0", cadjust = FALSE)
  v0 <- vu + vp - vcovHC(fit, type = "HC0")
  Gmin <- min(length(unique(unit)), length(unique(period)))
  list(V = v0 * Gmin / (Gmin - 1) * (N - 1) / (N - K), ref = vu + vp)
}

# One family: the covariance of the explicit equation `fit` (df as CONVENTIONS.md).
se_of <- function(V, terms) unname(sqrt(diag(V))[terms])

families <- function(fit, unit, period, absorbed = 0, dummy = NULL) {
  N <- nobs(fit); K <- length(coef(fit)); G <- length(unique(unit))
  lev <- if (is.null(dummy)) fit else dummy  # classical, hc0, hc1: the dummy fit for within
  out <- list(
    classical = list(V = vcov(lev), df = N - K - absorbed),
    hc0 = list(V = vcovHC(lev, type = "HC0"), df = N - K - absorbed),
    hc1 = list(V = vcovHC(lev, type = "HC1"), df = N - K - absorbed),
    hc2 = list(V = vcovHC(fit, type = "HC2"), df = N - K - absorbed),
    hc3 = list(V = vcovHC(fit, type = "HC3"), df = N - K - absorbed),
    cluster = list(V = vcovCL(fit, cluster = unit, type = "HC1"), df = G - 1),
    cluster0 = list(V = vcovCL(fit, cluster = unit, type = "HC0", cadjust = FALSE), df = G - 1))
  if (!is.null(period)) {
    Tn <- length(unique(period))
    out[["cluster-period"]] <- list(V = vcovCL(fit, cluster = period, type = "HC1"), df = Tn - 1)
    both <- cluster_both(fit, unit, period)
    out[["cluster-both"]] <- list(V = clip_psd(both$V, both$ref), df = min(G, Tn) - 1,
                                  min_eig = min(eigen(both$V, only.values = TRUE)$values))
    # Driscoll & Kraay (1998) as sandwich's panel Newey-West: period sums of the scores,
    # Bartlett weights 1 - j/(L+1), L = floor(T^(1/4)), no finite-sample factor
    L <- floor(Tn^(1 / 4))
    out$dk <- list(V = vcovPL(fit, cluster = unit, order.by = period, lag = L, kernel = "Bartlett",
                              adjust = FALSE, aggregate = TRUE), df = Tn - 1)
  }
  out
}

one_case <- function(fit, terms, weft_terms, unit, period, absorbed = 0, dummy = NULL, robust = NULL) {
  lev <- if (is.null(dummy)) fit else dummy
  fam <- families(fit, unit, period, absorbed, dummy)
  slopes <- c("value", "capital")
  res <- list(terms = weft_terms, estimate = unname(coef(lev)[terms]), nobs = nobs(fit),
              ssr = sum(weights(fit) * residuals(fit)^2))
  for (f in names(fam)) {
    V <- fam[[f]]$V
    b <- coef(fit)[slopes]
    Vs <- V[slopes, slopes]
    res[[f]] <- list(se = se_of(V, terms), df = fam[[f]]$df,
                     wald = unname(drop(t(b) %*% solve(Vs, b))))
    if (!is.null(fam[[f]]$min_eig)) res[[f]]$min_eig <- fam[[f]]$min_eig
  }
  if (!is.null(robust)) res$estimatr <- robust
  res
}

period_terms <- function(fit, prefix) {
  nm <- names(coef(fit))
  p <- nm[startsWith(nm, prefix)]
  list(r = p, weft = paste("period", substring(p, nchar(prefix) + 1)))
}

estimatr_of <- function(formula, data, wname, cluster) {
  data$w_ <- data[[wname]]; data$cl_ <- cluster
  out <- list()
  for (t in c("HC0", "HC1", "HC2", "HC3"))
    out[[tolower(t)]] <- unname(lm_robust(formula, data = data, weights = w_, se_type = t)$std.error)
  out$cluster <- unname(lm_robust(formula, data = data, weights = w_, clusters = cl_, se_type = "stata")$std.error)
  out$cluster0 <- unname(lm_robust(formula, data = data, weights = w_, clusters = cl_, se_type = "CR0")$std.error)
  out
}

cases <- list()
base <- c("(Intercept)", "value", "capital")
base_weft <- c("intercept", "value", "capital")
for (periods in c(FALSE, TRUE)) {
  sfx <- if (periods) "_periods" else ""
  # ---- pooled
  f <- if (periods) inv ~ value + capital + factor(year) else inv ~ value + capital
  fit <- lm(f, data = d, weights = w)
  pt <- if (periods) period_terms(fit, "factor(year)") else list(r = NULL, weft = NULL)
  rob <- if (!periods) estimatr_of(f, d, "w", d$firm) else NULL
  cases[[paste0("pooled", sfx)]] <- c(one_case(fit, c(base, pt$r), c(base_weft, pt$weft), d$firm, d$year,
                                               robust = rob),
                                      list(r2 = summary(fit)$r.squared, adj_r2 = summary(fit)$adj.r.squared,
                                           residual_first = unname(residuals(fit)[1]),
                                           fitted_first = unname(fitted(fit)[1])))
  # ---- fd: adjacent years of one firm, weight of the later row
  later <- which(c(FALSE, diff(d$year) == 1 & diff(d$firm) == 0))
  fdd <- data.frame(firm = d$firm[later], year = d$year[later], w = d$w[later],
                    inv = d$inv[later] - d$inv[later - 1], value = d$value[later] - d$value[later - 1],
                    capital = d$capital[later] - d$capital[later - 1])
  fit <- lm(f, data = fdd, weights = w)
  pt <- if (periods) period_terms(fit, "factor(year)") else list(r = NULL, weft = NULL)
  rob <- if (!periods) estimatr_of(f, fdd, "w", fdd$firm) else NULL
  cases[[paste0("fd", sfx)]] <- c(one_case(fit, c(base, pt$r), c(base_weft, pt$weft), fdd$firm, fdd$year,
                                           robust = rob),
                                  list(r2 = summary(fit)$r.squared))
  # ---- within: the weighted dummy-variable regression and its explicit equation
  fdum <- if (periods) inv ~ value + capital + factor(year) + factor(firm) else inv ~ value + capital + factor(firm)
  dummy <- lm(fdum, data = d, weights = w)
  dm <- data.frame(firm = d$firm, year = d$year, w = d$w,
                   inv = d$inv - wmean(d$inv, d$firm, d$w),
                   value = d$value - wmean(d$value, d$firm, d$w),
                   capital = d$capital - wmean(d$capital, d$firm, d$w))
  xs <- c("value", "capital")
  if (periods) {
    for (yr in sort(unique(d$year))[-1]) {
      nm <- paste0("p", yr)
      dm[[nm]] <- as.numeric(d$year == yr) - wmean(as.numeric(d$year == yr), d$firm, d$w)
      xs <- c(xs, nm)
    }
  }
  fit <- lm(reformulate(c("0", xs), "inv"), data = dm, weights = w)
  pt <- if (periods) period_terms(dummy, "factor(year)") else list(r = NULL, weft = NULL)
  case <- one_case(fit, c("value", "capital", sub("factor(year)", "p", pt$r, fixed = TRUE)),
                   c("value", "capital", pt$weft), d$firm, d$year, absorbed = length(unique(d$firm)))
  # estimates, classical, hc0, hc1 from the dummy-variable regression itself
  keep <- c("value", "capital", pt$r)
  case$estimate <- unname(coef(dummy)[keep])
  for (fam in c("classical", "hc0", "hc1")) {
    V <- switch(fam, classical = vcov(dummy), hc0 = vcovHC(dummy, type = "HC0"), hc1 = vcovHC(dummy, type = "HC1"))
    case[[fam]]$se <- se_of(V, keep)
    b <- coef(dummy)[c("value", "capital")]
    case[[fam]]$wald <- unname(drop(t(b) %*% solve(V[c("value", "capital"), c("value", "capital")], b)))
  }
  cf <- coef(dummy)
  firms <- sort(unique(d$firm))
  case$unit_effects <- unname(cf["(Intercept)"] + c(0, cf[paste0("factor(firm)", firms[-1])]))
  if (periods) case$unit_effects <- NULL  # unit effects are reported without period indicators only
  case$r2 <- summary(fit)$r.squared
  cases[[paste0("within", sfx)]] <- case
}
# ---- between: weighted unit means, unit weight = mean of the unit's weights
firms <- sort(unique(d$firm))
bm <- data.frame(firm = firms,
                 w = as.vector(tapply(d$w, d$firm, mean)[as.character(firms)]),
                 inv = as.vector(tapply(d$inv * d$w, d$firm, sum) / tapply(d$w, d$firm, sum)),
                 value = as.vector(tapply(d$value * d$w, d$firm, sum) / tapply(d$w, d$firm, sum)),
                 capital = as.vector(tapply(d$capital * d$w, d$firm, sum) / tapply(d$w, d$firm, sum)))
fit <- lm(inv ~ value + capital, data = bm, weights = w)
cases$between <- c(one_case(fit, base, base_weft, bm$firm, NULL,
                            robust = estimatr_of(inv ~ value + capital, bm, "w", bm$firm)),
                   list(r2 = summary(fit)$r.squared))
cases$software <- list(R = R.version.string, sandwich = as.character(packageVersion("sandwich")),
                       estimatr = as.character(packageVersion("estimatr")))
writeLines(toJSON(cases, digits = NA, auto_unbox = TRUE, pretty = TRUE),
           file.path(dir, "weights_reference.json"))
