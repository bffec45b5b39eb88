// Observation weights (CONVENTIONS.md "Observation weights"), against outside references:
// - tests/data/panel/weights_reference.json, written by weights_reference.R beside it:
//   R 4.2 lm(weights = ) on each explicitly built estimated equation with sandwich 3.0
//   (vcovHC, vcovCL, vcovPL) and estimatr 1.0 (lm_robust(weights = )), on the Grunfeld
//   panel with an invented weight column (grunfeld_weighted.csv); within against the
//   weighted dummy-variable regression;
// - identities of weighted least squares: weights all 1 give the unweighted fit exactly
//   (the scaled rows are the rows); integer weights give the estimates of the rows
//   repeated that many times, and classical SEs that differ only by the df (weft, like
//   R's lm, counts N as the rows with a positive weight: s^2 = sum w u^2 / (N - K), so
//   se_weighted^2 (N - K) = se_repeated^2 (sum w - K)); multiplying every weight by a
//   constant changes no estimate and no standard error (it cancels in (X'WX)^-1 X'W).
#include <algorithm>
#include <limits>
#include <string>

#include "core_support.hpp"
#include "weft/spec.hpp"

namespace {

using nlohmann::json;
constexpr double kTol = 1e-9;  // relative, as the issue asks (the JSON keeps 15+ digits)

// grunfeld_weighted.csv: Grunfeld with the weight column w (two rows of weight 0).
weft::PanelData weighted_grunfeld() {
    return core_test::read_panel("panel/grunfeld_weighted.csv", "inv", {"value", "capital", "w"}, "firm", "year");
}

const char* const kFamilies[] = {"classical", "hc0",    "hc1",          "hc2",          "hc3",
                                 "cluster",   "cluster0", "cluster-period", "cluster-both", "dk"};

void check_case(const weft::PanelData& data, const std::string& est, bool periods, const std::string& family,
                const json& ref) {
    const std::string model = est + " " + family + (periods ? " periods" : "") + " weights=w";
    INFO("model \"" << model << "\"");
    const weft::Fit fit = weft::fit_model(data, weft::parse_model_text(model));
    const auto terms = ref["terms"].get<std::vector<std::string>>();
    REQUIRE(fit.n_terms == terms.size());
    CHECK(fit.nobs == ref["nobs"].get<std::size_t>());
    CORE_CHECK_REL(fit.ssr, ref["ssr"].get<double>(), kTol, "weighted SSR");
    CORE_CHECK_REL(*fit.r2, ref["r2"].get<double>(), kTol, "R-squared (weighted)");
    const json& r = ref[family];
    CHECK(fit.covariance.df == r["df"].get<double>());
    for (std::size_t j = 0; j < terms.size(); ++j) {
        INFO("term " << terms[j]);
        const auto k = fit.term_position(terms[j]);
        REQUIRE(k);
        const auto e = static_cast<Eigen::Index>(*k);
        CORE_CHECK_REL(fit.coef[e], ref["estimate"][j].get<double>(), kTol, "estimate");
        CORE_CHECK_REL(fit.se[e], r["se"][j].get<double>(), kTol, "se");
        if (!ref.contains("estimatr") || family == "classical" || family == "dk" ||
            family == "cluster-period" || family == "cluster-both")
            continue;
        // second source: estimatr's lm_robust(weights = )
        CORE_CHECK_REL(fit.se[e], ref["estimatr"][family][j].get<double>(), kTol, "se (estimatr)");
    }
    const weft::WaldResult w = weft::wald_test_terms(fit, {"value", "capital"});
    // a clipped two-way covariance (min_eig < 0) is solved through its eigen decomposition
    // on both sides: 1e-8 there
    const bool clipped = r.contains("min_eig") && r["min_eig"].get<double>() < 0;
    CORE_CHECK_REL(w.chi2, r["wald"].get<double>(), clipped ? 1e-8 : kTol, "Wald W of value and capital");
}

weft::Fit fit_text(const weft::PanelData& data, const std::string& model) {
    return weft::fit_model(data, weft::parse_model_text(model));
}

// Every estimate and standard error of two fits, relative tol (0: exactly equal).
void check_same(const weft::Fit& a, const weft::Fit& b, double tol) {
    REQUIRE(a.n_terms == b.n_terms);
    for (Eigen::Index k = 0; k < a.coef.size(); ++k) {
        CORE_CHECK_REL(a.coef[k], b.coef[k], tol, "estimate");
        CORE_CHECK_REL(a.se[k], b.se[k], tol, "se");
    }
}

}  // namespace

// The weft::Error message of expr contains text.
#define CHECK_THAT_MESSAGE(expr, text)                                                   \
    do {                                                                                \
        const std::string msg_ = core_test::message_of([&] { (void)(expr); });          \
        INFO("message: " << msg_);                                                      \
        CHECK(msg_.find(text) != std::string::npos);                                    \
    } while (false)

