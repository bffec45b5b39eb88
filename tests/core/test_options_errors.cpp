// The model text (FUNCTIONS.md "The model text"), bad input (issue 2: one exception
// type, a message naming what is wrong), dropped terms, distributions.
#include "core_support.hpp"

namespace {

weft::Column column(const std::string& name, std::vector<double> v, std::vector<std::uint8_t> missing = {}) {
    weft::Column c;
    c.name = name;
    c.values = std::move(v);
    c.missing = std::move(missing);
    return c;
}

// 3 units x 4 periods, two regressors; z is constant within each unit.
weft::PanelData tiny() {
    weft::PanelData d;
    d.outcome = column("y", {1, 3, 2, 5, 4, 6, 8, 7, 9, 12, 10, 11});
    d.regressors = {column("x", {0.5, 1.5, 1, 2, 2.5, 3.1, 4, 3.3, 4.4, 6, 5, 5.2}),
                    column("z", {1, 1, 1, 1, 2, 2, 2, 2, 7, 7, 7, 7})};
    d.units.text = {"a", "a", "a", "a", "b", "b", "b", "b", "c", "c", "c", "c"};
    d.periods = column("t", {1, 2, 3, 4, 1, 2, 3, 4, 1, 2, 3, 4});
    return d;
}

}  // namespace

TEST_CASE("model text: defaults, words in any order, canonical text", "[options]") {
    const weft::ModelSpec def = weft::parse_model_text("");
    CHECK(def.estimator == weft::Estimator::pooled);
    CHECK(def.covariance == weft::Covariance::classical);
    CHECK(def.intercept);
    CHECK_FALSE(def.period_effects);
    CHECK(def.level == 0.95);
    CHECK(def.dk_lag == -1);
    const weft::ModelSpec a = weft::parse_model_text("fd periods cluster");
    const weft::ModelSpec b = weft::parse_model_text(" Cluster,FD ,, periods ");
    CHECK(a == b);
    CHECK(a.estimator == weft::Estimator::fd);
    CHECK(a.covariance == weft::Covariance::cluster);
    CHECK(a.period_effects);
    CHECK(weft::describe(a) == "fd cluster periods level=0.95");
    const weft::ModelSpec c = weft::parse_model_text("within dk=3 level=0.90 no-intercept");
    CHECK(c.dk_lag == 3);
    CHECK(c.level == 0.90);
    CHECK_FALSE(c.intercept);
    CHECK(weft::describe(c) == "within dk=3 no-intercept level=0.9");
    for (const char* text : {"random cluster-both", "between hc3", "pooled cluster-period level=0.99", "dk",
                             "cluster0 periods", "fd dk=0"}) {
        const weft::ModelSpec s = weft::parse_model_text(text);
        CHECK(weft::parse_model_text(weft::describe(s)) == s);
    }
    CHECK(weft::parse_model_text("fd fd") .estimator == weft::Estimator::fd);  // a repeat is harmless
}

TEST_CASE("model text: unknown and conflicting words name the word and list the accepted ones", "[options]") {
    std::string msg = core_test::message_of([] { weft::parse_model_text("fd clustr"); });
    CHECK(msg.find("\"clustr\"") != std::string::npos);
    CHECK(msg.find("cluster-both") != std::string::npos);
    msg = core_test::message_of([] { weft::parse_model_text("fd within"); });
    CHECK(msg.find("\"fd\"") != std::string::npos);
    CHECK(msg.find("\"within\"") != std::string::npos);
    msg = core_test::message_of([] { weft::parse_model_text("hc1 cluster"); });
    CHECK(msg.find("conflict") != std::string::npos);
    CHECK_THROWS_AS(weft::parse_model_text("level=1.5"), weft::Error);
    CHECK_THROWS_AS(weft::parse_model_text("level=abc"), weft::Error);
    CHECK_THROWS_AS(weft::parse_model_text("dk=-1"), weft::Error);
    CHECK_THROWS_AS(weft::parse_model_text("dk=x"), weft::Error);
    CHECK_THROWS_AS(weft::parse_model_text("level=0.9 level=0.95"), weft::Error);
}

