// Identities of difference in differences that hold exactly on any data:
// - two periods, two groups: group-time, imputation and twfe all equal the 2x2
//   difference in mean changes, and the group-time standard error equals
//   sqrt(s_T^2/n_T + s_C^2/n_C) with n-denominator variances of the changes (the
//   influence function of a difference of two means; Callaway and Sant'Anna 2021,
//   section 4, with one cell). The twfe CR1 standard error is the same number times
//   sqrt(G/(G-1) * (N-1)/(N-K)) (CONVENTIONS.md, cluster), computed here from its parts.
// - one adoption cohort, never-treated comparison units, a balanced panel and every
//   event time in the window: the fully dynamic two-way regression's coefficient at
//   e >= 0 is (change of treated means from g-1 to g+e) minus (the same for the
//   comparison units), which is ATT(g, g+e) with base g-1 (Sun and Abraham 2021,
//   section 3, and Callaway and Sant'Anna 2021 agree on this case).
// - staggered cohorts with effects that differ by cohort: the two differ
//   (Goodman-Bacon 2021; de Chaisemartin and D'Haultfoeuille 2020).
#include <cmath>
#include <random>

#include "event_support.hpp"

using event_test::close;

TEST_CASE("two periods, two groups: every estimator is the 2x2 difference in differences", "[event][identity]") {
    std::mt19937_64 rng(42);
    std::normal_distribution<double> normal(0.0, 1.0);
    const int n_t = 7, n_c = 11;
    event_test::SimPanel p;
    std::vector<double> change_t, change_c;
    for (int i = 0; i < n_t + n_c; ++i) {
        const bool treated = i < n_t;
        const double y1 = normal(rng) * 2 + 3, y2 = y1 + 0.4 + (treated ? 1.5 : 0) + normal(rng) * (treated ? 1.3 : 0.7);
        for (int t = 0; t < 2; ++t) {
            p.unit.push_back(100 + i);
            p.period.push_back(2020 + 3 * t);  // three years apart: adjacent on the grid
            p.y.push_back(t == 0 ? y1 : y2);
            p.d.push_back(treated && t == 1 ? 1 : 0);
        }
        (treated ? change_t : change_c).push_back(y2 - y1);
    }
    auto mean = [](const std::vector<double>& v) { double s = 0; for (double x : v) s += x; return s / static_cast<double>(v.size()); };
    auto var_n = [&](const std::vector<double>& v) {
        const double m = mean(v);
        double s = 0;
        for (double x : v) s += (x - m) * (x - m);
        return s / static_cast<double>(v.size());
    };
    const double did = mean(change_t) - mean(change_c);
    const double se = std::sqrt(var_n(change_t) / n_t + var_n(change_c) / n_c);
    const weft::EventData data = event_test::to_data(p, false);
    for (const char* text : {"group-time", "group-time not-yet", "imputation", "twfe"}) {
        INFO(text);
        const weft::EventResult r = weft::estimate_event(data, weft::parse_design_text(text));
        REQUIRE(r.overall.estimated);
        CHECK(close(r.overall.estimate, did, 1e-12));
        CHECK_FALSE(r.pre_test.available);
        CHECK_FALSE(r.pre_test.reason.empty());
        const weft::EventTimeEffect& e0 = r.event_times.back();
        CHECK(e0.event_time == 0);
        CHECK(close(e0.effect.estimate, did, 1e-12));
        CHECK(r.treated_units == static_cast<std::size_t>(n_t));
        if (std::string(text).rfind("group-time", 0) == 0) {
            CHECK(close(r.overall.se, se, 1e-12));
            CHECK(close(e0.effect.se, se, 1e-12));
        }
        if (std::string(text) == "twfe") {
            // N = 36 rows, K = 2 (the period indicator and e = 0), G = 18 units
            const double factor = 18.0 / 17.0 * 35.0 / 34.0;
            // CR0 of the 2x2 regression by unit = the two-sample variance with n denominators
            CHECK(close(e0.effect.se, se * std::sqrt(factor), 1e-12));
            CHECK(r.df == 17);
        }
    }
}

TEST_CASE("one cohort, never-treated, balanced: twfe post coefficients equal group-time effects", "[event][identity]") {
    event_test::SimSpec spec;
    spec.cohorts = {4};
    spec.units = 40;
    spec.seed = 7;
    const weft::EventData data = event_test::to_data(event_test::simulate(spec), false);
    const weft::EventResult gt = weft::estimate_event(data, weft::parse_design_text("group-time"));
    const weft::EventResult tw = weft::estimate_event(data, weft::parse_design_text("twfe"));
    REQUIRE(gt.event_times.size() == tw.event_times.size());
    int compared = 0;
    for (std::size_t k = 0; k < gt.event_times.size(); ++k) {
        if (gt.event_times[k].event_time < 0) continue;
        REQUIRE(gt.event_times[k].effect.estimated);
        CHECK(close(tw.event_times[k].effect.estimate, gt.event_times[k].effect.estimate, 1e-10));
        ++compared;
    }
    CHECK(compared == 4);
    CHECK(tw.warnings.empty());  // one cohort: no staggered-adoption warning
}

TEST_CASE("staggered cohorts with heterogeneous effects: twfe differs from group-time", "[event][identity]") {
    event_test::SimSpec spec;
    spec.cohorts = {2, 4, 6};
    spec.units = 60;
    spec.noise = 0.05;  // differences then come from the weighting, not from noise
    spec.seed = 8;
    const weft::EventData data = event_test::to_data(event_test::simulate(spec), false);
    const weft::EventResult gt = weft::estimate_event(data, weft::parse_design_text("group-time before=3 after=3"));
    const weft::EventResult tw = weft::estimate_event(data, weft::parse_design_text("twfe before=3 after=3"));
    double largest = 0;
    for (std::size_t k = 0; k < gt.event_times.size(); ++k)
        if (gt.event_times[k].event_time >= 0 && gt.event_times[k].effect.estimated && tw.event_times[k].effect.estimated)
            largest = std::max(largest, std::fabs(gt.event_times[k].effect.estimate - tw.event_times[k].effect.estimate));
    CHECK(largest > 0.2);
    CHECK(std::fabs(gt.overall.estimate - tw.overall.estimate) > 0.5);
    REQUIRE_FALSE(tw.warnings.empty());
    CHECK(tw.warnings.back().find("staggered") != std::string::npos);
}
