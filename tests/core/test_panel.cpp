// Panel index and transforms: grid, adjacency, gap rule, duplicates, shuffled rows,
// structure report. Expected values are worked out by hand from the rules of
// CONVENTIONS.md "Panel index" (noted beside each) on tiny panels, or are equalities
// between two routes (shuffled vs sorted input, weft's fd vs an explicit grid
// difference built in the test).
#include <algorithm>
#include <map>
#include <numeric>
#include <random>

#include "core_support.hpp"

namespace {

weft::Column column(const std::string& name, std::vector<double> v, std::vector<std::uint8_t> missing = {}) {
    weft::Column c;
    c.name = name;
    c.values = std::move(v);
    c.missing = std::move(missing);
    return c;
}

// unit ids as numbers, with an optional missing-value mask
weft::UnitColumn numeric(std::vector<double> ids, std::vector<std::uint8_t> missing = {}) {
    weft::UnitColumn u;
    u.name = "unit";
    u.numbers = std::move(ids);
    u.missing = std::move(missing);
    return u;
}

weft::UnitColumn text_units(std::vector<std::string> ids) {
    weft::UnitColumn u;
    u.name = "unit";
    u.text = std::move(ids);
    return u;
}

// Unit "A" in periods 1, 2, 4 (skips 3), unit "B" in 1, 2, 3, 4; rows deliberately
// out of order. Grid (CONVENTIONS.md): {1, 2, 3, 4}.
struct Small {
    weft::UnitColumn units = text_units({"B", "A", "B", "A", "B", "A", "B"});
    weft::Column periods = column("t", {3, 4, 1, 1, 4, 2, 2});
    weft::Column x = column("x", {30, 14, 10, 11, 40, 12, 20});
};

}  // namespace

TEST_CASE("index: grid, unit order and rows by unit", "[panel]") {
    Small s;
    const weft::PanelIndex index = weft::build_index(s.units, s.periods, 1);
    CHECK(index.grid == std::vector<double>{1, 2, 3, 4});
    CHECK(index.unit_labels == std::vector<std::string>{"A", "B"});
    // rows of A sorted by period: input positions 3 (t=1), 5 (t=2), 1 (t=4)
    REQUIRE(index.unit_start == std::vector<std::size_t>{0, 3, 7});
    CHECK(std::vector<std::size_t>(index.rows_by_unit.begin(), index.rows_by_unit.begin() + 3) ==
          std::vector<std::size_t>{3, 5, 1});
    CHECK(index.period_of_row[1] == 3);  // period 4 is grid position 3
}

TEST_CASE("lag, lead and difference follow the grid, never the previous row", "[panel][gaps]") {
    Small s;
    const weft::PanelIndex index = weft::build_index(s.units, s.periods, 1);
    const weft::Series l1 = weft::lag(s.x, index, 1);
    // A at t=4 (row 1): t=3 is absent for A -> undefined (gap rule); the previous row of
    // A (t=2, value 12) must NOT be used.
    CHECK_FALSE(l1.is_defined(1));
    // A at t=2 (row 5): value at t=1 is 11
    REQUIRE(l1.is_defined(5));
    CHECK(l1.value[5] == 11);
    // first period of each unit: undefined
    CHECK_FALSE(l1.is_defined(2));
    CHECK_FALSE(l1.is_defined(3));
    // B at t=3 (row 0): 20
    CHECK(l1.value[0] == 20);
    const weft::Series l2 = weft::lag(s.x, index, 2);
    // A at t=4: two grid steps earlier is t=2 -> 12
    REQUIRE(l2.is_defined(1));
    CHECK(l2.value[1] == 12);
    const weft::Series lead = weft::lag(s.x, index, -1);
    // A at t=2: t=3 absent -> undefined; A at t=1: 12; B at t=3: 40; B at t=4: undefined
    CHECK_FALSE(lead.is_defined(5));
    CHECK(lead.value[3] == 12);
    CHECK(lead.value[0] == 40);
    CHECK_FALSE(lead.is_defined(4));
    const weft::Series d1 = weft::difference(s.x, index, 1);
    CHECK_FALSE(d1.is_defined(1));  // across A's gap: not differenced
    CHECK(d1.value[5] == 1);        // 12 - 11
    CHECK(d1.value[4] == 10);       // B: 40 - 30
    const weft::Series d2 = weft::difference(s.x, index, 2);
    CHECK(d2.value[1] == 2);        // A: x(4) - x(2) = 14 - 12
    CHECK_THROWS_AS(weft::lag(s.x, index, 0), weft::Error);
}