TEST_CASE("bad input raises weft::Error with an actionable message", "[errors]") {
    {
        weft::PanelData d = tiny();
        d.units.text.pop_back();
        const std::string msg = core_test::message_of([&] { weft::fit_model(d, {}); });
        CHECK(msg == "units has 11 rows but outcome has 12; give all columns the same rows");
    }
    {
        weft::PanelData d = tiny();
        d.regressors[0].values[6] = std::numeric_limits<double>::infinity();
        d.first_row_number = 2;
        const std::string msg = core_test::message_of([&] { weft::fit_model(d, {}); });
        CHECK(msg.find("regressor \"x\", row 8") != std::string::npos);
        CHECK(msg.find("not a finite number") != std::string::npos);
    }
    {
        weft::PanelData d = tiny();
        d.outcome.missing.assign(12, 1);
        const std::string msg = core_test::message_of([&] { weft::fit_model(d, {}); });
        CHECK(msg.find("no usable rows") != std::string::npos);
    }
    {
        weft::PanelData d = tiny();
        d.periods.values[1] = 1;  // unit a twice in period 1
        const std::string msg = core_test::message_of([&] { weft::fit_model(d, {}); });
        CHECK(msg.find("unit \"a\" has two rows for period 1 (rows 1 and 2)") != std::string::npos);
    }
    {
        weft::PanelData d = tiny();
        d.units.text.assign(12, "only");
        d.periods.values = {1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12};
        const std::string msg = core_test::message_of([&] { weft::fit_model(d, weft::parse_model_text("within")); });
        CHECK(msg.find("one unit") != std::string::npos);
        CHECK(msg.find("\"only\"") != std::string::npos);
        const std::string msg2 = core_test::message_of([&] { weft::fit_model(d, weft::parse_model_text("pooled cluster")); });
        CHECK(msg2.find("1 unit cluster found, at least 2 are needed") != std::string::npos);
    }
    {
        weft::PanelData d = tiny();
        std::vector<std::uint8_t> missing(12, 1);
        missing[0] = missing[1] = missing[4] = 0;  // three rows left for three terms
        d.outcome.missing = missing;
        const std::string msg = core_test::message_of([&] { weft::fit_model(d, {}); });
        CHECK(msg.find("3 rows for 3 terms") != std::string::npos);
    }
    {
        weft::PanelData d = tiny();
        d.regressors.resize(1);  // 3 units: between can estimate 2 terms
        const std::string msg = core_test::message_of([&] { weft::fit_model(d, weft::parse_model_text("between cluster-period")); });
        CHECK(msg.find("cluster-period") != std::string::npos);
        const std::string msg2 = core_test::message_of([&] { weft::fit_model(d, weft::parse_model_text("between periods")); });
        CHECK(msg2.find("\"periods\" does not apply to between") != std::string::npos);
        weft::PanelData none = tiny();
        none.regressors.clear();
        const std::string msg3 = core_test::message_of([&] { weft::fit_model(none, weft::parse_model_text("within")); });
        CHECK(msg3.find("no terms left to estimate") != std::string::npos);
    }
}

TEST_CASE("listwise deletion counts dropped rows and leaves their outputs blank", "[errors]") {
    weft::PanelData d = tiny();
    d.regressors[0].missing.assign(12, 0);
    d.regressors[0].missing[5] = 1;
    d.regressors[0].values[5] = std::numeric_limits<double>::quiet_NaN();  // masked: not an error
    const weft::Fit fit = weft::fit_model(d, weft::parse_model_text("pooled"));
    CHECK(fit.rows_dropped == 1);
    CHECK(fit.nobs == 11);
    CHECK_FALSE(fit.residuals.is_defined(5));
    CHECK(fit.residuals.is_defined(4));
}

