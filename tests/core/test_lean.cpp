// fit_model_lean (the streaming route that large data take through the C interface)
// against fit_model on the same data: every number a host can read must agree to
// rounding, and where the lean route does not apply or declines, the result (or the
// error message) must be fit_model's own. The outside references for the lean route
// are NIST StRD (test_nist.cpp, "through the lean fit"), the Grunfeld reference values
// (test_grunfeld.cpp, both routes) and the live R oracle (tests/oracle, per-family
// standard errors through the lean route); this file checks the shapes those do not
// cover: unsorted rows, gaps, missing cells holding NaN, no intercept, every covariance.
#include <cmath>
#include <random>
#include <string>
#include <vector>

#include "core_support.hpp"
#include "weft/spec.hpp"

namespace {

struct Shape {
    std::size_t units = 40, periods = 6, k = 3;
    bool shuffle = false;       // rows in random order
    bool gaps = false;          // some unit-period rows absent
    bool missing = false;       // some cells missing (mask set, value NaN)
    unsigned seed = 7;
};

weft::PanelData make_data(const Shape& s) {
    std::mt19937_64 rng(s.seed);
    std::normal_distribution<double> normal(0.0, 1.0);
    std::uniform_real_distribution<double> uniform(0.0, 1.0);
    struct Row {
        double unit, period, y;
        std::vector<double> x;
    };
    std::vector<Row> rows;
    for (std::size_t u = 0; u < s.units; ++u) {
        const double effect = normal(rng);
        for (std::size_t t = 0; t < s.periods; ++t) {
            if (s.gaps && t > 0 && uniform(rng) < 0.15) continue;
            Row r;
            r.unit = 100.0 + static_cast<double>(u) * 3.0;
            r.period = 2001.0 + static_cast<double>(t);
            double y = 1.5 + effect;
            for (std::size_t j = 0; j < s.k; ++j) {
                const double x = normal(rng) + 0.3 * effect + 0.1 * static_cast<double>(t * (j + 1));
                r.x.push_back(x);
                y += (0.5 - 0.2 * static_cast<double>(j)) * x;
            }
            r.y = y + normal(rng) * (0.5 + 0.1 * static_cast<double>(u % 3));
            rows.push_back(r);
        }
    }
    if (s.shuffle) std::shuffle(rows.begin(), rows.end(), rng);
    weft::PanelData d;
    d.outcome.name = "y";
    d.regressors.resize(s.k);
    for (std::size_t j = 0; j < s.k; ++j) d.regressors[j].name = "x" + std::to_string(j + 1);
    for (const Row& r : rows) {
        d.units.numbers.push_back(r.unit);
        d.periods.values.push_back(r.period);
        d.outcome.values.push_back(r.y);
        for (std::size_t j = 0; j < s.k; ++j) d.regressors[j].values.push_back(r.x[j]);
    }
    if (s.missing) {
        const std::size_t n = rows.size();
        d.outcome.missing.assign(n, 0);
        d.regressors[0].missing.assign(n, 0);
        for (std::size_t i = 3; i < n; i += 11) {
            d.outcome.missing[i] = 1;
            d.outcome.values[i] = std::nan("");
        }
        for (std::size_t i = 5; i < n; i += 13) {
            d.regressors[0].missing[i] = 1;
            d.regressors[0].values[i] = std::nan("");
        }
    }
    return d;
}

void close(double a, double b, double tol, const char* what) {
    INFO(what << ": full " << b << ", lean " << a);
    if (std::isnan(b)) {
        CHECK(std::isnan(a));
        return;
    }
    CHECK(std::abs(a - b) <= tol * std::max(1.0, std::abs(b)));
}

void close_opt(const std::optional<double>& a, const std::optional<double>& b, double tol, const char* what) {
    INFO(what);
    REQUIRE(a.has_value() == b.has_value());
    if (a) close(*a, *b, tol, what);
}

// Lean and full fits of one model: the same terms, facts, warnings, labels, and numbers
// to rounding (tol relative, 1e-11 unless given; the two accumulate the same sums in
// another order; t, p and F to 1e-10 or tol, whichever is larger).
void compare(const weft::PanelData& data, const std::string& text, bool expect_lean, double tol = 1e-11) {
    INFO("model \"" << text << "\"");
    const weft::ModelSpec spec = weft::parse_model_text(text);
    const weft::Fit full = weft::fit_model(data, spec);
    const weft::Fit lean = weft::fit_model_lean(data, spec);
    CHECK(full.equation.rows_held());
    CHECK(lean.equation.rows_held() == !expect_lean);
    CHECK(lean.equation.weighted() == full.equation.weighted());
    CHECK(lean.rows_zero_weight == full.rows_zero_weight);
    const double tol_t = std::max(tol, 1e-10);
    REQUIRE(lean.equation.terms == full.equation.terms);
    CHECK(lean.nobs == full.nobs);
    CHECK(lean.equation.nobs() == full.equation.nobs());
    CHECK(lean.rows_used == full.rows_used);
    CHECK(lean.rows_dropped == full.rows_dropped);
    CHECK(lean.n_units == full.n_units);
    CHECK(lean.n_periods == full.n_periods);
    CHECK(lean.equation.n_units == full.equation.n_units);
    CHECK(lean.equation.n_periods == full.equation.n_periods);
    CHECK(lean.df_residual == full.df_residual);
    CHECK(lean.warnings == full.warnings);
    CHECK(lean.exact_fit == full.exact_fit);
    CHECK(lean.covariance.label == full.covariance.label);
    CHECK(lean.covariance.factor_rule == full.covariance.factor_rule);
    CHECK(lean.covariance.df_rule == full.covariance.df_rule);
    CHECK(lean.covariance.clusters == full.covariance.clusters);
    CHECK(lean.covariance.dk_lag == full.covariance.dk_lag);
    close(lean.covariance.factor, full.covariance.factor, 1e-15, "factor");
    close(lean.covariance.df, full.covariance.df, 0, "df");
    for (Eigen::Index k = 0; k < full.coef.size(); ++k) {
        INFO("term " << full.equation.terms[static_cast<std::size_t>(k)]);
        close(lean.coef[k], full.coef[k], tol, "estimate");
        close(lean.se[k], full.se[k], tol, "se");
        close(lean.t[k], full.t[k], tol_t, "t");
        close(lean.p[k], full.p[k], tol_t, "p");
        close(lean.ci_low[k], full.ci_low[k], tol, "ci low");
        close(lean.ci_high[k], full.ci_high[k], tol, "ci high");
        for (Eigen::Index j = 0; j < full.coef.size(); ++j)
            close(lean.covariance.matrix(k, j), full.covariance.matrix(k, j),
                  tol * std::sqrt(std::abs(full.covariance.matrix(k, k) * full.covariance.matrix(j, j))) /
                      std::max(1.0, std::abs(full.covariance.matrix(k, j))) + tol,
                  "covariance");
    }
    close(lean.ssr, full.ssr, tol, "ssr");
    close(lean.sigma, full.sigma, tol, "sigma");
    close_opt(lean.tss, full.tss, tol, "tss");
    close_opt(lean.r2, full.r2, tol, "r2");
    close_opt(lean.adj_r2, full.adj_r2, tol, "adj r2");
    close_opt(lean.f, full.f, tol_t, "F");
    close_opt(lean.f_p, full.f_p, tol_t, "F p");
    CHECK(lean.f_rule == full.f_rule);
    // the model's joint test and a Wald test of the first two regressors, both under the
    // fit's own covariance
    REQUIRE(lean.joint.has_value() == full.joint.has_value());
    if (full.joint) {
        CHECK(lean.joint->available == full.joint->available);
        close(lean.joint->f, full.joint->f, tol_t, "joint F");
        close(lean.joint->p, full.joint->p, tol_t, "joint p");
        close(lean.joint->chi2, full.joint->chi2, tol_t, "joint chi-square");
        CHECK(lean.joint->df2 == full.joint->df2);
    }
    const std::size_t first = full.equation.intercept_column >= 0 ? 1 : 0;
    if (full.equation.terms.size() >= first + 2) {
        const std::vector<std::string> tested{full.equation.terms[first], full.equation.terms[first + 1]};
        const weft::WaldResult a = weft::wald_test_terms(lean, tested), b = weft::wald_test_terms(full, tested);
        close(a.chi2, b.chi2, tol_t, "Wald chi-square");
        close(a.f_p, b.f_p, tol_t, "Wald F p");
        CHECK(a.f_df2 == b.f_df2);
    }
    REQUIRE(lean.residuals.size() == full.residuals.size());
    double scale = 0;
    for (double v : full.fitted.value) scale = std::max(scale, std::abs(v));
    for (std::size_t i = 0; i < full.residuals.size(); ++i) {
        INFO("row " << i);
        REQUIRE(lean.residuals.defined[i] == full.residuals.defined[i]);
        REQUIRE(lean.fitted.defined[i] == full.fitted.defined[i]);
        if (!full.residuals.defined[i]) continue;
        CHECK(std::abs(lean.residuals.value[i] - full.residuals.value[i]) <= 1e-12 * std::max(1.0, scale));
        CHECK(std::abs(lean.fitted.value[i] - full.fitted.value[i]) <= 1e-12 * std::max(1.0, scale));
    }
}

const char* const kLeanWords[] = {"classical", "hc0", "hc1", "cluster", "cluster0", "cluster-period", "dk", "dk=2"};

// Random observation weights (uniform on 0.2..5, every 17th row 0, every 19th blank),
// as the panel's weight column or, named "w", as one more regressor for weights=w
// (inserted first, so that the equation's regressors are not its neighbours).
void add_weights(weft::PanelData& d, unsigned seed, bool as_regressor) {
    std::mt19937_64 rng(seed);
    std::uniform_real_distribution<double> uniform(0.2, 5.0);
    const std::size_t n = d.outcome.size();
    weft::Column w;
    w.name = "w";
    w.missing.assign(n, 0);
    for (std::size_t i = 0; i < n; ++i) {
        double v = uniform(rng);
        if (i % 17 == 4) v = 0.0;
        if (i % 19 == 6) {
            w.missing[i] = 1;
            v = std::nan("");
        }
        w.values.push_back(v);
    }
    if (as_regressor)
        d.regressors.insert(d.regressors.begin(), w);
    else
        d.weights = w;
}

}  // namespace