TEST_CASE("a grid with a wide step still differences: periods are grid neighbours", "[panel][gaps]") {
    // CONVENTIONS.md: a panel observed only in two years, three years apart, still
    // differences across them.
    const weft::UnitColumn units = text_units({"u", "u", "v", "v"});
    const weft::Column periods = column("year", {2000, 2003, 2003, 2000});
    const weft::Column x = column("x", {1, 5, 7, 2});
    const weft::Series d = weft::difference(x, units, periods, 1);
    REQUIRE(d.is_defined(1));
    CHECK(d.value[1] == 4);
    CHECK(d.value[2] == 5);
    CHECK_FALSE(d.is_defined(0));
}

TEST_CASE("a missing value is undefined in transforms and never a number", "[panel]") {
    Small s;
    s.x.missing = {0, 0, 0, 0, 0, 1, 0};  // A at t=2 missing
    const weft::PanelIndex index = weft::build_index(s.units, s.periods, 1);
    const weft::Series l1 = weft::lag(s.x, index, 1);
    CHECK(l1.is_defined(5));
    const weft::Series d1 = weft::difference(s.x, index, 1);
    CHECK_FALSE(d1.is_defined(5));  // own value missing
    const weft::Series m = weft::unit_means(s.x, index);
    CHECK_FALSE(m.is_defined(5));
    CHECK(m.value[3] == (11.0 + 14.0) / 2.0);  // A's present values 11 and 14
    const weft::Series dm = weft::demean(s.x, index);
    CHECK(dm.value[1] == 14.0 - 12.5);
    // NaN outside the mask is an error that names the column and row
    Small bad;
    bad.x.values[4] = std::numeric_limits<double>::quiet_NaN();
    const std::string msg = core_test::message_of([&] { weft::lag(bad.x, bad.units, bad.periods, 1, 10); });
    CHECK(msg.find("\"x\"") != std::string::npos);
    CHECK(msg.find("row 14") != std::string::npos);
}

TEST_CASE("demean, unit means, quasi-demeaning and period indicators", "[panel]") {
    const weft::UnitColumn units = text_units({"a", "b", "a", "b", "a"});
    const weft::Column x = column("x", {1, 10, 2, 20, 6});
    const weft::Series m = weft::unit_means(x, units);
    CHECK(m.value[0] == 3);
    CHECK(m.value[1] == 15);
    const weft::Series d = weft::demean(x, units);
    CHECK(d.value[4] == 3);
    CHECK(d.value[3] == 5);
    const weft::PanelIndex groups = weft::build_unit_groups(units);
    const weft::Series q = weft::quasi_demean(x, groups, {0.5, 0.25});
    CHECK(q.value[0] == 1 - 0.5 * 3);
    CHECK(q.value[1] == 10 - 0.25 * 15);
    const weft::Column periods = column("t", {2001, 2000, 2002, 2000, 2001}, {0, 0, 0, 0, 1});
    const weft::PeriodIndicators p = weft::period_indicators(periods, true);
    CHECK(p.labels == std::vector<std::string>{"period 2001", "period 2002"});
    CHECK(p.columns[0].value == std::vector<double>{1, 0, 0, 0, 0});
    CHECK_FALSE(p.columns[0].is_defined(4));
    const weft::PeriodIndicators all = weft::period_indicators(periods, false);
    CHECK(all.labels.size() == 3);
}

TEST_CASE("a repeated (unit, period) is rejected naming unit, period and rows", "[panel]") {
    const weft::UnitColumn units = text_units({"North 7", "South 2", "North 7"});
    const weft::Column periods = column("year", {2019, 2019, 2019});
    const std::string msg = core_test::message_of([&] { weft::build_index(units, periods, 2); });
    INFO(msg);
    CHECK(msg.find("unit \"North 7\"") != std::string::npos);
    CHECK(msg.find("2019") != std::string::npos);
    CHECK(msg.find("rows 2 and 4") != std::string::npos);
    // the structure report counts instead of throwing
    weft::StructureReport r;
    REQUIRE_NOTHROW(r = weft::describe_structure(units, periods, 2));
    CHECK(r.duplicate_pairs == 1);
    CHECK_FALSE(r.balanced);
}

