# The cr2 side of weft's live oracle test: R clubSandwich on the same random panels.
#
# Usage: Rscript cr2_oracle.R panel.csv cases.txt out.json
#
# For every case of pooled, fd, within and between (with and without period indicators,
# with and without intercept, as listed in cases.txt; random is left out: clubSandwich
# would use another working model for it), the estimated equation of CONVENTIONS.md is
# built here by hand on the panel's own period grid and fitted with lm():
#   pooled: y on [1, x, period indicators (first present omitted with an intercept)];
#   fd: differences of consecutive used rows of a unit in adjacent grid periods, on
#       [1, dx, indicators of the later period (first present omitted)];
#   within: the dummy-variable regression, y on [x, period indicators (first present
#       omitted), one indicator per unit]: the full design, so clubSandwich computes the
#       CR2 adjustment with the unit effects in the hat matrix (the corrected way of
#       Pustejovsky and Tipton 2018);
#   between: unit means on [1, x].
# Regressors that a weft fit drops (no variation within units for within and fd) are
# left out here too. Then, clustered by unit:
#   se/cr2/<term>: sqrt(diag(vcovCR(fit, type = "CR2")));
#   df/cr2/<term>: coef_test(..., test = "Satterthwaite")$df_Satt;
#   wald/cr2: Wald_test of the regressors = 0, test = c("HTZ", "chi-sq"): F, df1, df2,
#   p (HTZ) and chi2, q, p_chi2 (chi-square).
# Observation weights (a column named wt, cases with weights=wt; CONVENTIONS.md
# "Observation weights"): a blank weight drops the row, a zero leaves it out before
# anything else; the weight of an fd difference is the later row's, a between unit's
# the mean of its rows' weights with unit means weighted within the unit. weft's cr2
# treats weights as precision weights and is the CR2 of the equation whose rows
# (unit indicators of within included) are scaled by sqrt(w): here that scaled
# equation is fitted as an unweighted lm and given to clubSandwich as above.
# A missing package is an error (exit status 2): the oracle must never pass silently.

for (p in c("clubSandwich", "jsonlite")) {
  if (!requireNamespace(p, quietly = TRUE)) {
    cat(sprintf("R package %s is not installed (Debian: r-cran-%s)\n", p, tolower(p)), file = stderr())
    quit(status = 2)
  }
}
suppressPackageStartupMessages({ library(clubSandwich); library(jsonlite) })

args <- commandArgs(trailingOnly = TRUE)
if (length(args) != 3) stop("usage: Rscript cr2_oracle.R panel.csv cases.txt out.json")
raw <- read.csv(args[1], na.strings = c("", "NA"), check.names = FALSE, stringsAsFactors = FALSE)
cases <- trimws(readLines(args[2]))
cases <- cases[nchar(cases) > 0]
x_names <- names(raw)[-(1:3)]
weighted <- "wt" %in% x_names
x_names <- setdiff(x_names, "wt")
names(raw)[1:3] <- c("unit", "period", "y")
raw$unit <- as.character(raw$unit)
grid <- sort(unique(raw$period[!is.na(raw$unit) & !is.na(raw$period)]))
raw$gi <- match(raw$period, grid)
used <- complete.cases(raw[, c("unit", "period", "y", x_names, if (weighted) "wt")])
if (weighted) used <- used & raw$wt > 0
d <- raw[used, ]
d$w <- if (weighted) d$wt else rep(1, nrow(d))
d <- d[order(d$unit, d$gi), ]
wmean <- function(v) ave(v * d$w, d$unit, FUN = sum) / ave(d$w, d$unit, FUN = sum)

period_label <- function(g) paste("period", format(grid[g], scientific = FALSE, trim = TRUE))

indicators <- function(gi, omit_first) {
  present <- sort(unique(gi))
  if (omit_first) present <- present[-1]
  m <- sapply(present, function(g) as.numeric(gi == g))
  m <- matrix(m, nrow = length(gi))
  colnames(m) <- vapply(present, period_label, "")
  m
}

# Drop regressor columns with no variation left (all-zero differences or deviations).
varying <- function(X, levels) {
  keep <- vapply(seq_len(ncol(X)), function(j) sqrt(sum(X[, j]^2)) > 1e-13 * sqrt(sum(levels[, j]^2)), TRUE)
  X[, keep, drop = FALSE]
}

