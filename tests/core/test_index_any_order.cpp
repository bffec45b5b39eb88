// The panel index for any row order and either id type (panel_hash.cpp): checked
// against an index worked out inside the test from CONVENTIONS.md "Panel index" (units
// numbered in sorted order, numbers ascending and text by byte order; the rows of a
// unit by period, then input row; the grid the sorted distinct periods; the first
// repeated pair in that order named with its two rows), built here by sorting
// (id, period, row) triples with the standard library. The fits are an identity: the
// same panel in another row order with the same ids as text is the same equation, so
// the estimates and standard errors agree to rounding.
#include <algorithm>
#include <map>
#include <numeric>
#include <random>
#include <string>
#include <tuple>

#include "core_support.hpp"

namespace {

struct Expected {
    std::vector<std::string> labels;
    std::vector<std::int32_t> unit_of_row, period_of_row;
    std::vector<std::size_t> rows_by_unit, unit_start;
    std::vector<double> grid;
};

// The index by the book: a plain sort of (id, period, row) over the rows with an id.
template <class Id>
Expected expected_index(const std::vector<Id>& ids, const std::vector<bool>& has_id, const std::vector<double>& t,
                        std::string (*label)(const Id&)) {
    Expected e;
    std::vector<std::tuple<Id, double, std::size_t>> triples;
    for (std::size_t r = 0; r < ids.size(); ++r)
        if (has_id[r]) triples.emplace_back(ids[r], t[r], r);
    std::sort(triples.begin(), triples.end());
    for (const auto& tr : triples) e.grid.push_back(std::get<1>(tr));
    std::sort(e.grid.begin(), e.grid.end());
    e.grid.erase(std::unique(e.grid.begin(), e.grid.end()), e.grid.end());
    e.unit_of_row.assign(ids.size(), -1);
    e.period_of_row.assign(ids.size(), -1);
    for (std::size_t k = 0; k < triples.size(); ++k) {
        const auto& [id, p, r] = triples[k];
        if (k == 0 || !(std::get<0>(triples[k - 1]) == id)) {
            e.unit_start.push_back(k);
            e.labels.push_back(label(id));
        }
        e.unit_of_row[r] = static_cast<std::int32_t>(e.labels.size() - 1);
        e.period_of_row[r] = static_cast<std::int32_t>(std::lower_bound(e.grid.begin(), e.grid.end(), p) - e.grid.begin());
        e.rows_by_unit.push_back(r);
    }
    e.unit_start.push_back(triples.size());
    return e;
}

void check_same(const weft::PanelIndex& a, const Expected& e) {
    CHECK(a.unit_labels == e.labels);
    CHECK(a.unit_of_row == e.unit_of_row);
    CHECK(a.period_of_row == e.period_of_row);
    CHECK(a.unit_start == e.unit_start);
    CHECK(a.grid == e.grid);
    REQUIRE(a.rows_by_unit.size() == e.rows_by_unit.size());
    for (std::size_t k = 0; k < e.rows_by_unit.size(); ++k) CHECK(a.rows_by_unit[k] == e.rows_by_unit[k]);
}

std::string text_label(const std::string& s) { return s; }
std::string number_label(const double& x) { return weft::format_number(x); }

weft::Column periods_column(std::vector<double> t) {
    weft::Column c;
    c.name = "t";
    c.values = std::move(t);
    return c;
}

}  // namespace

TEST_CASE("index: text ids in any row order match a plain sort of (id, period, row)", "[panel][order]") {
    // ids chosen to test byte order: shared prefixes, case, digits, a byte above 0x7f
    const std::vector<std::string> pool = {"Branch 07", "Branch 7", "branch 07", "B", "Ba", "a", "z9", "z10",
                                           "\xc3\xa9tude", "Branch 070", " lead", "~"};
    std::mt19937 rng(20261205);   // fixed seed
    for (int trial = 0; trial < 100; ++trial) {
        INFO("trial " << trial);
        std::vector<std::string> ids;
        std::vector<double> t;
        const std::size_t n_units = 1 + rng() % pool.size();
        const int n_periods = 1 + static_cast<int>(rng() % 8);
        for (std::size_t u = 0; u < n_units; ++u)
            for (int p = 0; p < n_periods; ++p)
                if (rng() % 4 != 0) {
                    ids.push_back(pool[u]);
                    t.push_back(2000.0 + 3.0 * p);
                }
        if (ids.empty()) continue;
        // period-major in one trial of two, else shuffled; a few blank ids (missing)
        std::vector<std::size_t> order(ids.size());
        std::iota(order.begin(), order.end(), std::size_t{0});
        if (trial % 2 == 0)
            std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return t[a] < t[b]; });
        else
            std::shuffle(order.begin(), order.end(), rng);
        weft::UnitColumn units;
        std::vector<double> t_moved;
        std::vector<bool> has_id;
        for (std::size_t r : order) {
            const bool blank = rng() % 10 == 0;
            units.text.push_back(blank ? std::string() : ids[r]);
            has_id.push_back(!blank);
            t_moved.push_back(t[r]);
        }
        if (std::none_of(has_id.begin(), has_id.end(), [](bool h) { return h; })) continue;
        const weft::PanelIndex index = weft::build_index(units, periods_column(t_moved), 2);
        check_same(index, expected_index(units.text, has_id, t_moved, text_label));
    }
}

