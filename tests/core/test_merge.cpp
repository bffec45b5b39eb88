// The fit over partitions (weft/merge.hpp): accumulate per partition, bytes, merge,
// finish.
// Expected values:
//  - NIST StRD certified values (tests/data/nist, key "certified"): every dataset split
//    into partitions keeps LRE >= 9 for every coefficient, SE and the residual SD
//    (Filip >= 7), the requirement test_nist.cpp holds the one-machine fit to.
//  - the Grunfeld reference cases (tests/data/panel/<case>.json: R 4.2.2 plm 2.6.2,
//    sandwich 3.0.2, lmtest 0.9.40, recomputed in mpmath; README there): coefficients,
//    SEs, df, SSR, R-squared variants and F to relative 1e-9 for pooled, fd and within
//    (with and without period indicators) under every covariance the route supports.
#include <algorithm>
#include <iostream>
#include <map>
#include <numeric>

#include "core_support.hpp"
#include "weft/merge.hpp"

namespace {

using nlohmann::json;

// Rows [begin, end) of a panel.
weft::PanelData slice(const weft::PanelData& d, std::size_t begin, std::size_t end) {
    weft::PanelData s;
    auto cut = [&](const weft::Column& c) {
        weft::Column out;
        out.name = c.name;
        out.values.assign(c.values.begin() + static_cast<long>(begin), c.values.begin() + static_cast<long>(end));
        if (!c.missing.empty())
            out.missing.assign(c.missing.begin() + static_cast<long>(begin), c.missing.begin() + static_cast<long>(end));
        return out;
    };
    s.outcome = cut(d.outcome);
    for (const weft::Column& x : d.regressors) s.regressors.push_back(cut(x));
    s.units.name = d.units.name;
    s.units.numbers.assign(d.units.numbers.begin() + static_cast<long>(begin),
                           d.units.numbers.begin() + static_cast<long>(end));
    s.periods = cut(d.periods);
    s.first_row_number = d.first_row_number + begin;
    return s;
}

std::vector<double> grid_of(const weft::PanelData& d) {
    std::vector<double> g = d.periods.values;
    std::sort(g.begin(), g.end());
    g.erase(std::unique(g.begin(), g.end()), g.end());
    return g;
}

// The fit over the partitions cut at `cuts` (row positions, whole units each), every
// partial sent through its bytes; sums merged left to right, scores in a balanced tree.
weft::Fit fit_partitions(const weft::PanelData& d, const weft::ModelSpec& spec, std::vector<std::size_t> cuts) {
    const std::size_t n = d.outcome.values.size();
    cuts.erase(std::remove_if(cuts.begin(), cuts.end(), [&](std::size_t c) { return c == 0 || c >= n; }), cuts.end());
    std::sort(cuts.begin(), cuts.end());
    cuts.erase(std::unique(cuts.begin(), cuts.end()), cuts.end());
    cuts.insert(cuts.begin(), 0);
    cuts.push_back(n);
    const std::vector<double> grid = grid_of(d);
    std::vector<weft::PanelData> parts;
    for (std::size_t p = 0; p + 1 < cuts.size(); ++p) parts.push_back(slice(d, cuts[p], cuts[p + 1]));
    weft::PartialSums sums;
    for (std::size_t p = 0; p < parts.size(); ++p) {
        const std::vector<std::uint8_t> b = weft::to_bytes(weft::accumulate_sums(parts[p], spec, grid));
        const weft::PartialSums one = weft::sums_from_bytes(b.data(), b.size());
        if (p == 0) sums = one;
        else weft::merge_sums(sums, one);
    }
    std::vector<weft::PartialScores> level;
    for (const weft::PanelData& part : parts) {
        const std::vector<std::uint8_t> b = weft::to_bytes(weft::accumulate_scores(part, sums));
        level.push_back(weft::scores_from_bytes(b.data(), b.size()));
    }
    while (level.size() > 1) {
        std::vector<weft::PartialScores> next;
        for (std::size_t i = 0; i < level.size(); i += 2) {
            next.push_back(level[i]);
            if (i + 1 < level.size()) weft::merge_scores(next.back(), level[i + 1]);
        }
        level = std::move(next);
    }
    return weft::finish_fit(sums, level.front());
}

// ---- NIST StRD, split into partitions

double lre(double value, double certified) {
    const double e = certified == 0 ? std::abs(value) : std::abs(value - certified) / std::abs(certified);
    return e == 0 ? 15.0 : std::min(15.0, -std::log10(e));
}

weft::PanelData nist_data(const json& meta, const core_test::Table& t) {
    weft::PanelData d;
    d.outcome.name = "y";
    d.outcome.values = t.column("y");
    for (const std::string& c : meta["model"]["design_columns"].get<std::vector<std::string>>()) {
        if (c == "1") continue;
        weft::Column col;
        col.name = c;
        if (c.rfind("x^", 0) == 0) {
            const int k = std::stoi(c.substr(2));   // x^k in long double, rounded once
            for (double x : t.column("x")) {
                long double v = 1;
                for (int m = 0; m < k; ++m) v *= x;
                col.values.push_back(static_cast<double>(v));
            }
        } else {
            col.values = t.column(c);
        }
        d.regressors.push_back(col);
    }
    for (std::size_t i = 0; i < d.outcome.values.size(); ++i) {   // a cross-section: one unit per row
        d.units.numbers.push_back(static_cast<double>(i + 1));
        d.periods.values.push_back(1.0);
    }
    return d;
}

void check_nist(const std::string& name, double required) {
    const json meta = core_test::read_json("nist/" + name + ".json");
    const weft::PanelData d = nist_data(meta, core_test::read_csv("nist/" + name + ".csv"));
    weft::ModelSpec spec;
    spec.intercept = meta["model"]["intercept"].get<bool>();
    const std::size_t n = d.outcome.values.size();
    const std::vector<std::string> params = meta["model"]["parameters"].get<std::vector<std::string>>();
    // 2 and 7 partitions of unequal sizes, and one partition per row
    std::vector<std::size_t> one_per_row(n - 1);
    std::iota(one_per_row.begin(), one_per_row.end(), std::size_t{1});
    for (const std::vector<std::size_t>& cuts :
         {std::vector<std::size_t>{n / 3}, std::vector<std::size_t>{1, 2, n / 5, n / 2, n / 2 + 1, n - 2}, one_per_row}) {
        const weft::Fit fit = fit_partitions(d, spec, cuts);
        INFO("NIST " << name << " cut at " << cuts.size() << " places");
        REQUIRE(fit.dropped.empty());
        REQUIRE(fit.equation.terms.size() == params.size());
        double coef = 15, se = 15;
        for (std::size_t k = 0; k < params.size(); ++k) {
            coef = std::min(coef, lre(fit.coef[static_cast<Eigen::Index>(k)], meta["certified"]["coef"][params[k]].get<double>()));
            se = std::min(se, lre(fit.se[static_cast<Eigen::Index>(k)], meta["certified"]["coef_sd"][params[k]].get<double>()));
        }
        const double rsd = lre(fit.sigma, meta["certified"]["residual_sd"].get<double>());
        std::cout << std::fixed << std::setprecision(1) << "NIST " << name << " cut at " << cuts.size()
                  << " places: min LRE coef " << coef << " se " << se << " residual sd " << rsd << "\n";
        CHECK(coef >= required);
        CHECK(se >= required);
        CHECK(rsd >= required);
    }
}

}  // namespace

