// weft's three event-study estimators against independent computations in R
// (event_reference.R: base R lm / lm.fit and sandwich::vcovCL, written from Callaway and
// Sant'Anna 2021, Sant'Anna and Zhao 2020 and Borusyak, Jaravel and Spiess 2024), run
// inside the test on the same seeded panels. Point estimates and standard errors agree
// to relative 1e-9 (absolute below magnitude 1): both sides solve the same small
// least-squares problems in double precision; a convention difference (a base period, a
// comparison set, a df factor, a missing weight-influence term) moves numbers by 1e-3 or
// more.
#include <map>
#include <string>

#include "event_support.hpp"

using event_test::close;

namespace {

constexpr double kTolerance = 1e-9;

const char* key(weft::EventEstimator e) {
    return e == weft::EventEstimator::twfe ? "twfe" : e == weft::EventEstimator::imputation ? "imputation" : "group_time";
}

void compare(const weft::EventResult& w, const nlohmann::json& ref, const std::string& what) {
    INFO(what);
    // every event time R estimates, weft estimates with the same numbers, and no other
    std::map<int, const nlohmann::json*> by_e;
    for (const auto& row : ref["event"]) by_e[row["e"].get<int>()] = &row;
    REQUIRE(by_e.size() >= 3);  // the oracle produced event-time effects to compare
    REQUIRE(ref["cohorts"].size() >= 2);
    std::size_t estimated = 0;
    for (const weft::EventTimeEffect& row : w.event_times) {
        if (!row.effect.estimated) continue;
        ++estimated;
        INFO("event time " << row.event_time);
        REQUIRE(by_e.count(row.event_time) == 1);
        const nlohmann::json& r = *by_e[row.event_time];
        CHECK(close(row.effect.estimate, r["est"].get<double>(), kTolerance));
        CHECK(close(row.effect.se, r["se"].get<double>(), kTolerance));
    }
    CHECK(estimated == by_e.size());
    CHECK(w.overall.estimated);
    CHECK(close(w.overall.estimate, ref["overall"]["est"].get<double>(), kTolerance));
    CHECK(close(w.overall.se, ref["overall"]["se"].get<double>(), kTolerance));
    std::size_t cohorts = 0;
    for (const weft::CohortEffect& c : w.cohorts) {
        if (!c.effect.estimated) continue;
        bool found = false;
        for (const auto& r : ref["cohorts"])
            if (r["cohort"].get<double>() == c.cohort_period) {
                found = true;
                CHECK(close(c.effect.estimate, r["est"].get<double>(), kTolerance));
                CHECK(close(c.effect.se, r["se"].get<double>(), kTolerance));
            }
        CHECK(found);
        ++cohorts;
    }
    CHECK(cohorts == ref["cohorts"].size());
    if (ref["pre"].is_null()) {
        CHECK_FALSE(w.pre_test.available);
    } else {
        REQUIRE(w.pre_test.available);
        CHECK(close(w.pre_test.statistic, ref["pre"]["stat"].get<double>(), 1e-8));
        CHECK(w.pre_test.df == ref["pre"]["df"].get<double>());
    }
}

void run_case(const event_test::SimSpec& spec, const std::string& design_text, const std::string& tag) {
    const event_test::SimPanel panel = event_test::simulate(spec);
    const weft::EventData data = event_test::to_data(panel, spec.controls);
    const weft::EventDesign design = weft::parse_design_text(design_text);
    const nlohmann::json ref = event_test::run_reference(panel, spec.controls, weft::to_word(design.comparison),
                                                         design.anticipation, design.before, design.after, tag);
    for (weft::EventEstimator e : {weft::EventEstimator::group_time, weft::EventEstimator::imputation,
                                   weft::EventEstimator::twfe}) {
        weft::EventDesign d = design;
        d.estimator = e;
        compare(weft::estimate_event(data, d), ref[key(e)], tag + " " + key(e));
    }
}

}  // namespace

TEST_CASE("event reference: staggered, never-treated, balanced", "[event][reference]") {
    event_test::SimSpec spec;
    spec.seed = 11;
    run_case(spec, "", "balanced_never");
}

TEST_CASE("event reference: not-yet comparison, three cohorts", "[event][reference]") {
    event_test::SimSpec spec;
    spec.seed = 12;
    spec.cohorts = {2, 4, 6};
    run_case(spec, "not-yet", "three_notyet");
}

TEST_CASE("event reference: controls, anticipation and an unbalanced panel", "[event][reference]") {
    event_test::SimSpec spec;
    spec.seed = 13;
    spec.controls = true;
    spec.missing_share = 0.08;
    spec.units = 90;
    run_case(spec, "not-yet anticipation=1", "controls_unbalanced");
    run_case(spec, "never before=3 after=2", "controls_window");
}

TEST_CASE("event reference: no never-treated units, binned window", "[event][reference]") {
    event_test::SimSpec spec;
    spec.seed = 14;
    spec.never_treated = false;
    spec.cohorts = {2, 4, 6};
    run_case(spec, "not-yet before=2 after=2", "no_never");
}