TEST_CASE("lean fit equals the full fit: pooled and fd, every covariance it computes", "[lean]") {
    Shape sorted;
    Shape shuffled;
    shuffled.shuffle = true;
    shuffled.seed = 11;
    Shape gappy;
    gappy.gaps = true;
    gappy.missing = true;
    gappy.seed = 23;
    Shape all;
    all.shuffle = all.gaps = all.missing = true;
    all.seed = 31;
    all.units = 60;
    all.periods = 9;
    all.k = 4;
    for (const Shape& s : {sorted, shuffled, gappy, all}) {
        const weft::PanelData d = make_data(s);
        INFO("shape: shuffle " << s.shuffle << ", gaps " << s.gaps << ", missing " << s.missing);
        for (const char* estimator : {"pooled", "fd"})
            for (const char* word : kLeanWords)
                for (const char* intercept : {"", " no-intercept"})
                    compare(d, std::string(estimator) + " " + word + intercept, true);
    }
}

TEST_CASE("lean fit equals the full fit on a panel larger than its starting sample", "[lean]") {
    // 5,000 units x 10 periods: more equation rows than the 64 blocks of 512 rows
    // whose fit starts the refinement, so the start differs from the solution
    Shape big;
    big.units = 5000;
    big.periods = 10;
    big.k = 4;
    big.seed = 41;
    Shape big_shuffled = big;
    big_shuffled.shuffle = true;
    big_shuffled.missing = true;
    big_shuffled.seed = 43;
    for (const Shape& s : {big, big_shuffled}) {
        const weft::PanelData d = make_data(s);
        INFO("shuffle " << s.shuffle);
        for (const char* text : {"pooled cluster", "fd cluster", "fd classical no-intercept", "pooled dk", "fd hc1"})
            compare(d, text, true);
    }
}

