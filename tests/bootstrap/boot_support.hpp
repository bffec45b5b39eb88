// Shared helpers of the bootstrap tests: panels with few clusters, and the independent
// R enumeration (written below, run by the test itself).
#pragma once

#include "catch_compat.hpp"

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "weft/core.hpp"

namespace boot_test {

// A balanced panel of `units` units and `periods` periods, outcome y and regressors x1,
// x2, with a unit component in x1 and in the errors (clustered errors), unequal error
// scales by unit. Random test data: weft and R fit the same rows.
inline weft::PanelData panel(std::size_t units, std::size_t periods, double beta1, std::uint64_t seed) {
    std::mt19937_64 rng(seed);
    std::normal_distribution<double> z(0.0, 1.0);
    weft::PanelData d;
    d.outcome.name = "y";
    d.regressors.resize(2);
    d.regressors[0].name = "x1";
    d.regressors[1].name = "x2";
    d.units.name = "unit";
    d.periods.name = "period";
    for (std::size_t i = 0; i < units; ++i) {
        const double xu = z(rng), eu = z(rng), scale = 0.5 + static_cast<double>(i % 4);
        for (std::size_t t = 0; t < periods; ++t) {
            const double x1 = xu + z(rng), x2 = z(rng) + 0.3 * static_cast<double>(t);
            const double e = scale * (0.7 * eu + z(rng));
            d.units.numbers.push_back(static_cast<double>(101 + i));
            d.periods.values.push_back(static_cast<double>(2001 + t));
            d.regressors[0].values.push_back(x1);
            d.regressors[1].values.push_back(x2);
            d.outcome.values.push_back(1.0 + beta1 * x1 - 0.5 * x2 + e);
        }
    }
    return d;
}

inline weft::Fit fit(const weft::PanelData& d, const std::string& model) {
    return weft::fit_model(d, weft::parse_model_text(model));
}

inline weft::BootstrapResult boot(const weft::Fit& f, const std::string& settings) {
    return weft::wild_bootstrap(f, "x1", weft::parse_bootstrap_settings(settings));
}

// The independent computation (R, written from Cameron, Gelbach and Miller 2008 and
// Roodman et al. 2019): the restricted equation by base lm (x1 moved to the left with
// its tested value), every one of the 2^G sign vectors in turn, the unrestricted lm on
// each bootstrap outcome and sandwich::vcovCL (type HC1, i.e. CR1) for its t; the
// p-value is the share of |t*| >= |t| (1 - 1e-10). fd differences adjacent periods of
// the balanced panel; within adds factor(unit). Prints "count draws" per tested value.
inline const char* kEnumerationR = R"R(
suppressMessages(library(sandwich))
a <- commandArgs(TRUE)
d <- read.csv(a[1]); est <- a[2]; by <- a[3]; nulls <- as.numeric(strsplit(a[4], ",")[[1]])
if (est == "fd") {
  d <- d[order(d$unit, d$period), ]
  d <- do.call(rbind, lapply(split(d, d$unit), function(s)
    data.frame(unit = s$unit[-1], period = s$period[-1], y = diff(s$y), x1 = diff(s$x1), x2 = diff(s$x2))))
}
fu <- if (est == "within") y ~ x1 + x2 + factor(unit) else y ~ x1 + x2
fr <- if (est == "within") yr ~ x2 + factor(unit) else yr ~ x2
cl <- d[[by]]
ids <- match(cl, sort(unique(cl))); G <- max(ids)
tval <- function(dat, r) {
  f <- lm(fu, dat); V <- vcovCL(f, cluster = cl, type = "HC1")
  unname((coef(f)["x1"] - r) / sqrt(V["x1", "x1"]))
}
for (r in nulls) {
  t0 <- tval(d, r)
  d$yr <- d$y - r * d$x1
  m <- lm(fr, d); base <- fitted(m) + r * d$x1; ur <- resid(m)
  count <- 0
  for (b in 0:(2^G - 1)) {
    v <- ifelse(bitwAnd(b, 2^(0:(G - 1))) > 0, -1, 1)
    db <- d; db$y <- base + ur * v[ids]
    if (abs(tval(db, r)) >= abs(t0) * (1 - 1e-10)) count <- count + 1
  }
  cat(sprintf("%d %d\n", count, 2^G))
}
)R";

// Runs kEnumerationR on the panel; returns the R p-values (count / 2^G) in the order
// of nulls. Fails the test when R or sandwich is missing.
inline std::vector<double> r_enumeration(const weft::PanelData& d, const std::string& estimator,
                                         const std::string& by, const std::vector<double>& nulls,
                                         const std::string& tag) {
    const std::string dir = WEFT_BOOT_WORKDIR;
    std::system(("mkdir -p '" + dir + "'").c_str());
    const std::string csv = dir + "/" + tag + ".csv", script = dir + "/enumerate.R";
    {
        std::ofstream s(script);
        s << kEnumerationR;
        std::ofstream out(csv);
        out << "unit,period,y,x1,x2\n";
        char line[256];
        for (std::size_t i = 0; i < d.outcome.values.size(); ++i) {
            std::snprintf(line, sizeof line, "%.17g,%.17g,%.17g,%.17g,%.17g\n", d.units.numbers[i],
                          d.periods.values[i], d.outcome.values[i], d.regressors[0].values[i],
                          d.regressors[1].values[i]);
            out << line;
        }
    }
    std::string list;
    for (double r : nulls) {
        char buf[40];
        std::snprintf(buf, sizeof buf, "%.17g", r);
        list += (list.empty() ? "" : ",") + std::string(buf);
    }
    const std::string command = std::string(WEFT_BOOT_RSCRIPT) + " '" + script + "' '" + csv + "' " +
                                estimator + " " + by + " '" + list + "'";
    FILE* pipe = popen(command.c_str(), "r");
    REQUIRE(pipe != nullptr);
    std::vector<double> p;
    long count = 0, draws = 0;
    while (std::fscanf(pipe, "%ld %ld", &count, &draws) == 2) p.push_back(static_cast<double>(count) / static_cast<double>(draws));
    const int status = pclose(pipe);
    INFO("R command: " << command);
    REQUIRE(status == 0);
    REQUIRE(p.size() == nulls.size());
    return p;
}

}  // namespace boot_test
