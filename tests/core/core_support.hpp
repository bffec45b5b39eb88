// Shared helpers of the core tests: Catch2 v2/v3, data files, reference JSON.
#pragma once

#if __has_include(<catch2/catch_test_macros.hpp>)
#include <catch2/catch_test_macros.hpp>
#else
#include <catch2/catch.hpp>
#endif

#include <cmath>
#include <fstream>
#include <iomanip>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "weft/core.hpp"

#include "../common/error_message.hpp"

namespace core_test {

inline std::string data_path(const std::string& relative) {
    return std::string(WEFT_TEST_DATA_DIR) + "/" + relative;
}

// A CSV with a header row of names and numeric cells; returns columns by header order.
struct Table {
    std::vector<std::string> names;
    std::vector<std::vector<double>> columns;
    const std::vector<double>& column(const std::string& name) const {
        for (std::size_t j = 0; j < names.size(); ++j)
            if (names[j] == name) return columns[j];
        throw std::runtime_error("no column " + name);
    }
};

inline Table read_csv(const std::string& relative) {
    std::ifstream in(data_path(relative));
    if (!in) throw std::runtime_error("cannot open " + data_path(relative));
    Table t;
    std::string line, cell;
    std::getline(in, line);
    if (!line.empty() && line.back() == '\r') line.pop_back();
    std::stringstream header(line);
    while (std::getline(header, cell, ',')) t.names.push_back(cell);
    t.columns.resize(t.names.size());
    while (std::getline(in, line)) {
        if (!line.empty() && line.back() == '\r') line.pop_back();
        if (line.empty()) continue;
        std::stringstream ss(line);
        std::size_t j = 0;
        // strtod is correctly rounded in glibc, as the NIST README asks
        while (std::getline(ss, cell, ',')) t.columns.at(j++).push_back(std::strtod(cell.c_str(), nullptr));
    }
    return t;
}

inline nlohmann::json read_json(const std::string& relative) {
    std::ifstream in(data_path(relative));
    if (!in) throw std::runtime_error("cannot open " + data_path(relative));
    return nlohmann::json::parse(in);
}

// A panel from a CSV of tests/data with numeric unit ids: the named outcome,
// regressors, units and periods columns (header in row 1, data from row 2).
inline weft::PanelData read_panel(const std::string& relative, const std::string& outcome,
                                  const std::vector<std::string>& regressors, const std::string& units,
                                  const std::string& periods) {
    const Table t = read_csv(relative);
    weft::PanelData d;
    d.outcome.name = outcome;
    d.outcome.values = t.column(outcome);
    for (const std::string& name : regressors) {
        weft::Column c;
        c.name = name;
        c.values = t.column(name);
        d.regressors.push_back(c);
    }
    d.units.name = units;
    d.units.numbers = t.column(units);
    d.periods.name = periods;
    d.periods.values = t.column(periods);
    d.first_row_number = 2;
    return d;
}

// tests/data/panel/grunfeld.csv (R plm's Grunfeld, see tests/data/panel/SOURCES.md):
// firm, year, inv, value, capital.
inline weft::PanelData grunfeld() {
    return read_panel("panel/grunfeld.csv", "inv", {"value", "capital"}, "firm", "year");
}

inline double rel_diff(double actual, double expected) {
    if (actual == expected) return 0.0;
    return std::abs(actual - expected) / std::abs(expected);
}

using weft_test::message_of;

}  // namespace core_test

// CHECK that actual is within relative tol of expected, printing both on failure.
#define CORE_CHECK_REL(actual, expected, tol, label)                                    \
    do {                                                                                \
        const double core_a_ = (actual);                                                \
        const double core_e_ = (expected);                                              \
        INFO(label << ": weft " << std::setprecision(17) << core_a_ << ", reference "  \
                   << core_e_ << ", rel diff " << core_test::rel_diff(core_a_, core_e_)); \
        CHECK(core_test::rel_diff(core_a_, core_e_) <= (tol));                          \
    } while (false)