TEST_CASE("collinear and time-invariant terms are dropped and named", "[errors]") {
    weft::PanelData d = tiny();
    // x2 = 2 x - z: collinear with earlier terms
    weft::Column x2 = column("x2", {});
    for (std::size_t i = 0; i < 12; ++i) x2.values.push_back(2 * d.regressors[0].values[i] - d.regressors[1].values[i]);
    d.regressors.push_back(x2);
    const weft::Fit pooled = weft::fit_model(d, weft::parse_model_text("pooled"));
    REQUIRE(pooled.dropped.size() == 1);
    CHECK(pooled.dropped[0].name == "x2");
    CHECK(pooled.dropped[0].reason == weft::DropReason::collinear);
    CHECK(pooled.equation.terms == std::vector<std::string>{"intercept", "x", "z"});
    for (const char* model : {"within", "fd"}) {
        const weft::Fit fit = weft::fit_model(d, weft::parse_model_text(model));
        INFO(model);
        // z has no variation within units; then x2 = 2x - z is no longer collinear
        REQUIRE(fit.dropped.size() >= 1);
        CHECK(fit.dropped[0].name == "z");
        CHECK(fit.dropped[0].reason == weft::DropReason::no_within_variation);
        CHECK(fit.dropped[0].message.find("no variation within units") != std::string::npos);
        CHECK_FALSE(fit.term_position("z"));
    }
    // a constant regressor with an intercept
    weft::PanelData c = tiny();
    c.regressors[1].values.assign(12, 3.0);
    const weft::Fit fc = weft::fit_model(c, {});
    REQUIRE(fc.dropped.size() == 1);
    CHECK(fc.dropped[0].name == "z");
    for (Eigen::Index k = 0; k < fc.coef.size(); ++k) CHECK(std::isfinite(fc.coef[k]));
}

TEST_CASE("distributions: upper tails as complements keep tiny p-values", "[distributions]") {
    // grunfeld_within.json results.inference.classical: t = 17.8665643902475 on 188 df has
    // p = 2.22000669284214e-42
    CORE_CHECK_REL(weft::t_two_sided_p(17.8665643902475, 188), 2.22000669284214e-42, 1e-9, "t p");
    CHECK(weft::t_two_sided_p(60, 188) > 0);
    // grunfeld_within.json f_all_terms: F = 309.014175168281 on (2, 188), p = 3.74893568133548e-60
    CORE_CHECK_REL(weft::f_upper(309.014175168281, 2, 188), 3.74893568133548e-60, 1e-9, "F p");
    // grunfeld_within.json wald_subset.classical: chi2 = 618.02835033656, 2 df, p = 6.26395882828821e-135
    CORE_CHECK_REL(weft::chi2_upper(618.02835033656, 2), 6.26395882828821e-135, 1e-9, "chi2 p");
    CHECK(std::isnan(weft::t_two_sided_p(1.0, 0)));
    // t quantile: 97.5% point on 9 df is 2.262157163 (common practice, printed t tables)
    CORE_CHECK_REL(weft::t_quantile(0.975, 9), 2.2621571627982, 1e-12, "t quantile");
}

TEST_CASE("an exact fit reports se 0, no t or p, and says so", "[errors]") {
    // y = 1 + 2 x exactly: the residuals are 0, so s^2 = 0 (common practice, no source)
    weft::PanelData d = tiny();
    d.regressors.resize(1);
    for (std::size_t i = 0; i < 12; ++i) d.outcome.values[i] = 1 + 2 * d.regressors[0].values[i];
    for (const char* model : {"pooled", "pooled hc1", "fd cluster", "within"}) {
        INFO(model);
        const weft::Fit fit = weft::fit_model(d, weft::parse_model_text(model));
        CHECK(fit.exact_fit);
        const auto x = fit.term_position("x");
        REQUIRE(x);
        CORE_CHECK_REL(fit.coef[static_cast<Eigen::Index>(*x)], 2.0, 1e-12, "slope");
        CHECK(fit.se[static_cast<Eigen::Index>(*x)] == 0);
        CHECK(std::isnan(fit.t[static_cast<Eigen::Index>(*x)]));
        CHECK_FALSE(fit.f);
        REQUIRE_FALSE(fit.warnings.empty());
        CHECK(fit.warnings.back().find("exact") != std::string::npos);
    }
}

TEST_CASE("no usable rows names a column that is blank in every row", "[errors]") {
    weft::PanelData d = tiny();
    d.regressors[1].missing.assign(12, 1);
    const std::string msg = core_test::message_of([&] { weft::fit_model(d, {}); });
    CHECK(msg == "no usable rows: regressor \"z\" is blank or not a number in all 12 rows; check that its range "
                 "points at the data");
}