TEST_CASE("partitions: NIST StRD keeps its certified digits", "[merge][nist]") {
    for (const char* name : {"Norris", "Pontius", "NoInt1", "NoInt2", "Longley", "Wampler1", "Wampler2", "Wampler3",
                             "Wampler4", "Wampler5"})
        check_nist(name, 9.0);
    check_nist("Filip", 7.0);   // test_nist.cpp: Filip's powers rounded to double hold it near 7
}

namespace {

// ---- Grunfeld reference cases over partitions

struct GrunfeldCase {
    const char* file;
    const char* model;
};

std::string weft_term(const std::string& key) { return key.rfind("period_", 0) == 0 ? "period " + key.substr(7) : key; }

void check_grunfeld(const GrunfeldCase& c) {
    const json ref = core_test::read_json(std::string("panel/") + c.file + ".json");
    const json& res = ref["results"];
    const weft::PanelData data = core_test::grunfeld();   // 10 firms x 20 years, sorted by firm
    const bool within = ref["method"] == "within";
    const std::vector<std::pair<weft::Covariance, std::string>> keys = {
        {weft::Covariance::classical, "classical"}, {weft::Covariance::hc0, "HC0"},
        {weft::Covariance::hc1, within ? "HC1_lsdv" : "HC1"}, {weft::Covariance::cluster, "CR1"},
        {weft::Covariance::cluster0, "CR0"}, {weft::Covariance::cluster_period, "CR1_period"},
        {weft::Covariance::dk, "DK"}};
    const std::vector<std::string> names = ref["regressors_estimated"].get<std::vector<std::string>>();
    for (const auto& [word, key] : keys) {
        if (!res["se"].contains(key)) continue;
        weft::ModelSpec spec = weft::parse_model_text(c.model);
        spec.covariance = word;
        INFO(c.file << " over partitions with " << weft::describe(spec) << " (JSON key " << key << ")");
        // partitions of 1, 3, 2 and 4 firms (20 rows a firm)
        const weft::Fit fit = fit_partitions(data, spec, {20, 80, 120});
        REQUIRE(fit.equation.terms.size() == names.size());
        for (std::size_t j = 0; j < names.size(); ++j) CHECK(fit.equation.terms[j] == weft_term(names[j]));
        CHECK(fit.nobs == ref["sample"]["nobs"].get<std::size_t>());
        CHECK(fit.n_units == ref["sample"]["n_units"].get<std::size_t>());
        CHECK(fit.df_residual == res["df_residual"].get<double>());
        CORE_CHECK_REL(fit.ssr, res["rss"].get<double>(), 1e-9, "rss");
        CHECK(fit.covariance.df == res["inference"][key]["df"].get<double>());
        for (std::size_t j = 0; j < names.size(); ++j) {
            const Eigen::Index e = static_cast<Eigen::Index>(j);
            CORE_CHECK_REL(fit.coef[e], res["coef"][names[j]].get<double>(), 1e-9, "coef " << names[j]);
            CORE_CHECK_REL(fit.se[e], res["se"][key][names[j]].get<double>(), 1e-9, "se " << names[j]);
        }
        if (within) {
            CORE_CHECK_REL(*fit.r2, res["r_squared_within"].get<double>(), 1e-9, "r2 within");
            CORE_CHECK_REL(*fit.corr2_means, res["r_squared_between_corr2"].get<double>(), 1e-9, "corr2 means");
            CORE_CHECK_REL(*fit.corr2_rows, res["r_squared_overall_corr2"].get<double>(), 1e-9, "corr2 rows");
        } else {
            CORE_CHECK_REL(*fit.r2, res["r_squared"].get<double>(), 1e-9, "r2");
        }
        if (res.contains("f_all_terms") && res["f_all_terms"].is_object() && fit.f)
            CORE_CHECK_REL(*fit.f, res["f_all_terms"]["F"].get<double>(), 1e-9, "F on all slopes");
    }
}

}  // namespace