TEST_CASE("structure report", "[panel]") {
    // A: 1, 2, 4 (one gap); B: 1..4; C: 3 only (single row); one row missing its unit.
    weft::UnitColumn units = text_units({"A", "A", "A", "B", "B", "B", "B", "C", ""});
    const weft::Column periods = column("t", {1, 2, 4, 1, 2, 3, 4, 3, 2});
    const weft::StructureReport r = weft::describe_structure(units, periods);
    CHECK(r.rows_input == 9);
    CHECK(r.rows == 8);
    CHECK(r.rows_missing == 1);
    CHECK(r.units == 3);
    CHECK(r.periods == 4);
    CHECK_FALSE(r.balanced);
    CHECK(r.min_periods == 1);
    CHECK(r.median_periods == 3);
    CHECK(r.max_periods == 4);
    CHECK(r.gaps == 1);
    CHECK(r.units_with_gaps == 1);
    CHECK(r.single_row_units == 1);
    CHECK(r.duplicate_pairs == 0);
    const weft::StructureReport g = weft::describe_structure(core_test::grunfeld().units, core_test::grunfeld().periods);
    // grunfeld_pooled.json "sample": 10 units, 20 periods, balanced, no gaps
    CHECK(g.units == 10);
    CHECK(g.periods == 20);
    CHECK(g.balanced);
    CHECK(g.gaps == 0);
}

namespace {

// Grunfeld with firm 1's 1940 row removed: firm 1 skips a grid period.
weft::PanelData gapped_grunfeld() {
    weft::PanelData d = core_test::grunfeld();
    weft::PanelData out = d;
    auto keep = [&](std::size_t i) { return !(d.units.numbers[i] == 1 && d.periods.values[i] == 1940); };
    auto filter = [&](const std::vector<double>& v) {
        std::vector<double> r;
        for (std::size_t i = 0; i < v.size(); ++i)
            if (keep(i)) r.push_back(v[i]);
        return r;
    };
    out.outcome.values = filter(d.outcome.values);
    out.regressors[0].values = filter(d.regressors[0].values);
    out.regressors[1].values = filter(d.regressors[1].values);
    out.units.numbers = filter(d.units.numbers);
    out.periods.values = filter(d.periods.values);
    return out;
}

weft::PanelData permuted(const weft::PanelData& d, const std::vector<std::size_t>& order) {
    weft::PanelData out = d;
    for (std::size_t i = 0; i < order.size(); ++i) {
        out.outcome.values[i] = d.outcome.values[order[i]];
        for (std::size_t j = 0; j < d.regressors.size(); ++j)
            out.regressors[j].values[i] = d.regressors[j].values[order[i]];
        if (d.units.is_text()) out.units.text[i] = d.units.text[order[i]];
        else out.units.numbers[i] = d.units.numbers[order[i]];
        out.periods.values[i] = d.periods.values[order[i]];
    }
    return out;
}

// Explicit differences in the test: for each row (unit, year) look up (unit, year - 1)
// (the grid is every year 1935..1954 here) or, for the wrong rule, the previous row of
// the unit in sorted order.
weft::PanelData explicit_difference(const weft::PanelData& d, bool row_wise) {
    std::map<std::pair<double, double>, std::size_t> at;
    for (std::size_t i = 0; i < d.outcome.size(); ++i) at[{d.units.numbers[i], d.periods.values[i]}] = i;
    weft::PanelData out;
    out.outcome.name = "inv";
    out.regressors.resize(2);
    out.regressors[0].name = "value";
    out.regressors[1].name = "capital";
    std::pair<double, double> previous{-1, -1};
    std::size_t previous_row = 0;
    for (const auto& [key, row] : at) {
        std::size_t earlier = 0;
        bool ok = false;
        if (row_wise) {
            ok = previous.first == key.first;
            earlier = previous_row;
        } else {
            auto it = at.find({key.first, key.second - 1});
            ok = it != at.end();
            if (ok) earlier = it->second;
        }
        previous = key;
        previous_row = row;
        if (!ok) continue;
        out.outcome.values.push_back(d.outcome.values[row] - d.outcome.values[earlier]);
        for (std::size_t j = 0; j < 2; ++j)
            out.regressors[j].values.push_back(d.regressors[j].values[row] - d.regressors[j].values[earlier]);
        out.units.numbers.push_back(key.first);
        out.periods.values.push_back(key.second);
    }
    return out;
}

}  // namespace

