# Reference-library side of tests/bench/compare.py: times a first-difference fit with
# cluster-by-unit (CR1) standard errors in R on one CSV written by weft_bench, and
# writes the estimates, standard errors and median times as JSON.
#   Rscript compare_reference.R PANEL.csv REPS OUT.json [plm|lm|both]
# Reference libraries (oracles): plm (Croissant & Millo 2008) with its Arellano
# covariance vcovHC(method = "arellano", type = "sss"), whose factor is
# G/(G-1) (N-1)/(N-K); and lm (which calls lm.fit) on data differenced beforehand,
# with sandwich::vcovCL(type = "HC1", cadjust = TRUE), the same factor.
suppressMessages({
  library(data.table)
  library(plm)
  library(sandwich)
})
args <- commandArgs(trailingOnly = TRUE)
csv <- args[1]
reps <- as.integer(args[2])
out <- args[3]
which <- if (length(args) >= 4) args[4] else "both"

d <- as.data.frame(fread(csv))
regressors <- grep("^x[0-9]+$", names(d), value = TRUE)
form <- as.formula(paste("y ~", paste(regressors, collapse = " + ")))

# Wall and CPU (user + system) seconds: on a shared machine the wall clock also
# counts waiting for a core, so compare.py reports both.
time_median <- function(f) {
  times <- numeric(reps)
  cpu <- numeric(reps)
  result <- NULL
  for (r in seq_len(reps)) {
    gc()
    t0 <- proc.time()
    result <- f()
    t1 <- proc.time()
    times[r] <- t1[["elapsed"]] - t0[["elapsed"]]
    cpu[r] <- (t1[["user.self"]] + t1[["sys.self"]]) - (t0[["user.self"]] + t0[["sys.self"]])
  }
  list(result = result, median = median(times), cpu = median(cpu), times = times)
}

results <- list()

if (which %in% c("plm", "both")) {
  run <- time_median(function() {
    fit <- plm(form, data = d, index = c("unit", "period"), model = "fd")
    V <- vcovHC(fit, method = "arellano", type = "sss", cluster = "group")
    list(estimate = coef(fit), se = sqrt(diag(V)))
  })
  results$plm <- list(library = paste("R plm", packageVersion("plm"), "fd + vcovHC arellano sss"),
                      terms = names(run$result$estimate),
                      estimate = unname(run$result$estimate), se = unname(run$result$se),
                      median_seconds = run$median, cpu_seconds = run$cpu, times = run$times)
}

if (which %in% c("lm", "both")) {
  # Differencing between adjacent periods of the grid within a unit, done before
  # the clock starts (the data are sorted by unit then period by weft_bench).
  dt <- as.data.table(d)
  setorder(dt, unit, period)
  grid <- sort(unique(dt$period))
  dt[, position := match(period, grid)]
  n <- nrow(dt)
  later <- which(dt$unit[-1] == dt$unit[-n] & dt$position[-1] == dt$position[-n] + 1L) + 1L
  y <- dt$y[later] - dt$y[later - 1L]
  X <- as.matrix(dt[later, ..regressors]) - as.matrix(dt[later - 1L, ..regressors])
  cluster <- dt$unit[later]
  run <- time_median(function() {
    fit <- lm(y ~ X)
    V <- vcovCL(fit, cluster = cluster, type = "HC1", cadjust = TRUE)
    list(estimate = coef(fit), se = sqrt(diag(V)))
  })
  results$lm <- list(library = paste("R lm (lm.fit) on differenced data + sandwich",
                                     packageVersion("sandwich"), "vcovCL HC1"),
                     terms = sub("^X", "", names(run$result$estimate)),
                     estimate = unname(run$result$estimate), se = unname(run$result$se),
                     median_seconds = run$median, cpu_seconds = run$cpu, times = run$times)
}

jsonlite::write_json(results, out, digits = NA, auto_unbox = TRUE)
