// A wildly scaled panel (regressors near 2e9 and 1e-6, coefficients 1e-7 and 3e8): every
// covariance family's standard errors, the joint Wald test of all regressors, the
// two-way covariance with and without clipping, and the Hausman statistic with its df.
// Expected values: tests/data/panel/wild_scale_reference.json, computed from the papers'
// formulas in 50-digit arithmetic by tests/oracle/highprec.py (Python mpmath, Debian
// python3-mpmath; the data wild_scale.csv are written by the same script). Relative 1e-9.
#include "core_support.hpp"

#include "weft/spec.hpp"

namespace {

using nlohmann::json;

constexpr double kTol = 1e-9;

weft::PanelData wild() {
    return core_test::read_panel("panel/wild_scale.csv", "y", {"big", "tiny", "mid"}, "unit", "period");
}

struct Family {
    const char* word;
    const char* key;
};

const Family kFamilies[] = {{"classical", "classical"}, {"hc0", "hc0"}, {"hc1", "hc1"}, {"hc2", "hc2"},
                            {"hc3", "hc3"}, {"cluster", "cluster"}, {"cluster0", "cluster0"},
                            {"cluster-period", "cluster-period"}, {"cluster-both", "cluster-both"},
                            {"dk", "dk"}};

void check_case(const char* model, const json& ref) {
    const weft::PanelData data = wild();
    for (const Family& fam : kFamilies) {
        const std::string text = std::string(model) + " " + fam.word;
        INFO("model \"" << text << "\"");
        const weft::Fit fit = weft::fit_model(data, weft::parse_model_text(text));
        CHECK(fit.dropped.empty());
        const json& r = ref["families"][fam.key];
        for (std::size_t j = 0; j < fit.equation.terms.size(); ++j) {
            const std::string& term = fit.equation.terms[j];
            const auto e = static_cast<Eigen::Index>(j);
            CORE_CHECK_REL(fit.coef[e], ref["coef"][term].get<double>(), kTol, "estimate " << term);
            CORE_CHECK_REL(fit.se[e], r["se"][term].get<double>(), kTol, "se " << term);
        }
        CHECK(fit.covariance.df == r["df"].get<double>());
        REQUIRE(fit.joint);
        INFO(fit.joint->reason);
        REQUIRE(fit.joint->available);
        CORE_CHECK_REL(fit.joint->chi2, r["joint"]["chi2"].get<double>(), kTol, "joint chi-square");
        CORE_CHECK_REL(fit.joint->f, r["joint"]["F"].get<double>(), kTol, "joint F");
        CHECK(fit.joint->df2 == r["joint"]["df2"].get<double>());
        CORE_CHECK_REL(fit.joint->p, r["joint"]["p"].get<double>(), 1e-8, "joint p");
        // the same test through WEFT.JOINT's route, on the regressors named
        const weft::WaldResult w = weft::wald_test_terms(fit, {"big", "tiny", "mid"});
        CORE_CHECK_REL(w.chi2, r["joint"]["chi2"].get<double>(), kTol, "Wald chi-square");
        if (std::string(fam.word) == "cluster-both")
            CHECK(fit.covariance.clipped == ref["cluster_both_decision"]["clipped"].get<bool>());
    }
}

}  // namespace

TEST_CASE("wild scale: pooled, every covariance family, against 50-digit values", "[scale][wild]") {
    const json ref = core_test::read_json("panel/wild_scale_reference.json");
    check_case("pooled", ref["pooled"]);
}

TEST_CASE("wild scale: pooled with period indicators (two-way clipped), against 50-digit values",
          "[scale][wild]") {
    const json ref = core_test::read_json("panel/wild_scale_reference.json");
    REQUIRE(ref["pooled_periods"]["cluster_both_decision"]["clipped"].get<bool>());
    check_case("pooled periods", ref["pooled_periods"]);
}

TEST_CASE("wild scale: Hausman statistic and df against 50-digit values", "[scale][wild]") {
    const json ref = core_test::read_json("panel/wild_scale_reference.json");
    const json& h = ref["hausman"];
    const weft::HausmanResult r = weft::hausman_test(wild(), weft::ModelSpec{});
    CHECK(r.rank == h["rank"].get<std::size_t>());
    CHECK(r.df == h["df"].get<double>());
    // own tolerance 1e-7 (no source): the compared estimates agree to about 3 digits, so
    // their difference, and the statistic, carry about 3 digits fewer than each estimate
    CORE_CHECK_REL(r.statistic, h["statistic"].get<double>(), 1e-7, "Hausman statistic");
    CORE_CHECK_REL(r.p, h["p"].get<double>(), 1e-7, "Hausman p");
    // the robust (auxiliary regression) form computes as well
    CHECK(r.robust.f > 0);
}