TEST_CASE("fd on a gapped panel differences along the grid only", "[panel][gaps]") {
    const weft::PanelData d = gapped_grunfeld();
    const weft::Fit fd = weft::fit_model(d, weft::parse_model_text("fd cluster"));
    // 199 level rows; firm 1 loses the pairs ending in 1940 and 1941 (CONVENTIONS.md gap rule)
    CHECK(fd.nobs == 190 - 2);
    // the same equation built explicitly by the test and fitted as pooled OLS
    const weft::Fit grid = weft::fit_model(explicit_difference(d, false), weft::parse_model_text("pooled cluster"));
    const weft::Fit rows = weft::fit_model(explicit_difference(d, true), weft::parse_model_text("pooled cluster"));
    REQUIRE(grid.nobs == fd.nobs);
    CHECK(rows.nobs == 190 - 1);
    for (Eigen::Index k = 0; k < 3; ++k) {
        CORE_CHECK_REL(fd.coef[k], grid.coef[k], 1e-12, "coef vs explicit grid difference");
        CORE_CHECK_REL(fd.se[k], grid.se[k], 1e-12, "se vs explicit grid difference");
        // the row-wise rule (what plm's model = "fd" does) gives something else
        CHECK(core_test::rel_diff(fd.coef[k], rows.coef[k]) > 1e-6);
    }
    CHECK_FALSE(fd.warnings.empty());  // it says that differences were lost to a gap
}

TEST_CASE("shuffled rows give identical results, aligned to the input rows", "[panel]") {
    const weft::PanelData d = gapped_grunfeld();
    std::vector<std::size_t> order(d.outcome.size());
    std::iota(order.begin(), order.end(), std::size_t{0});
    std::mt19937 rng(20261202);  // fixed seed
    std::shuffle(order.begin(), order.end(), rng);
    const weft::PanelData s = permuted(d, order);
    for (const char* model : {"pooled periods cluster-both", "fd dk", "within periods cluster", "random hc3", "between hc1"}) {
        INFO(model);
        const weft::Fit a = weft::fit_model(d, weft::parse_model_text(model));
        const weft::Fit b = weft::fit_model(s, weft::parse_model_text(model));
        REQUIRE(a.equation.terms == b.equation.terms);
        for (Eigen::Index k = 0; k < a.coef.size(); ++k) {
            CHECK(a.coef[k] == b.coef[k]);
            CHECK(a.se[k] == b.se[k]);
        }
        CHECK(a.ssr == b.ssr);
        for (std::size_t i = 0; i < order.size(); ++i) {
            // shuffled row i is original row order[i]
            CHECK(b.residuals.defined[i] == a.residuals.defined[order[i]]);
            CHECK(b.residuals.value[i] == a.residuals.value[order[i]]);
        }
    }
    // text ids and number ids index the same way
    weft::PanelData t = d;
    t.units.numbers.clear();
    for (double u : d.units.numbers) t.units.text.push_back("firm " + weft::format_number(u + 100));
    const weft::Fit a = weft::fit_model(d, weft::parse_model_text("within cluster"));
    const weft::Fit b = weft::fit_model(t, weft::parse_model_text("within cluster"));
    CHECK(a.coef == b.coef);
}

TEST_CASE("index: input order is recognised only when every row is in place", "[panel]") {
    // in_input_order lets the lean route read rows in place; it must be true exactly
    // when rows_by_unit is 0, 1, ..., n - 1 (worked out by hand for each case)
    auto identity = [](const weft::PanelIndex& index) {
        for (std::size_t k = 0; k < index.rows_by_unit.size(); ++k)
            if (index.rows_by_unit[k] != k) return false;
        return index.rows_by_unit.size() == index.n_rows;
    };
    struct Case {
        const char* what;
        weft::UnitColumn units;
        weft::Column periods;
        bool expected;
    };
    const std::vector<Case> cases = {
        {"sorted, gap in unit 2", numeric({1, 1, 2, 2}), column("t", {1, 2, 1, 3}), true},
        {"periods out of order", numeric({1, 1, 2, 2}), column("t", {2, 1, 1, 2}), false},
        {"units out of order", numeric({2, 2, 1, 1}), column("t", {1, 2, 1, 2}), false},
        {"a period missing", numeric({1, 1, 2, 2}), column("t", {1, 2, 1, 2}, {0, 0, 1, 0}), false},
        {"text ids, sorted", text_units({"a", "a", "b"}), column("t", {1, 2, 1}), true},
        {"text ids out of order", text_units({"b", "a", "a"}), column("t", {1, 1, 2}), false},
        {"a unit missing", numeric({1, 1, 2, 2}, {0, 1, 0, 0}), column("t", {1, 2, 1, 2}), false},
    };
    for (const Case& c : cases) {
        INFO(c.what);
        const weft::PanelIndex index = weft::build_index(c.units, c.periods);
        CHECK(index.in_input_order == c.expected);
        CHECK(identity(index) == c.expected);
    }
}