TEST_CASE("weights: every estimator and standard-error family equals R lm(weights) with sandwich", "[weights]") {
    const json ref = core_test::read_json("panel/weights_reference.json");
    const weft::PanelData data = weighted_grunfeld();
    for (const char* est : {"pooled", "fd", "within"})
        for (bool periods : {false, true})
            for (const char* family : kFamilies)
                check_case(data, est, periods, family, ref[std::string(est) + (periods ? "_periods" : "")]);
    for (const char* family : {"classical", "hc0", "hc1", "hc2", "hc3", "cluster", "cluster0"})
        check_case(data, "between", false, family, ref["between"]);
}

TEST_CASE("weights: unit effects, residuals, fitted values and the zero-weight rows", "[weights]") {
    const json ref = core_test::read_json("panel/weights_reference.json");
    const weft::PanelData data = weighted_grunfeld();
    const weft::Fit within = fit_text(data, "within weights=w");
    const auto effects = ref["within"]["unit_effects"].get<std::vector<double>>();
    REQUIRE(within.unit_effects.size() == effects.size());
    for (std::size_t i = 0; i < effects.size(); ++i)
        CORE_CHECK_REL(within.unit_effects[i], effects[i], kTol, "unit effect (weighted dummy regression)");
    CHECK_FALSE(within.corr2_rows);  // not reported under weights
    const weft::Fit pooled = fit_text(data, "pooled weights=w");
    // residuals and fitted values in the outcome's units, as R's residuals(lm)
    CORE_CHECK_REL(pooled.residuals.value[0], ref["pooled"]["residual_first"].get<double>(), kTol, "residual row 2");
    CORE_CHECK_REL(pooled.fitted.value[0], ref["pooled"]["fitted_first"].get<double>(), kTol, "fitted row 2");
    CORE_CHECK_REL(*pooled.adj_r2, ref["pooled"]["adj_r2"].get<double>(), kTol, "adjusted R-squared");
    CHECK(pooled.rows_zero_weight == 2);
    CHECK(pooled.rows_used == 198);
    CHECK(pooled.rows_dropped == 0);
    // a zero-weight row has no residual
    const std::size_t zero_row = 2 * 20 + 5;  // firm 3, 1940 (CSV order: firm, then year)
    CHECK(pooled.residuals.defined[zero_row] == 0);
}

TEST_CASE("weights: all weights 1 give the unweighted fit exactly", "[weights]") {
    weft::PanelData data = core_test::grunfeld();
    weft::Column one;
    one.name = "one";
    one.values.assign(data.outcome.values.size(), 1.0);
    data.regressors.push_back(one);
    const weft::PanelData plain = core_test::grunfeld();
    for (const char* model : {"pooled hc1", "fd cluster", "within dk", "between hc3", "pooled cluster-both periods",
                              "within hc2 periods", "fd classical periods"}) {
        INFO(model);
        const weft::Fit w = fit_text(data, std::string(model) + " weights=one");
        const weft::Fit u = fit_text(plain, model);
        check_same(w, u, 0.0);
        CHECK(*w.r2 == *u.r2);
    }
}

TEST_CASE("weights: integer weights equal repeated rows (estimates; classical SEs up to the df)", "[weights]") {
    // Grunfeld, weight 1 + (row mod 3); the repeated panel gives copy c of a row the
    // period year * 10 + c, so that no (unit, period) pair repeats (no period terms are used)
    const weft::PanelData base = core_test::grunfeld();
    const std::size_t n = base.outcome.values.size();
    weft::PanelData weighted = base, repeated = base;
    weft::Column w;
    w.name = "w";
    for (weft::Column* c : {&repeated.outcome, &repeated.regressors[0], &repeated.regressors[1], &repeated.periods})
        c->values.clear();
    repeated.units.numbers.clear();
    double sum_w = 0;
    for (std::size_t i = 0; i < n; ++i) {
        const int copies = 1 + static_cast<int>(i % 3);
        w.values.push_back(copies);
        sum_w += copies;
        for (int c = 0; c < copies; ++c) {
            repeated.outcome.values.push_back(base.outcome.values[i]);
            repeated.regressors[0].values.push_back(base.regressors[0].values[i]);
            repeated.regressors[1].values.push_back(base.regressors[1].values[i]);
            repeated.units.numbers.push_back(base.units.numbers[i]);
            repeated.periods.values.push_back(base.periods.values[i] * 10 + c);
        }
    }
    weighted.regressors.push_back(w);
    for (const char* est : {"pooled", "within"}) {
        INFO(est);
        const weft::Fit fw = fit_text(weighted, std::string(est) + " weights=w");
        const weft::Fit fr = fit_text(repeated, est);
        REQUIRE(fw.n_terms == fr.n_terms);
        const double absorbed = static_cast<double>(fw.equation.absorbed);
        const double K = static_cast<double>(fw.n_terms);
        const double df_ratio = std::sqrt((static_cast<double>(n) - K - absorbed) / (sum_w - K - absorbed));
        for (Eigen::Index k = 0; k < fw.coef.size(); ++k) {
            CORE_CHECK_REL(fw.coef[k], fr.coef[k], 1e-10, "estimate");
            CORE_CHECK_REL(fw.se[k] * df_ratio, fr.se[k], 1e-10, "classical se, df rescaled");
        }
        CORE_CHECK_REL(fw.ssr, fr.ssr, 1e-10, "SSR");
    }
}