TEST_CASE("lean fit hands back to the full fit where it does not apply", "[lean]") {
    const weft::PanelData d = make_data(Shape{});
    // estimators, period indicators and covariances outside the lean route (within
    // without period indicators streams since issue 19: test_lean_units.cpp; between
    // holds its one row per unit on both routes)
    for (const char* text : {"within periods cluster", "random", "between", "pooled periods cluster", "fd periods",
                             "pooled hc2", "fd hc3", "fd cluster-both"})
        compare(d, text, false);
    // a regressor without variation within units under fd (dropped by the full route)
    weft::PanelData invariant = d;
    for (std::size_t i = 0; i < invariant.units.numbers.size(); ++i)
        invariant.regressors[1].values[i] = invariant.units.numbers[i] * 0.01;
    compare(invariant, "fd cluster", false);
    compare(invariant, "pooled cluster", true);  // pooled keeps it
    // a design beyond the Gram route's condition limit: x2 nearly x1
    weft::PanelData near = d;
    for (std::size_t i = 0; i < near.regressors[1].values.size(); ++i)
        near.regressors[1].values[i] = near.regressors[0].values[i] + 1e-4 * std::sin(static_cast<double>(i));
    compare(near, "pooled cluster", false);
    compare(near, "fd classical", false);
    // an exact collinearity: x3 = x1 + x2 (dropped by the full route)
    weft::PanelData collinear = d;
    for (std::size_t i = 0; i < collinear.regressors[2].values.size(); ++i)
        collinear.regressors[2].values[i] = collinear.regressors[0].values[i] + collinear.regressors[1].values[i];
    compare(collinear, "pooled hc1", false);
}