TEST_CASE("partitions: Grunfeld reference cases", "[merge][grunfeld]") {
    for (const GrunfeldCase& c : {GrunfeldCase{"grunfeld_pooled", "pooled"},
                                  GrunfeldCase{"grunfeld_pooled_period_dummies", "pooled periods"},
                                  GrunfeldCase{"grunfeld_pooled_no_intercept", "pooled no-intercept"},
                                  GrunfeldCase{"grunfeld_fd", "fd"},
                                  GrunfeldCase{"grunfeld_fd_period_dummies", "fd periods"},
                                  GrunfeldCase{"grunfeld_fd_no_intercept", "fd no-intercept"},
                                  GrunfeldCase{"grunfeld_within", "within"},
                                  GrunfeldCase{"grunfeld_within_period_dummies", "within periods"}})
        check_grunfeld(c);
}

TEST_CASE("partitions: damaged, truncated and foreign bytes are refused", "[merge][bytes]") {
    const weft::PanelData data = core_test::grunfeld();
    const weft::ModelSpec spec = weft::parse_model_text("within cluster");
    std::vector<std::uint8_t> b = weft::to_bytes(weft::accumulate_sums(data, spec, grid_of(data)));
    CHECK(weft::partial_kind(b.data(), b.size()) == 1);
    std::vector<std::uint8_t> flipped = b;
    flipped[b.size() / 2] ^= 0x10;
    CHECK(core_test::message_of([&] { weft::sums_from_bytes(flipped.data(), flipped.size()); }).find("check sum does not match") != std::string::npos);
    CHECK(core_test::message_of([&] { weft::sums_from_bytes(b.data(), b.size() - 9); }).find("truncated") != std::string::npos);
    std::vector<std::uint8_t> other_version = b;
    other_version[8] = 7;
    CHECK(core_test::message_of([&] { weft::sums_from_bytes(other_version.data(), other_version.size()); }).find("format version 7") != std::string::npos);
    const std::string text = "not a partial at all, just some text of length";
    CHECK(core_test::message_of([&] { weft::sums_from_bytes(reinterpret_cast<const std::uint8_t*>(text.data()), text.size()); }).find("not a weft partial") != std::string::npos);
    CHECK(core_test::message_of([&] { weft::scores_from_bytes(b.data(), b.size()); }).find("pass 1 (sums)") != std::string::npos);
}

TEST_CASE("partitions: what the route cannot compute is refused by name", "[merge][refuse]") {
    const weft::PanelData data = core_test::grunfeld();
    const std::vector<double> grid = grid_of(data);
    const std::map<std::string, std::string> refused = {
        {"between", "use pooled, fd or within"}, {"random", "use pooled, fd or within"},
        {"pooled hc2", "use hc1"}, {"within hc3", "use hc1"}, {"pooled cr2", "use cluster"},
        {"pooled cluster-both", "use cluster, cluster-period or dk"}};
    for (const auto& [model, hint] : refused) {
        INFO(model);
        CHECK(core_test::message_of([&] { weft::accumulate_sums(data, weft::parse_model_text(model), grid); }).find(hint) != std::string::npos);
    CHECK(core_test::message_of([&] { weft::accumulate_sums(data, weft::parse_model_text(model), grid); }).find("one machine") != std::string::npos);
    }
    // a period that is not on the grid given
    CHECK(core_test::message_of([&] { weft::accumulate_sums(data, weft::ModelSpec{}, {1935, 1936}); }).find("period 1937 is not on the period grid") != std::string::npos);
    // partials of different models do not merge
    weft::PartialSums a = weft::accumulate_sums(slice(data, 0, 20), weft::parse_model_text("fd"), grid);
    const weft::PartialSums b = weft::accumulate_sums(slice(data, 20, 40), weft::parse_model_text("within"), grid);
    CHECK(core_test::message_of([&] { weft::merge_sums(a, b); }).find("different models") != std::string::npos);
}
