// NIST StRD linear least squares: all 11 datasets, every certified coefficient and
// standard deviation (and the residual SD), measured by the log relative error
// (LRE, McCullough 1998). Expected values: NIST StRD certified values, tests/data/nist
// (<Name>.json, key "certified"). The data go through fit_model (pooled, classical),
// i.e. the same solver path as every panel estimator.
#include <algorithm>
#include <iostream>

#include "core_support.hpp"

namespace {

// LRE capped at the 15 significant digits NIST prints; -log10|value| when certified = 0.
double lre(double value, double certified) {
    double e;
    if (certified == 0) e = std::abs(value);
    else e = std::abs(value - certified) / std::abs(certified);
    if (e == 0) return 15.0;
    return std::min(15.0, -std::log10(e));
}

struct Outcome {
    double coef = 15, se = 15, rsd = 15;
};

Outcome run_dataset(const std::string& name, bool lean, weft::Covariance covariance = weft::Covariance::classical) {
    const nlohmann::json meta = core_test::read_json("nist/" + name + ".json");
    const core_test::Table t = core_test::read_csv("nist/" + name + ".csv");
    const std::vector<double>& y = t.column("y");
    const std::size_t n = y.size();
    weft::PanelData d;
    d.outcome.name = "y";
    d.outcome.values = y;
    const bool intercept = meta["model"]["intercept"].get<bool>();
    const std::vector<std::string> columns = meta["model"]["design_columns"].get<std::vector<std::string>>();
    for (const std::string& c : columns) {
        if (c == "1") continue;
        weft::Column col;
        col.name = c;
        if (c.rfind("x^", 0) == 0) {
            // powers formed in long double and rounded once, so each cell is the
            // double nearest to x^k of the double x
            const int k = std::stoi(c.substr(2));
            for (double x : t.column("x")) {
                long double v = 1;
                for (int m = 0; m < k; ++m) v *= x;
                col.values.push_back(static_cast<double>(v));
            }
        } else {
            col.values = t.column(c);
        }
        d.regressors.push_back(col);
    }
    // one unit per row, a single period: a cross-section
    for (std::size_t i = 0; i < n; ++i) {
        d.units.numbers.push_back(static_cast<double>(i + 1));
        d.periods.values.push_back(1.0);
    }
    weft::ModelSpec spec;
    spec.intercept = intercept;
    spec.covariance = covariance;
    const weft::Fit fit = lean ? weft::fit_model_lean(d, spec) : weft::fit_model(d, spec);
    INFO("NIST " << name << (lean ? " (lean fit)" : ""));
    // The well-conditioned sets take the lean route when asked; the others (Longley,
    // Filip, Wampler: cond(Z) above the Gram route's limit) go to the full solver.
    const bool well_conditioned = name == "Norris" || name == "Pontius" || name == "NoInt1" || name == "NoInt2";
    CHECK(fit.equation.rows_held() == !(lean && well_conditioned));
    REQUIRE(fit.dropped.empty());
    const std::vector<std::string> params = meta["model"]["parameters"].get<std::vector<std::string>>();
    REQUIRE(fit.equation.terms.size() == params.size());
    Outcome out;
    for (std::size_t k = 0; k < params.size(); ++k) {
        const double c = meta["certified"]["coef"][params[k]].get<double>();
        const double s = meta["certified"]["coef_sd"][params[k]].get<double>();
        out.coef = std::min(out.coef, lre(fit.coef[static_cast<Eigen::Index>(k)], c));
        out.se = std::min(out.se, lre(fit.se[static_cast<Eigen::Index>(k)], s));
    }
    out.rsd = lre(fit.sigma, meta["certified"]["residual_sd"].get<double>());
    std::cout << std::fixed << std::setprecision(1) << "NIST " << name << (lean ? " (lean)" : "") << ": min LRE coef " << out.coef
              << " se " << out.se << " residual sd " << out.rsd << "\n";
    return out;
}

void check_dataset(const std::string& name, double required, bool lean = false) {
    const Outcome o = run_dataset(name, lean);
    INFO("NIST " << name << " min LRE coef " << o.coef << " se " << o.se << " residual sd " << o.rsd
                 << " (required " << required << ")");
    CHECK(o.coef >= required);
    CHECK(o.se >= required);
    CHECK(o.rsd >= required);
}

}  // namespace

// Requirement: LRE >= 9 for every coefficient and SD (issue 2); Filip at least 7.
// Filip stays near 7.6 / 7.2 because its cells x^k are rounded to double: solving the
// same double cells in long double (centred, Householder QR, 64-bit mantissa) gives
// 7.61 for the coefficients, while x^k kept in long double gives 11.5 (measured by the
// core engineer while writing this test); the loss is in the input, not the solver.
TEST_CASE("NIST StRD Norris", "[nist]") { check_dataset("Norris", 9.0); }
TEST_CASE("NIST StRD Pontius", "[nist]") { check_dataset("Pontius", 9.0); }
TEST_CASE("NIST StRD NoInt1", "[nist]") { check_dataset("NoInt1", 9.0); }
TEST_CASE("NIST StRD NoInt2", "[nist]") { check_dataset("NoInt2", 9.0); }
TEST_CASE("NIST StRD Filip", "[nist]") { check_dataset("Filip", 7.0); }
TEST_CASE("NIST StRD Longley", "[nist]") { check_dataset("Longley", 9.0); }
TEST_CASE("NIST StRD Wampler1", "[nist]") { check_dataset("Wampler1", 9.0); }
TEST_CASE("NIST StRD Wampler2", "[nist]") { check_dataset("Wampler2", 9.0); }
TEST_CASE("NIST StRD Wampler3", "[nist]") { check_dataset("Wampler3", 9.0); }
TEST_CASE("NIST StRD Wampler4", "[nist]") { check_dataset("Wampler4", 9.0); }
TEST_CASE("NIST StRD Wampler5", "[nist]") { check_dataset("Wampler5", 9.0); }

// The same requirement for fit_model_lean, the route that large data take through the
// C interface (streaming passes; the four well-conditioned sets go through it).
TEST_CASE("NIST StRD through the lean fit", "[nist][lean]") {
    for (const char* name : {"Norris", "Pontius", "NoInt1", "NoInt2", "Longley", "Wampler1", "Wampler2", "Wampler3",
                             "Wampler4", "Wampler5"})
        check_dataset(name, 9.0, true);
    check_dataset("Filip", 7.0, true);
}


// The lean fit takes its last refinement step from a gradient that, with cluster-robust
// errors, it sums from the clusters' score sums (here each row its own cluster); the
// coefficients and the residual SD keep the digits of the classical run above. (The
// SEs differ from the certified classical ones by design and are not compared.)
TEST_CASE("NIST StRD through the lean fit with errors clustered by unit", "[nist][lean]") {
    for (const char* name : {"Norris", "Pontius", "NoInt1", "NoInt2"}) {
        const Outcome classical = run_dataset(name, true);
        const Outcome clustered = run_dataset(name, true, weft::Covariance::cluster);
        INFO("NIST " << name << " lean, clustered: min LRE coef " << clustered.coef << " residual sd " << clustered.rsd
                     << "; classical: " << classical.coef << ", " << classical.rsd);
        CHECK(clustered.coef >= 9.0);
        CHECK(clustered.rsd >= 9.0);
        CHECK(clustered.coef >= classical.coef - 0.5);
        CHECK(clustered.rsd >= classical.rsd - 0.5);
    }
}
