// The streaming route of within and between (unit means in one pass, lean_units.cpp)
// against the full route (fit_model, which forms the demeaned or unit-mean design) on
// ill-conditioned panels: unbalanced with gaps, rows shuffled or sorted by period,
// regressors on scales from 1e-4 to 1e6 sitting on unit offsets far larger than their
// variation within units. The two routes compute the same estimator in another order
// of sums, so every estimate, standard error, covariance entry and Wald statistic must
// agree to 1e-12 relative (an independent check of the streaming arithmetic; the outside
// references for within are the Grunfeld values in test_grunfeld.cpp, NIST StRD in
// test_nist.cpp and the R oracle, which run through both routes). Designs the
// streaming route cannot decide exactly go to the full route by themselves.
#include <algorithm>
#include <cmath>
#include <random>
#include <string>
#include <vector>

#include "core_support.hpp"
#include "weft/spec.hpp"

namespace {

enum class Order { unit, period, shuffled };

struct IllShape {
    std::size_t units = 70, periods = 8;
    Order order = Order::unit;
    bool gaps = true;           // rows absent (unbalanced; some units lose interior periods)
    bool missing = false;       // cells marked missing (value NaN)
    unsigned seed = 5;
};

// y on x1 (scale 1e6, offsets 1e9 by unit: 1e3 times its variation within units), x2
// (scale 1e-4 on offsets 1e-1), x3 correlated with x1 within units, x4 plain.
weft::PanelData ill_panel(const IllShape& s) {
    std::mt19937_64 rng(s.seed);
    std::normal_distribution<double> normal(0.0, 1.0);
    std::uniform_real_distribution<double> uniform(0.0, 1.0);
    struct Row {
        double unit, period, y;
        double x[4];
    };
    std::vector<Row> rows;
    for (std::size_t u = 0; u < s.units; ++u) {
        const double effect = 40.0 * normal(rng);
        const double off1 = 1e9 * (1.0 + uniform(rng)), off2 = 0.1 * (1.0 + uniform(rng));
        const std::size_t t_end = s.gaps ? s.periods - (u % 3) : s.periods;   // unbalanced ends
        for (std::size_t t = u % 2; t < t_end; ++t) {                          // and starts
            if (s.gaps && t > 1 && uniform(rng) < 0.2) continue;               // interior gaps
            Row r;
            r.unit = 500.0 + 7.0 * static_cast<double>(u);
            r.period = 1990.0 + 2.0 * static_cast<double>(t);
            const double w1 = normal(rng);
            r.x[0] = off1 + 1e6 * w1;
            r.x[1] = off2 + 1e-4 * normal(rng);
            r.x[2] = 3.0 * w1 + 0.8 * normal(rng) + 0.05 * static_cast<double>(t);
            r.x[3] = normal(rng) + 0.2 * effect;
            r.y = 2.0e-6 * (r.x[0] - off1) + 3.0e3 * (r.x[1] - off2) - 0.7 * r.x[2] + 0.4 * r.x[3] + effect +
                  1e-3 * off1 + (0.5 + 0.5 * static_cast<double>(u % 4)) * normal(rng);
            rows.push_back(r);
        }
    }
    if (s.order == Order::shuffled) std::shuffle(rows.begin(), rows.end(), rng);
    if (s.order == Order::period)
        std::stable_sort(rows.begin(), rows.end(), [](const Row& a, const Row& b) { return a.period < b.period; });
    weft::PanelData d;
    d.outcome.name = "y";
    d.regressors.resize(4);
    for (std::size_t j = 0; j < 4; ++j) d.regressors[j].name = "x" + std::to_string(j + 1);
    for (const Row& r : rows) {
        d.units.numbers.push_back(r.unit);
        d.periods.values.push_back(r.period);
        d.outcome.values.push_back(r.y);
        for (std::size_t j = 0; j < 4; ++j) d.regressors[j].values.push_back(r.x[j]);
    }
    if (s.missing) {
        const std::size_t n = rows.size();
        d.outcome.missing.assign(n, 0);
        d.regressors[2].missing.assign(n, 0);
        for (std::size_t i = 4; i < n; i += 17) {
            d.outcome.missing[i] = 1;
            d.outcome.values[i] = std::nan("");
        }
        for (std::size_t i = 9; i < n; i += 23) {
            d.regressors[2].missing[i] = 1;
            d.regressors[2].values[i] = std::nan("");
        }
    }
    return d;
}

// |a - b| <= tol |b| (relative: the regressors' scales differ by 1e10)
void rel(double a, double b, double tol, const char* what) {
    INFO(what << ": full " << b << ", streaming " << a);
    if (std::isnan(b)) {
        CHECK(std::isnan(a));
        return;
    }
    CHECK(std::abs(a - b) <= tol * std::abs(b));
}

void rel_opt(const std::optional<double>& a, const std::optional<double>& b, double tol, const char* what) {
    INFO(what);
    REQUIRE(a.has_value() == b.has_value());
    if (a) rel(*a, *b, tol, what);
}

void same_wald(const weft::WaldResult& a, const weft::WaldResult& b, double tol) {
    rel(a.chi2, b.chi2, tol, "Wald chi-square");
    rel(a.chi2_p, b.chi2_p, 1e-9, "Wald chi-square p");
    rel(a.f, b.f, tol, "Wald F");
    CHECK(a.f_df1 == b.f_df1);
    CHECK(a.f_df2 == b.f_df2);
    rel(a.f_p, b.f_p, 1e-9, "Wald F p");
    CHECK(a.covariance_label == b.covariance_label);
    CHECK(a.df_rule == b.df_rule);
}

// The streaming fit (fit_model_lean) against the full fit of one model. expect_streaming:
// whether the streaming route should have taken it (within: no rows held; between holds
// its one row per unit either way, so only the numbers are compared).
void agree(const weft::PanelData& data, const std::string& text, bool expect_streaming) {
    INFO("model \"" << text << "\"");
    const weft::ModelSpec spec = weft::parse_model_text(text);
    const weft::Fit full = weft::fit_model(data, spec);
    const weft::Fit lean = weft::fit_model_lean(data, spec);
    if (spec.estimator == weft::Estimator::within) CHECK(lean.equation.rows_held() == !expect_streaming);
    const double tol = 1e-12;
    REQUIRE(lean.equation.terms == full.equation.terms);
    CHECK(lean.nobs == full.nobs);
    CHECK(lean.rows_used == full.rows_used);
    CHECK(lean.n_units == full.n_units);
    CHECK(lean.df_residual == full.df_residual);
    CHECK(lean.warnings == full.warnings);
    CHECK(lean.covariance.label == full.covariance.label);
    CHECK(lean.covariance.clusters == full.covariance.clusters);
    CHECK(lean.covariance.dk_lag == full.covariance.dk_lag);
    CHECK(lean.covariance.df == full.covariance.df);
    rel(lean.covariance.factor, full.covariance.factor, 1e-15, "factor");
    const Eigen::Index K = full.coef.size();
    for (Eigen::Index k = 0; k < K; ++k) {
        INFO("term " << full.equation.terms[static_cast<std::size_t>(k)]);
        rel(lean.coef[k], full.coef[k], tol, "estimate");
        rel(lean.se[k], full.se[k], tol, "se");
        rel(lean.t[k], full.t[k], tol, "t");
        for (Eigen::Index j = 0; j < K; ++j) {
            // an entry is compared on the scale of its row's and column's variances
            const double size = std::sqrt(full.covariance.matrix(k, k) * full.covariance.matrix(j, j));
            INFO("covariance " << k << "," << j);
            CHECK(std::abs(lean.covariance.matrix(k, j) - full.covariance.matrix(k, j)) <= tol * size);
        }
    }
    rel(lean.ssr, full.ssr, tol, "ssr");
    rel_opt(lean.tss, full.tss, tol, "tss");
    rel_opt(lean.r2, full.r2, tol, "r2");
    rel_opt(lean.f, full.f, tol, "classical F");
    // within's corr2_rows and corr2_means come from unit means and sums on the
    // streaming route, from rows on the full route: agreement to 1e-10
    rel_opt(lean.corr2_rows, full.corr2_rows, 1e-10, "corr2 rows");
    rel_opt(lean.corr2_means, full.corr2_means, 1e-10, "corr2 means");
    REQUIRE(lean.unit_effects.size() == full.unit_effects.size());
    for (std::size_t u = 0; u < full.unit_effects.size(); ++u)
        rel(lean.unit_effects[u], full.unit_effects[u], 1e-10, "unit effect");
    // Wald tests: the model's joint test, a named pair, a general restriction
    REQUIRE(lean.joint.has_value() == full.joint.has_value());
    if (full.joint && full.joint->available) {
        rel(lean.joint->f, full.joint->f, tol, "joint F");
        rel(lean.joint->chi2, full.joint->chi2, tol, "joint chi-square");
        CHECK(lean.joint->df2 == full.joint->df2);
    }
    same_wald(weft::wald_test_terms(lean, {"x1", "x3"}), weft::wald_test_terms(full, {"x1", "x3"}), tol);
    Eigen::MatrixXd R = Eigen::MatrixXd::Zero(1, K);
    R(0, K - 1) = 1.0;
    R(0, K - 2) = -2.0;
    Eigen::VectorXd r(1);
    r[0] = 0.1;
    same_wald(weft::wald_test(lean, R, r), weft::wald_test(full, R, r), tol);
    // residuals and fitted values on the input rows
    REQUIRE(lean.residuals.size() == full.residuals.size());
    double scale = 0;
    for (std::size_t i = 0; i < full.fitted.size(); ++i)
        if (full.fitted.defined[i]) scale = std::max(scale, std::abs(full.fitted.value[i]));
    for (std::size_t i = 0; i < full.residuals.size(); ++i) {
        INFO("row " << i);
        REQUIRE(lean.residuals.defined[i] == full.residuals.defined[i]);
        if (!full.residuals.defined[i]) continue;
        CHECK(std::abs(lean.residuals.value[i] - full.residuals.value[i]) <= 1e-12 * scale);
        CHECK(std::abs(lean.fitted.value[i] - full.fitted.value[i]) <= 1e-12 * scale);
    }
}

const char* const kWithinWords[] = {"classical", "hc0", "hc1", "cluster", "cluster0", "cluster-period", "dk", "dk=2"};

}  // namespace

