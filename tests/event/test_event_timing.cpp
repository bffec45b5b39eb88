// Treatment timing and the design text: each bad input gives its message naming the row,
// unit or word (FUNCTIONS.md, CONVENTIONS.md "Difference in differences"); documented
// handling of units treated from their first observed period and of missing cells.
// Expected texts are weft's own contract (the messages are the specification here).
#include <cmath>
#include <string>

#include "event_support.hpp"

namespace {

// Four units over 2001..2004: unit 1 never, unit 2 from 2003, unit 3 from 2002, unit 4 never.
event_test::SimPanel small_panel() {
    event_test::SimPanel p;
    const double start[] = {0, 2003, 2002, 0};
    for (int i = 0; i < 4; ++i)
        for (int t = 0; t < 4; ++t) {
            p.unit.push_back(i + 1);
            p.period.push_back(2001 + t);
            p.y.push_back(1.0 * i + 0.5 * t + (start[i] > 0 && 2001 + t >= start[i] ? 2.0 : 0.0) + 0.1 * ((i * 7 + t * 3) % 5));
            p.d.push_back(start[i] > 0 && 2001 + t >= start[i] ? 1 : 0);
            p.x.push_back(0.3 * ((i + t) % 3));
        }
    return p;
}

std::string message_of(const weft::EventData& data, const std::string& design = "") {
    try {
        weft::estimate_event(data, weft::parse_design_text(design));
    } catch (const weft::Error& e) {
        return e.what();
    }
    return "(no error)";
}

bool contains(const std::string& text, const std::string& part) { return text.find(part) != std::string::npos; }

}  // namespace

TEST_CASE("treatment other than 0 or 1 names the row", "[event][timing]") {
    event_test::SimPanel p = small_panel();
    p.d[5] = 0.5;
    const std::string m = message_of(event_test::to_data(p, false));
    INFO(m);
    CHECK(contains(m, "treatment in row 7 is 0.5"));  // first_row_number 2: input position 5 is row 7
    CHECK(contains(m, "0 (untreated) or 1"));
}

TEST_CASE("a unit that goes back to 0 is an error naming it", "[event][timing]") {
    event_test::SimPanel p = small_panel();
    p.d[11] = 0;  // unit 3, 2004
    const std::string m = message_of(event_test::to_data(p, false));
    INFO(m);
    CHECK(contains(m, "unit \"3\" is treated from period 2002"));
    CHECK(contains(m, "untreated again in period 2004 (row 13)"));
}

TEST_CASE("a treatment that varies inside a unit-period is named; a plain repeat is the index's error", "[event][timing]") {
    event_test::SimPanel p = small_panel();
    p.unit.push_back(2); p.period.push_back(2003); p.y.push_back(1); p.d.push_back(0); p.x.push_back(0);
    std::string m = message_of(event_test::to_data(p, false));
    INFO(m);
    CHECK(contains(m, "treatment varies inside unit \"2\" in period 2003"));
    p.d.back() = 1;
    m = message_of(event_test::to_data(p, false));
    CHECK(contains(m, "unit \"2\" has two rows for period 2003"));
}

TEST_CASE("a unit treated from the first period is left out with a warning", "[event][timing]") {
    event_test::SimPanel p = small_panel();
    const weft::EventResult before = weft::estimate_event(event_test::to_data(p, false), {});
    for (int t = 0; t < 4; ++t) {  // unit 5: treated in every period, the first included
        p.unit.push_back(5); p.period.push_back(2001 + t); p.y.push_back(9 + t); p.d.push_back(1); p.x.push_back(0);
    }
    const weft::EventResult after = weft::estimate_event(event_test::to_data(p, false), {});
    REQUIRE_FALSE(after.warnings.empty());
    CHECK(contains(after.warnings.front(), "(\"5\") have no untreated period to compare with: left out"));
    CHECK(after.units == before.units);
    CHECK(after.overall.estimate == before.overall.estimate);
    CHECK(after.overall.se == before.overall.se);
}

TEST_CASE("no unit adopts inside the panel", "[event][timing]") {
    event_test::SimPanel p = small_panel();
    for (double& d : p.d) d = 0;
    CHECK(contains(message_of(event_test::to_data(p, false)), "no unit switches from 0 to 1"));
}

TEST_CASE("missing cells drop their rows and are counted", "[event][timing]") {
    event_test::SimPanel p = small_panel();
    weft::EventData data = event_test::to_data(p, true);
    data.outcome.missing.assign(p.y.size(), 0);
    data.outcome.missing[0] = 1;
    data.controls[0].missing.assign(p.y.size(), 0);
    data.controls[0].missing[6] = 1;
    const weft::EventResult r = weft::estimate_event(data, {});
    CHECK(r.rows_dropped == 2);
    CHECK(r.rows_used == 14);
}

TEST_CASE("design text: words, conflicts, limits", "[event][timing]") {
    const weft::EventDesign d = weft::parse_design_text("TWFE, not-yet anticipation=1 before=3 after=4 level=0.9");
    CHECK(d.estimator == weft::EventEstimator::twfe);
    CHECK(d.comparison == weft::Comparison::not_yet);
    CHECK(d.anticipation == 1);
    CHECK(d.before == 3);
    CHECK(d.after == 4);
    CHECK(d.level == 0.9);
    CHECK(weft::parse_design_text(weft::describe(d)).before == 3);
    auto error = [](const char* text) {
        try { weft::parse_design_text(text); } catch (const weft::Error& e) { return std::string(e.what()); }
        return std::string("(no error)");
    };
    CHECK(contains(error("group-time sideways"), "unknown word \"sideways\""));
    CHECK(contains(error("twfe imputation"), "\"twfe\" and \"imputation\" conflict"));
    CHECK(contains(error("before=-2"), "whole number"));
    CHECK(contains(error("level=1.5"), "between 0 and 1"));
    CHECK(contains(error("twfe anticipation=1 before=1"), "twfe needs before= at least anticipation + 1 = 2"));
}

TEST_CASE("a cohort without a base period under anticipation is left out with a warning", "[event][timing]") {
    event_test::SimPanel p = small_panel();  // unit 3 adopts in 2002: with anticipation=1 no base period
    const weft::EventResult r = weft::estimate_event(event_test::to_data(p, false), weft::parse_design_text("anticipation=1"));
    bool warned = false;
    for (const std::string& w : r.warnings) warned = warned || contains(w, "cohort 2002 has no untreated base period");
    CHECK(warned);
    REQUIRE(r.cohorts.size() == 2);
    CHECK_FALSE(r.cohorts[0].effect.estimated);
    CHECK(r.cohorts[1].effect.estimated);
}

TEST_CASE("a non-finite treatment not marked missing names the row", "[event][timing]") {
    event_test::SimPanel p = small_panel();
    p.d[2] = NAN;
    const std::string m = message_of(event_test::to_data(p, false));
    INFO(m);
    CHECK(contains(m, "d in row 4 is not a finite number"));
}