TEST_CASE("lean fit gives the full fit's message for bad input", "[lean]") {
    const weft::PanelData good = make_data(Shape{});
    auto message = [](const weft::PanelData& data, const std::string& text, bool lean) {
        try {
            const weft::ModelSpec spec = weft::parse_model_text(text);
            if (lean) (void)weft::fit_model_lean(data, spec);
            else (void)weft::fit_model(data, spec);
        } catch (const weft::Error& e) {
            return std::string(e.what());
        }
        return std::string("(no error)");
    };
    std::vector<weft::PanelData> bad;
    {
        weft::PanelData d = good;  // infinity in a regressor, in a used row
        d.regressors[1].values[17] = std::numeric_limits<double>::infinity();
        bad.push_back(d);
    }
    {
        weft::PanelData d = good;  // NaN not marked missing, in a row that other cells drop
        d.outcome.missing.assign(d.outcome.values.size(), 0);
        d.outcome.missing[30] = 1;
        d.regressors[0].values[30] = std::nan("");
        bad.push_back(d);
    }
    {
        weft::PanelData d = good;  // NaN in the very first row (fd reads it only as an earlier row)
        d.regressors[2].values[0] = std::nan("");
        bad.push_back(d);
    }
    {
        weft::PanelData d = good;  // NaN in the last row
        d.outcome.values.back() = std::nan("");
        bad.push_back(d);
    }
    {
        weft::PanelData d = good;  // a repeated unit-period pair
        d.periods.values[7] = d.periods.values[6];
        bad.push_back(d);
    }
    {
        weft::PanelData d = good;  // one cluster only
        for (double& u : d.units.numbers) u = 5;
        for (std::size_t i = 0; i < d.periods.values.size(); ++i) d.periods.values[i] = static_cast<double>(i);
        bad.push_back(d);
    }
    for (std::size_t b = 0; b < bad.size(); ++b)
        for (const char* text : {"fd cluster", "pooled cluster", "pooled hc1", "pooled cluster-period", "fd dk"}) {
            if (b + 1 == bad.size() && std::string(text) != "fd cluster" && std::string(text) != "pooled cluster")
                continue;  // one unit: only the unit clusters are too few
            INFO("bad input " << b << ", model " << text);
            const std::string full = message(bad[b], text, false);
            CHECK(full != "(no error)");
            CHECK(message(bad[b], text, true) == full);
        }
}

TEST_CASE("lean fit equals the full fit with observation weights: pooled and fd, every covariance it computes",
          "[lean][weights]") {
    // the weighted full route is checked against R elsewhere (test_weights.cpp, the
    // oracle); here the streaming route must give its numbers, residuals and fitted
    // values (in the outcome's units) to 1e-12 relative, on sorted panels and on
    // unbalanced, gapped, shuffled ones with missing cells, weights 0 and blank weights
    Shape sorted;
    sorted.seed = 51;
    Shape all;
    all.shuffle = all.gaps = all.missing = true;
    all.seed = 53;
    all.units = 60;
    all.periods = 9;
    all.k = 4;
    Shape gapped_sorted = all;
    gapped_sorted.shuffle = false;
    gapped_sorted.seed = 55;
    for (const Shape& s : {sorted, all, gapped_sorted})
        for (bool as_regressor : {false, true}) {
            weft::PanelData d = make_data(s);
            add_weights(d, s.seed + 1, as_regressor);
            INFO("shuffle " << s.shuffle << ", gaps " << s.gaps << ", weights as regressor " << as_regressor);
            const std::string word = as_regressor ? " weights=w" : "";
            for (const char* estimator : {"pooled", "fd"}) {
                for (const char* cov : kLeanWords)
                    for (const char* intercept : {"", " no-intercept"})
                        compare(d, std::string(estimator) + " " + cov + intercept + word, true, 1e-12);
                // period indicators: the full route, weighted as unweighted
                compare(d, std::string(estimator) + " periods cluster" + word, false, 1e-12);
            }
        }
}