TEST_CASE("streaming within agrees with the full route on ill-conditioned panels", "[lean][within]") {
    // sorted by unit, the streaming route finds the means block by block as it reads
    // (blocks end where a unit ends; a unit longer than a block takes a pass of its own
    // first: shapes 4 and 5); in any other order one pass finds them first
    std::vector<IllShape> shapes(6);
    shapes[4].missing = true;
    shapes[4].seed = 19;
    shapes[5].units = 6;
    shapes[5].periods = 700;
    shapes[5].seed = 29;
    shapes[1].order = Order::shuffled;
    shapes[1].seed = 9;
    shapes[2].order = Order::period;
    shapes[2].missing = true;
    shapes[2].seed = 13;
    shapes[3].order = Order::shuffled;
    shapes[3].missing = true;
    shapes[3].units = 900;   // about 35,000 rows with the gaps: past the streaming route's
    shapes[3].periods = 50;  // starting sample (64 blocks of 512 rows)
    shapes[3].seed = 17;
    for (const IllShape& s : shapes) {
        const weft::PanelData d = ill_panel(s);
        INFO("order " << static_cast<int>(s.order) << ", missing " << s.missing << ", units " << s.units);
        for (const char* word : kWithinWords) agree(d, std::string("within ") + word, true);
        agree(d, "within cluster no-intercept", true);   // within has no intercept either way
    }
}

