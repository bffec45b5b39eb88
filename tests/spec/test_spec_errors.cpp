// Bad input to the specification tests: each error says what is wrong and what to do.
// Expected texts are weft's own wording (the message contract of weft/spec.hpp), not
// numbers, so no outside source applies.
#include <string>
#include <vector>

#include "spec_support.hpp"

using spec_test::contains;
using spec_test::load_grunfeld;
using spec_test::message_of;

namespace {

// A small panel built in the test: units "a".."f", periods from `periods_of_unit`.
weft::PanelData small_panel(const std::vector<std::vector<double>>& periods_of_unit,
                            std::size_t n_regressors = 2) {
    weft::PanelData d;
    d.outcome.name = "y";
    d.units.name = "unit";
    d.periods.name = "period";
    d.regressors.resize(n_regressors);
    for (std::size_t k = 0; k < n_regressors; ++k) d.regressors[k].name = "x" + std::to_string(k + 1);
    std::size_t row = 0;
    for (std::size_t u = 0; u < periods_of_unit.size(); ++u)
        for (double t : periods_of_unit[u]) {
            ++row;
            d.units.text.push_back(std::string(1, static_cast<char>('a' + u)));
            d.periods.values.push_back(t);
            const double r = static_cast<double>(row);
            d.outcome.values.push_back(std::sin(3.1 * r) + 0.1 * r);
            for (std::size_t k = 0; k < n_regressors; ++k)
                d.regressors[k].values.push_back(std::cos(1.7 * r * static_cast<double>(k + 1)) +
                                                 0.01 * r * r * static_cast<double>(k));
        }
    return d;
}

}  // namespace

TEST_CASE("Joint test: a term not in the model is named with the model's terms", "[spec][errors]") {
    const weft::Fit fit = weft::fit_model(load_grunfeld(), weft::parse_model_text("pooled"));
    const std::string m = message_of([&] { weft::wald_test_terms(fit, {"value", "wages"}); });
    CHECK(contains(m, "\"wages\""));
    CHECK(contains(m, "not in the model"));
    CHECK(contains(m, "intercept, value, capital"));
}

TEST_CASE("Joint test: a dropped term says why it has no estimate", "[spec][errors]") {
    weft::PanelData d = load_grunfeld();
    weft::Column twice = d.regressors[0];
    twice.name = "value_twice";
    for (auto& v : twice.values) v *= 2;
    d.regressors.push_back(twice);
    const weft::Fit fit = weft::fit_model(d, weft::parse_model_text("pooled"));
    REQUIRE_FALSE(fit.term_position("value_twice").has_value());
    const std::string m = message_of([&] { weft::wald_test_terms(fit, {"value_twice"}); });
    CHECK(contains(m, "\"value_twice\""));
    CHECK(contains(m, "not estimated by this model"));
    CHECK(contains(m, "remove it"));
}

TEST_CASE("Joint test: empty and repeated term lists", "[spec][errors]") {
    const weft::Fit fit = weft::fit_model(load_grunfeld(), weft::parse_model_text("within"));
    CHECK(contains(message_of([&] { weft::wald_test_terms(fit, {}); }), "no terms named"));
    CHECK(contains(message_of([&] { weft::wald_test_terms(fit, {"value", "value"}); }), "named twice"));
    CHECK(weft::split_term_list(" value ,capital,, ") == std::vector<std::string>{"value", "capital"});
}

TEST_CASE("Heteroskedasticity: unknown form word and too few rows for white-full", "[spec][errors]") {
    const std::string m = message_of([] { weft::parse_hetero_form("white"); });
    CHECK(contains(m, "\"white\""));
    CHECK(contains(m, "koenker, bp, white-special, white-full"));
    CHECK(weft::parse_hetero_form("") == weft::HeteroForm::koenker);
    CHECK(weft::parse_hetero_form("White-Full") == weft::HeteroForm::white_full);
    // 4 regressors: white-full needs 1 + 4 + 10 columns; 12 rows are too few
    const weft::PanelData d = small_panel({{1, 2, 3, 4}, {1, 2, 3, 4}, {1, 2, 3, 4}}, 4);
    const weft::Fit fit = weft::fit_model(d, weft::parse_model_text("pooled"));
    const std::string w = message_of([&] { weft::hetero_test(fit, weft::HeteroForm::white_full); });
    CHECK(contains(w, "white-special"));
    CHECK(contains(w, "12 rows"));
}

TEST_CASE("Serial test: between and one period per unit do not apply", "[spec][errors]") {
    const weft::Fit between = weft::fit_model(load_grunfeld(), weft::parse_model_text("between"));
    const std::string mb = message_of([&] { weft::serial_test(between); });
    CHECK(contains(mb, "between has one row per unit"));
    CHECK(contains(mb, "use pooled, fd or within"));

    // one period per unit
    const weft::PanelData one = small_panel({{1}, {2}, {3}, {1}, {2}, {3}});
    const weft::Fit pooled = weft::fit_model(one, weft::parse_model_text("pooled"));
    const std::string m1 = message_of([&] { weft::serial_test(pooled); });
    CHECK(contains(m1, "no unit has residuals in two adjacent periods"));
    CHECK(contains(m1, "at least two consecutive periods per unit"));

    // two periods per unit, but never adjacent on the grid: gaps make no pairs
    const weft::PanelData gaps = small_panel({{1, 3}, {2, 4}, {1, 3}, {2, 4}, {1, 4}});
    const weft::Fit gp = weft::fit_model(gaps, weft::parse_model_text("pooled"));
    CHECK(contains(message_of([&] { weft::serial_test(gp); }), "no unit has residuals in two adjacent periods"));
}

TEST_CASE("Hausman and effects tests need the right pair of fits", "[spec][errors]") {
    const weft::PanelData d = load_grunfeld();
    const weft::Fit pooled = weft::fit_model(d, weft::parse_model_text("pooled"));
    const weft::Fit random = weft::fit_model(d, weft::parse_model_text("random"));
    const weft::Fit within = weft::fit_model(d, weft::parse_model_text("within"));
    const std::string m = message_of([&] { weft::hausman_test(pooled, random); });
    CHECK(contains(m, "needs a within fit and a random fit"));
    CHECK(contains(m, "got pooled and random"));
    const weft::Fit within_p = weft::fit_model(d, weft::parse_model_text("within periods"));
    CHECK(contains(message_of([&] { weft::hausman_test(within_p, random); }), "same period effects"));
    CHECK(contains(message_of([&] { weft::effects_test(random, pooled); }), "needs a within fit"));
    // the Hausman statistic does not depend on the covariance the fits were made with
    const weft::Fit within_cl = weft::fit_model(d, weft::parse_model_text("within cluster"));
    CHECK(weft::hausman_test(within_cl, random).statistic == weft::hausman_test(within, random).statistic);

    // one period per unit: no within fit, and the message says which fit failed
    const weft::PanelData one = small_panel({{1}, {2}, {3}, {1}, {2}, {3}});
    const std::string mh = message_of([&] { weft::hausman_test(one, weft::ModelSpec{}); });
    CHECK(contains(mh, "Hausman test: the within fit it needs is not possible"));
}
