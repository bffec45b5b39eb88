// Shared helpers of the event-study tests: a seeded panel generator with staggered
// adoption and effects that grow with time since adoption, conversion to weft's input,
// and the R oracle run.
#pragma once

#if __has_include(<catch2/catch_test_macros.hpp>)
#include <catch2/catch_test_macros.hpp>
#include <catch2/matchers/catch_matchers_floating_point.hpp>
#else
#include <catch2/catch.hpp>
#endif

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "weft/error.hpp"
#include "weft/event.hpp"

namespace event_test {

struct SimSpec {
    std::size_t units = 60;
    int periods = 8;
    double first_period = 2011;
    std::vector<int> cohorts = {3, 5};   // 0-based grid positions of adoption
    bool never_treated = true;
    bool controls = false;
    double missing_share = 0;            // rows dropped at random (unbalanced panel)
    bool heterogeneous = true;           // effects differ by cohort
    double noise = 1.0;
    bool random_groups = false;          // group of a unit drawn at random (equal chances), else round robin
    unsigned seed = 1;
};

// True effect of cohort number k at event time e: grows with time since adoption,
// larger for earlier cohorts when heterogeneous.
inline double true_effect(const SimSpec& s, std::size_t k, int e) {
    if (e < 0) return 0;
    const double slope = s.heterogeneous ? 1.0 + 0.75 * static_cast<double>(s.cohorts.size() - 1 - k) : 1.0;
    return slope * (1.0 + e);
}

struct SimPanel {
    std::vector<double> unit, period, y, d, x;
    std::vector<double> tau;  // true effect of each row
    std::vector<int> group;  // per unit: -1 never, else cohort number
};

inline SimPanel simulate(const SimSpec& s) {
    std::mt19937_64 rng(s.seed);
    std::normal_distribution<double> normal(0.0, 1.0);
    std::uniform_real_distribution<double> uniform(0.0, 1.0);
    SimPanel p;
    const std::size_t groups = s.cohorts.size() + (s.never_treated ? 1 : 0);
    std::vector<double> lambda;
    for (int t = 0; t < s.periods; ++t) lambda.push_back(0.3 * t + 0.5 * normal(rng));
    for (std::size_t i = 0; i < s.units; ++i) {
        const std::size_t g = s.random_groups ? std::uniform_int_distribution<std::size_t>(0, groups - 1)(rng) : i % groups;
        const int group = s.never_treated ? static_cast<int>(g) - 1 : static_cast<int>(g);
        p.group.push_back(group);
        const double a = normal(rng) + (group >= 0 ? 0.5 * group : -0.5);  // selection on levels
        for (int t = 0; t < s.periods; ++t) {
            const double xv = 0.3 * a + normal(rng) + 0.1 * t;
            const double ev = group >= 0 ? t - s.cohorts[static_cast<std::size_t>(group)] : -1;
            const double effect = group >= 0 ? true_effect(s, static_cast<std::size_t>(group), static_cast<int>(ev)) : 0;
            const double yv = a + lambda[static_cast<std::size_t>(t)] + (s.controls ? 0.5 * xv : 0.0) + effect +
                              s.noise * normal(rng);
            if (uniform(rng) < s.missing_share) continue;
            p.unit.push_back(static_cast<double>(i + 1));
            p.period.push_back(s.first_period + t);
            p.y.push_back(yv);
            p.d.push_back(group >= 0 && ev >= 0 ? 1.0 : 0.0);
            p.x.push_back(xv);
            p.tau.push_back(effect);
        }
    }
    return p;
}

// Truth of the event-time average at e: cohort-size weighted over the cohorts whose
// event time e lies inside the panel (units are spread evenly over the groups).
inline double true_event_effect(const SimSpec& s, int e) {
    double sum = 0, count = 0;
    for (std::size_t k = 0; k < s.cohorts.size(); ++k) {
        const int t = s.cohorts[k] + e;
        if (t < 0 || t >= s.periods) continue;
        sum += true_effect(s, k, e);
        count += 1;
    }
    return count > 0 ? sum / count : NAN;
}

inline weft::Column column(const std::string& name, const std::vector<double>& v) {
    weft::Column c;
    c.name = name;
    c.values = v;
    return c;
}

inline weft::EventData to_data(const SimPanel& p, bool controls) {
    weft::EventData data;
    data.outcome = column("y", p.y);
    data.treatment = column("d", p.d);
    data.units.name = "unit";
    data.units.numbers = p.unit;
    data.periods = column("period", p.period);
    if (controls) data.controls.push_back(column("x1", p.x));
    data.first_row_number = 2;
    return data;
}

// Runs event_reference.R on the panel; returns its JSON. Throws (failing the test) when
// R or a package is missing: an absent oracle is a failure, never a skip.
inline nlohmann::json run_reference(const SimPanel& p, bool controls, const std::string& comparison, int anticipation,
                                    int before, int after, const std::string& tag) {
    const std::string dir = WEFT_EVENT_WORKDIR;
    const std::string csv = dir + "/event_" + tag + ".csv", out = dir + "/event_" + tag + ".json";
    {
        std::ofstream f(csv);
        f << "unit,period,y,d" << (controls ? ",x1" : "") << "\n";
        f.precision(17);
        for (std::size_t r = 0; r < p.y.size(); ++r) {
            f << p.unit[r] << "," << p.period[r] << "," << p.y[r] << "," << p.d[r];
            if (controls) f << "," << p.x[r];
            f << "\n";
        }
    }
    std::remove(out.c_str());
    const std::string command = std::string(WEFT_EVENT_RSCRIPT) + " " + WEFT_EVENT_R_SCRIPT + " " + csv + " " + out +
                                " " + comparison + " " + std::to_string(anticipation) + " " + std::to_string(before) +
                                " " + std::to_string(after) + " 2>&1";
    const int status = std::system(command.c_str());
    std::ifstream in(out);
    if (status != 0 || !in) throw std::runtime_error("R reference failed (is R with sandwich and jsonlite installed?): " + command);
    return nlohmann::json::parse(in);
}

inline bool close(double a, double b, double rel) {
    return std::fabs(a - b) <= rel * std::max(1.0, std::max(std::fabs(a), std::fabs(b)));
}

}  // namespace event_test