TEST_CASE("weights: multiplying every weight by a constant changes nothing", "[weights]") {
    const weft::PanelData data = weighted_grunfeld();
    weft::PanelData scaled = data;
    for (double& v : scaled.regressors[2].values) v *= 7.25e3;
    for (const char* est : {"pooled", "fd", "within", "between"})
        for (const char* family : {"classical", "hc1", "hc3", "cluster", "cluster0"}) {
            const std::string model = std::string(est) + " " + family + " weights=w";
            INFO(model);
            check_same(fit_text(data, model), fit_text(scaled, model), 1e-11);
        }
    for (const char* model : {"pooled dk periods weights=w", "fd cluster-both weights=w", "within cluster-period weights=w"}) {
        INFO(model);
        check_same(fit_text(data, model), fit_text(scaled, model), 1e-11);
    }
}

TEST_CASE("weights: a weight column on the panel is the model word's column", "[weights]") {
    const weft::PanelData data = weighted_grunfeld();
    weft::PanelData panel = data;
    panel.weights = panel.regressors[2];
    panel.regressors.pop_back();
    for (const char* model : {"pooled hc2", "fd dk", "within cluster", "between hc1"}) {
        INFO(model);
        const weft::Fit a = fit_text(data, std::string(model) + " weights=w");
        const weft::Fit b = fit_text(panel, model);
        check_same(a, b, 0.0);
        // the streaming route declines weights today and the full route answers
        check_same(weft::fit_model_lean(panel, weft::parse_model_text(model)), b, 0.0);
    }
    CHECK_THAT_MESSAGE(fit_text(panel, "pooled weights=w"), "already has a weight column");
}

TEST_CASE("weights: a blank weight drops the row and is counted", "[weights]") {
    weft::PanelData data = weighted_grunfeld();
    data.regressors[2].missing.assign(data.outcome.values.size(), 0);
    data.regressors[2].missing[7] = 1;
    const weft::Fit fit = fit_text(data, "pooled weights=w");
    CHECK(fit.rows_dropped == 1);
    CHECK(fit.rows_zero_weight == 2);
    CHECK(fit.nobs == 197);
    // the same as giving that row weight 0, except for the count
    weft::PanelData zero = weighted_grunfeld();
    zero.regressors[2].values[7] = 0;
    check_same(fit, fit_text(zero, "pooled weights=w"), 0.0);
}

TEST_CASE("weights: bad weights and refused combinations are named in words", "[weights]") {
    weft::PanelData data = weighted_grunfeld();
    weft::PanelData negative = data;
    negative.regressors[2].values[4] = -0.5;
    CHECK_THAT_MESSAGE(fit_text(negative, "pooled weights=w"), "weights \"w\", row 6: the weight -0.5 is negative");
    weft::PanelData nan = data;
    nan.regressors[2].values[9] = std::numeric_limits<double>::quiet_NaN();
    CHECK_THAT_MESSAGE(fit_text(nan, "within weights=w"), "\"w\", row 11: the value is not a finite number");
    CHECK_THAT_MESSAGE(fit_text(data, "pooled weights=pop"), "no regressor column is named \"pop\"");
    CHECK_THAT_MESSAGE(fit_text(data, "pooled weights=pop"), "(the columns are: value, capital, w)");
    CHECK_THAT_MESSAGE(fit_text(data, "random weights=w"), "use within with weights");
    CHECK_THAT_MESSAGE(weft::hausman_test(data, weft::parse_model_text("within weights=w")), "Hausman test");
    const weft::Fit fit = fit_text(data, "within weights=w");
    CHECK_THAT_MESSAGE(weft::hetero_test(fit, weft::HeteroForm::koenker), "not defined for a weighted fit");
    CHECK_THAT_MESSAGE(weft::serial_test(fit), "dk standard errors");
    CHECK_THAT_MESSAGE(weft::effects_test(data, weft::parse_model_text("within weights=w")), "unit-effects test");
    // the model word itself
    CHECK(weft::parse_model_text("fd weights=Pop hc1").weights == "Pop");
    CHECK(weft::describe(weft::parse_model_text("fd weights=Pop hc1")) == "fd hc1 level=0.95 weights=Pop");
    CHECK_THAT_MESSAGE(weft::parse_model_text("pooled weights="), "weights=");
    CHECK_THAT_MESSAGE(weft::parse_model_text("pooled weights=a weights=b"), "conflict");
}