TEST_CASE("index: number ids out of order match a plain sort of (id, period, row)", "[panel][order]") {
    std::mt19937 rng(20261206);   // fixed seed
    for (int trial = 0; trial < 100; ++trial) {
        INFO("trial " << trial);
        std::vector<double> ids, t;
        const int n_units = 1 + static_cast<int>(rng() % 15), n_periods = 1 + static_cast<int>(rng() % 8);
        for (int u = 0; u < n_units; ++u) {
            // negative, fractional and zero ids; -0 and 0 are one unit (labelled "0")
            const double id = u == 0 ? 0.0 : -7.3 + 1.25 * u;   // never 0 for u > 0
            for (int p = 0; p < n_periods; ++p)
                if (rng() % 4 != 0) {
                    ids.push_back(id == 0.0 && rng() % 2 == 0 ? -0.0 : id);
                    t.push_back(1.0 + p);
                }
        }
        if (ids.empty()) continue;
        std::vector<std::size_t> order(ids.size());
        std::iota(order.begin(), order.end(), std::size_t{0});
        std::shuffle(order.begin(), order.end(), rng);
        weft::UnitColumn units;
        std::vector<double> t_moved, ids_plain;
        for (std::size_t r : order) {
            units.numbers.push_back(ids[r]);
            ids_plain.push_back(ids[r] == 0.0 ? 0.0 : ids[r]);   // the test's sort sees one zero
            t_moved.push_back(t[r]);
        }
        const weft::PanelIndex index = weft::build_index(units, periods_column(t_moved), 2);
        check_same(index, expected_index(ids_plain, std::vector<bool>(ids.size(), true), t_moved, number_label));
    }
}

TEST_CASE("index: a repeated pair in a sheet sorted by period names the first pair in unit order", "[panel][order]") {
    // Rows (sheet rows from 2): period 1: "North", "East"; period 2: "North", "East",
    // "East". Unit order (byte order): "East" < "North"; East's rows for period 2 are
    // sheet rows 5 and 6 -- the first repeated pair in (unit, period) order.
    weft::UnitColumn units;
    units.text = {"North", "East", "North", "East", "East"};
    const std::string msg =
        core_test::message_of([&] { weft::build_index(units, periods_column({1, 1, 2, 2, 2}), 2); });
    CHECK(msg == "unit \"East\" has two rows for period 2 (rows 5 and 6); keep one row per unit and period");
}

TEST_CASE("lean fits: text ids sorted by period give the fit of number ids sorted by unit", "[lean][order]") {
    // Identity: the same rows, in another order with text ids, are the same equation.
    // Tolerance 1e-12 relative: only summation order differs (common practice, no
    // source).
    std::mt19937 rng(20261207);   // fixed seed
    std::normal_distribution<double> normal(0.0, 1.0);
    const std::size_t n_units = 300, n_periods = 6;
    weft::PanelData sorted;
    sorted.regressors.resize(2);
    sorted.regressors[0].name = "x1";
    sorted.regressors[1].name = "x2";
    for (std::size_t u = 0; u < n_units; ++u)
        for (std::size_t p = 0; p < n_periods; ++p) {
            if (rng() % 7 == 0) continue;   // gaps
            const double x1 = normal(rng), x2 = normal(rng) + 0.1 * static_cast<double>(p);
            sorted.units.numbers.push_back(static_cast<double>(u + 1));
            sorted.periods.values.push_back(2010.0 + static_cast<double>(p));
            sorted.regressors[0].values.push_back(x1);
            sorted.regressors[1].values.push_back(x2);
            sorted.outcome.values.push_back(1.0 + 0.5 * x1 - 0.25 * x2 + 0.1 * static_cast<double>(u % 5) + normal(rng));
        }
    const std::size_t n = sorted.outcome.values.size();
    std::vector<std::size_t> order(n);
    std::iota(order.begin(), order.end(), std::size_t{0});
    std::stable_sort(order.begin(), order.end(),
                     [&](std::size_t a, std::size_t b) { return sorted.periods.values[a] < sorted.periods.values[b]; });
    weft::PanelData moved = sorted;
    moved.units.numbers.clear();
    for (std::size_t k = 0; k < n; ++k) {
        const std::size_t r = order[k];
        moved.units.text.push_back("Branch " + weft::format_number(sorted.units.numbers[r] + 1000));
        moved.periods.values[k] = sorted.periods.values[r];
        moved.outcome.values[k] = sorted.outcome.values[r];
        for (std::size_t j = 0; j < 2; ++j) moved.regressors[j].values[k] = sorted.regressors[j].values[r];
    }
    for (const char* model : {"pooled cluster", "pooled dk", "fd cluster", "fd hc1", "fd cluster-period"}) {
        INFO(model);
        const weft::Fit a = weft::fit_model_lean(sorted, weft::parse_model_text(model));
        const weft::Fit b = weft::fit_model_lean(moved, weft::parse_model_text(model));
        CHECK_FALSE(a.equation.rows_held());   // both on the streaming route
        CHECK_FALSE(b.equation.rows_held());
        REQUIRE(a.coef.size() == b.coef.size());
        for (Eigen::Index k = 0; k < a.coef.size(); ++k) {
            CORE_CHECK_REL(b.coef[k], a.coef[k], 1e-12, "coefficient");
            CORE_CHECK_REL(b.se[k], a.se[k], 1e-12, "standard error");
        }
        CORE_CHECK_REL(b.ssr, a.ssr, 1e-12, "SSR");
        for (std::size_t k = 0; k < n; ++k) {
            REQUIRE(b.residuals.defined[k] == a.residuals.defined[order[k]]);
            if (b.residuals.defined[k]) CHECK(std::fabs(b.residuals.value[k] - a.residuals.value[order[k]]) <= 1e-12);
        }
    }
}