design <- function(est, periods, intercept) {
  if (est == "pooled") {
    X <- as.matrix(d[, x_names, drop = FALSE])
    if (periods) X <- cbind(X, indicators(d$gi, intercept))
    return(list(y = d$y, X = X, unit = d$unit, intercept = intercept, dummies = FALSE, w = d$w))
  }
  if (est == "fd") {
    n <- nrow(d)
    later <- which(c(FALSE, d$unit[-1] == d$unit[-n] & d$gi[-1] == d$gi[-n] + 1))
    earlier <- later - 1
    L <- as.matrix(d[later, x_names, drop = FALSE])
    X <- varying(L - as.matrix(d[earlier, x_names, drop = FALSE]), L)
    if (periods) X <- cbind(X, indicators(d$gi[later], intercept))
    return(list(y = d$y[later] - d$y[earlier], X = X, unit = d$unit[later], intercept = intercept,
                dummies = FALSE, w = d$w[later]))
  }
  if (est == "within") {
    L <- as.matrix(d[, x_names, drop = FALSE])
    dev <- L - apply(L, 2, wmean)
    X <- L[, colnames(varying(dev, L)), drop = FALSE]
    if (periods) X <- cbind(X, indicators(d$gi, TRUE))
    return(list(y = d$y, X = X, unit = d$unit, intercept = FALSE, dummies = TRUE, w = d$w))
  }
  if (est == "between") {
    first <- !duplicated(d$unit)
    m <- sapply(c("y", x_names), function(v) wmean(d[[v]])[first])
    m <- matrix(m, nrow = sum(first), dimnames = list(NULL, c("y", x_names)))
    return(list(y = m[, "y"], X = m[, x_names, drop = FALSE], unit = d$unit[first], intercept = intercept,
                dummies = FALSE, w = ave(d$w, d$unit)[first]))
  }
  NULL
}

one_case <- function(text) {
  words <- strsplit(text, " ")[[1]]
  est <- words[1]
  e <- design(est, "periods" %in% words, !("no-intercept" %in% words))
  if (is.null(e)) return(NULL)
  X <- e$X
  weft_names <- c(if (e$intercept) "intercept", colnames(X))
  colnames(X) <- paste0("c", seq_len(ncol(X)))
  if (weighted) {
    # the scaled equation: every column, the intercept's and the unit indicators'
    # included, times sqrt(w)
    M <- cbind(if (e$intercept) cbind(ic = rep(1, nrow(X))), X)
    if (e$dummies) {
      U <- model.matrix(~ 0 + factor(e$unit))
      colnames(U) <- paste0("u", seq_len(ncol(U)))
      M <- cbind(M, U)
    }
    s <- sqrt(e$w)
    df <- data.frame(y = s * e$y, s * M, unit = e$unit)
    fit <- lm(reformulate(c("0", colnames(M)), "y"), data = df)
    r_names <- c(if (e$intercept) "ic", colnames(X))
  } else {
    df <- data.frame(y = e$y, X, unit = e$unit)
    rhs <- c(if (e$intercept) "1" else "0", colnames(X), if (e$dummies) "factor(unit)")
    fit <- lm(reformulate(rhs, "y"), data = df)
    r_names <- c(if (e$intercept) "(Intercept)", colnames(X))
  }
  v <- vcovCR(fit, cluster = df$unit, type = "CR2")
  ct <- coef_test(fit, vcov = v, test = "Satterthwaite")
  pick <- match(r_names, rownames(ct))
  se <- setNames(as.list(ct$SE[pick]), weft_names)
  dfs <- setNames(as.list(ct$df_Satt[pick]), weft_names)
  tested <- paste0("c", which(colnames(e$X) %in% x_names))
  wt <- Wald_test(fit, constraints = constrain_zero(tested, reg_ex = FALSE), vcov = v,
                  test = c("HTZ", "chi-sq"))
  htz <- wt[wt$test == "HTZ", ]
  chi <- wt[wt$test == "chi-sq", ]
  list(se = list(cr2 = se), df = list(cr2 = dfs),
       wald = list(cr2 = list(F = htz$Fstat, df1 = htz$df_num, df2 = htz$df_denom, p = htz$p_val,
                              chi2 = chi$Fstat * chi$df_num, q = chi$df_num, p_chi2 = chi$p_val)))
}

out <- list()
for (text in cases) {
  res <- one_case(text)
  if (!is.null(res)) out[[text]] <- res
}
result <- list(clubSandwich = out,
               software = list(clubSandwich = as.character(packageVersion("clubSandwich"))))
writeLines(toJSON(result, digits = NA, auto_unbox = TRUE, null = "null"), args[3])