TEST_CASE("lean fit equals the full fit with observation weights on a panel larger than its starting sample",
          "[lean][weights]") {
    // more rows than the 64 blocks of the starting fit, so that both refinement steps
    // work on rows the start did not see
    Shape big;
    big.units = 5000;
    big.periods = 10;
    big.k = 4;
    big.seed = 61;
    Shape big_shuffled = big;
    big_shuffled.shuffle = true;
    big_shuffled.gaps = true;
    big_shuffled.missing = true;
    big_shuffled.seed = 63;
    for (const Shape& s : {big, big_shuffled}) {
        weft::PanelData d = make_data(s);
        add_weights(d, s.seed + 1, s.shuffle);
        INFO("shuffle " << s.shuffle);
        const std::string word = s.shuffle ? " weights=w" : "";
        for (const char* text : {"pooled cluster", "fd cluster", "fd classical no-intercept", "pooled dk",
                                 "fd hc1", "pooled cluster-period"})
            compare(d, text + word, true, 1e-12);
    }
}

TEST_CASE("lean fit with observation weights hands back to the full fit where it cannot decide", "[lean][weights]") {
    Shape s;
    s.shuffle = s.gaps = true;
    s.seed = 57;
    weft::PanelData d = make_data(s);
    add_weights(d, 58, false);
    // fd: a regressor without variation within units (dropped by the full route)
    weft::PanelData invariant = d;
    for (std::size_t i = 0; i < invariant.units.numbers.size(); ++i)
        invariant.regressors[1].values[i] = invariant.units.numbers[i] * 0.01;
    compare(invariant, "fd cluster", false, 1e-12);
    compare(invariant, "pooled cluster", true, 1e-12);
    // weights that leave fewer equation rows than terms: every weight 0 but four
    weft::PanelData few = d;
    for (std::size_t i = 4; i < few.weights.values.size(); ++i) {
        few.weights.values[i] = 0.0;
        few.weights.missing[i] = 0;
    }
    for (const char* text : {"pooled hc1", "fd classical"}) {
        INFO(text);
        const weft::ModelSpec spec = weft::parse_model_text(text);
        std::string full, lean;
        try { (void)weft::fit_model(few, spec); } catch (const weft::Error& e) { full = e.what(); }
        try { (void)weft::fit_model_lean(few, spec); } catch (const weft::Error& e) { lean = e.what(); }
        CHECK(!full.empty());
        CHECK(lean == full);
    }
}

TEST_CASE("lean fit with weights all 1 equals the unweighted lean fit", "[lean][weights]") {
    // identity: w = 1 everywhere is the unweighted fit (CONVENTIONS.md "Observation weights")
    Shape s;
    s.shuffle = s.missing = true;
    s.seed = 71;
    weft::PanelData d = make_data(s);
    const weft::PanelData plain = d;
    d.weights.name = "w";
    d.weights.values.assign(d.outcome.size(), 1.0);
    for (const char* text : {"pooled cluster", "fd hc1", "pooled dk", "fd cluster-period no-intercept"}) {
        INFO(text);
        const weft::ModelSpec spec = weft::parse_model_text(text);
        const weft::Fit a = weft::fit_model_lean(d, spec);
        const weft::Fit b = weft::fit_model_lean(plain, spec);
        CHECK(!a.equation.rows_held());
        CHECK(!b.equation.rows_held());
        CHECK(a.equation.weighted());
        CHECK(!b.equation.weighted());
        for (Eigen::Index k = 0; k < b.coef.size(); ++k) {
            close(a.coef[k], b.coef[k], 1e-12, "estimate");
            close(a.se[k], b.se[k], 1e-12, "se");
        }
        close(a.ssr, b.ssr, 1e-12, "ssr");
        close_opt(a.r2, b.r2, 1e-12, "r2");
    }
}