TEST_CASE("index: sorted numeric ids take a one-pass route that agrees with the general one", "[panel]") {
    // build_index reads numeric ids with nothing missing, sorted by unit then period, in
    // one pass. A missing-value mask that marks nothing sends the same data down the
    // general route (sort, then grid), so the two indexes must be identical, field by
    // field. The panels are sorted with gaps; periods first seen in a later unit fall
    // inside the grid known so far, which renumbers the positions already given.
    // the general route: a missing-value mask that marks no row
    auto unmasked = [](const std::vector<double>& ids) { return std::vector<std::uint8_t>(ids.size(), 0); };
    std::mt19937 rng(20261202);
    for (int trial = 0; trial < 200; ++trial) {
        const int n_units = 1 + static_cast<int>(rng() % 12), n_periods = 1 + static_cast<int>(rng() % 9);
        std::vector<double> ids, t;
        double id = -5.0 + static_cast<double>(rng() % 5);
        for (int u = 0; u < n_units; ++u) {
            id += 1.0 + static_cast<double>(rng() % 3);   // ids rise, with gaps
            for (int p = 0; p < n_periods; ++p)
                if (rng() % 3 != 0) {
                    ids.push_back(id);
                    t.push_back(1990.0 + 2.0 * p);
                }
        }
        if (ids.empty()) continue;
        INFO("trial " << trial << ", rows " << ids.size());
        const weft::UnitColumn fast = numeric(ids), general = numeric(ids, unmasked(ids));
        const weft::Column periods = column("t", t);
        const weft::PanelIndex a = weft::build_index(fast, periods, 3);
        const weft::PanelIndex b = weft::build_index(general, periods, 3);
        CHECK(a.in_input_order);
        CHECK_FALSE(a.rows_by_unit.listed());   // 0..n-1 without a list
        CHECK(b.rows_by_unit.listed());
        CHECK(a.n_rows == b.n_rows);
        CHECK(a.grid == b.grid);
        CHECK(a.unit_labels == b.unit_labels);
        CHECK(a.unit_of_row == b.unit_of_row);
        CHECK(a.period_of_row == b.period_of_row);
        CHECK(a.unit_start == b.unit_start);
        CHECK(a.rows_by_unit == b.rows_by_unit);
        // a repeated pair, counted alike by the structure report on both routes
        std::vector<double> ids2 = ids, t2 = t;
        const std::size_t at = rng() % ids.size();
        ids2.insert(ids2.begin() + static_cast<std::ptrdiff_t>(at), ids[at]);
        t2.insert(t2.begin() + static_cast<std::ptrdiff_t>(at), t[at]);
        const weft::UnitColumn fast2 = numeric(ids2), general2 = numeric(ids2, unmasked(ids2));
        const weft::Column periods2 = column("t", t2);
        const std::string msg_a = core_test::message_of([&] { weft::build_index(fast2, periods2, 3); });
        const std::string msg_b = core_test::message_of([&] { weft::build_index(general2, periods2, 3); });
        CHECK(msg_a == msg_b);
        CHECK(weft::describe_structure(fast2, periods2, 3).duplicate_pairs ==
              weft::describe_structure(general2, periods2, 3).duplicate_pairs);
    }
}

TEST_CASE("index: on the one-pass route a repeated pair is named, after any bad id", "[panel]") {
    weft::UnitColumn units;
    units.numbers = {1, 1, 2, 2, 2};
    // unit 2 has period 3 twice, at input rows 3 and 4 (row numbers 5 and 6 from 2)
    const std::string msg = core_test::message_of(
        [&] { weft::build_index(units, column("t", {1, 2, 1, 3, 3}), 2); });
    INFO(msg);
    CHECK(msg.find("unit \"2\" has two rows for period 3 (rows 5 and 6)") != std::string::npos);
    // a unit id that is not a number, below the repeated pair, is reported first (as
    // the general route does: ids are checked before pairs)
    units.numbers = {1, 1, 2, 2, std::numeric_limits<double>::quiet_NaN()};
    const std::string bad = core_test::message_of(
        [&] { weft::build_index(units, column("t", {1, 1, 1, 3, 3}), 2); });
    INFO(bad);
    CHECK(bad.find("units, row 6") != std::string::npos);
}
