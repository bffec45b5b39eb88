// Shared helpers of the specification tests: the Grunfeld panel, the reference JSONs,
// relative comparisons.
#pragma once

#include <cmath>
#include <iomanip>
#include <fstream>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "catch_compat.hpp"
#include "weft/core.hpp"
#include "weft/spec.hpp"

#include "../common/error_message.hpp"

namespace spec_test {

inline std::string data_path(const std::string& file) {
    return std::string(WEFT_PANEL_DATA_DIR) + "/" + file;
}

// tests/data/panel/grunfeld.csv (copied from the reference set, see SOURCES.md):
// firm, year, inv, value, capital.
inline weft::PanelData load_grunfeld() {
    std::ifstream in(data_path("grunfeld.csv"));
    if (!in) throw std::runtime_error("cannot open " + data_path("grunfeld.csv"));
    std::string line;
    std::getline(in, line);
    weft::PanelData d;
    d.units.name = "firm";
    d.periods.name = "year";
    d.outcome.name = "inv";
    d.regressors.resize(2);
    d.regressors[0].name = "value";
    d.regressors[1].name = "capital";
    while (std::getline(in, line)) {
        if (line.empty()) continue;
        std::stringstream ss(line);
        std::string cell;
        std::vector<double> v;
        while (std::getline(ss, cell, ',')) v.push_back(std::stod(cell));
        d.units.numbers.push_back(v.at(0));
        d.periods.values.push_back(v.at(1));
        d.outcome.values.push_back(v.at(2));
        d.regressors[0].values.push_back(v.at(3));
        d.regressors[1].values.push_back(v.at(4));
    }
    d.first_row_number = 2;
    return d;
}

inline nlohmann::json load_reference(const std::string& name) {
    std::ifstream in(data_path(name + ".json"));
    if (!in) throw std::runtime_error("cannot open " + data_path(name + ".json"));
    return nlohmann::json::parse(in);
}

inline bool near_rel(double actual, double expected, double tol) {
    if (actual == expected) return true;
    return std::abs(actual - expected) <= tol * std::abs(expected);
}

// CHECK with the label and both numbers printed on failure.
#define SPEC_CHECK_REL(actual, expected, tol, label)                                   \
    do {                                                                               \
        const double spec_a_ = (actual);                                               \
        const double spec_e_ = (expected);                                             \
        INFO(label << ": weft " << std::setprecision(17) << spec_a_ << ", reference " \
                   << spec_e_ << ", rel diff "                                         \
                   << std::abs(spec_a_ - spec_e_) / std::abs(spec_e_));                \
        CHECK(spec_test::near_rel(spec_a_, spec_e_, tol));                             \
    } while (false)

using weft_test::message_of;

inline bool contains(const std::string& text, const std::string& part) {
    return text.find(part) != std::string::npos;
}

}  // namespace spec_test