TEST_CASE("streaming between agrees with the full route on ill-conditioned panels", "[lean][between]") {
    std::vector<IllShape> shapes(3);
    shapes[1].order = Order::shuffled;
    shapes[1].seed = 21;
    shapes[2].order = Order::period;
    shapes[2].missing = true;
    shapes[2].seed = 25;
    for (const IllShape& s : shapes) {
        const weft::PanelData d = ill_panel(s);
        INFO("order " << static_cast<int>(s.order));
        for (const char* word : {"classical", "hc1", "hc3", "cluster", "cr2"})
            for (const char* intercept : {"", " no-intercept"})
                agree(d, std::string("between ") + word + intercept, true);
    }
}

TEST_CASE("within goes to the full route by itself where streaming cannot decide", "[lean][within]") {
    const weft::PanelData base = ill_panel(IllShape{});
    // near-collinear within units: x4 nearly a multiple of x2
    weft::PanelData near = base;
    for (std::size_t i = 0; i < near.regressors[3].values.size(); ++i)
        near.regressors[3].values[i] = 2e4 * near.regressors[1].values[i] + 1e-3 * std::sin(static_cast<double>(i));
    agree(near, "within cluster", false);
    // a regressor constant within units (dropped by the full route)
    weft::PanelData invariant = base;
    for (std::size_t i = 0; i < invariant.regressors[3].values.size(); ++i)
        invariant.regressors[3].values[i] = invariant.units.numbers[i] * 0.5;
    agree(invariant, "within hc1", false);
    // covariances the streaming route does not compute
    for (const char* text : {"within hc2", "within cr2", "within cluster-both", "within periods cluster"})
        agree(base, text, false);
}
