// The model's joint test of all regressors (CONVENTIONS.md "The model's joint test of
// all regressors"; issue 15) under hc1, cluster and dk on the Grunfeld reference cases.
// Expected values: tests/data/panel/<case>.json, results.wald_subset.<key> (the Wald test
// that the coefficients of value and capital -- every regressor, no intercept, no period
// indicator -- are 0, computed by R 4.2.2 with sandwich 3.0.2 and lmtest 0.9.40, and
// recomputed in mpmath at 40 digits; README there), F with df2 F_df_resid (hc1),
// F_df_G_minus_1 (cluster), F_df_T_minus_1 (dk); relative 1e-9 as the README allows.
#include "core_support.hpp"

#include "weft/spec.hpp"

namespace {

using nlohmann::json;

constexpr double kTol = 1e-9;

struct JointCase {
    const char* file;
    const char* model;
};

void check_joint(const JointCase& c, weft::Covariance cov, const std::string& key, const std::string& df_key) {
    const json ref = core_test::read_json(std::string("panel/") + c.file + ".json");
    const json& ws = ref["results"]["wald_subset"];
    REQUIRE(ref["wald_subset_coefs"] == json::array({"value", "capital"}));
    if (!ws.contains(key) || ws[key].is_null()) return;
    const json& w = ws[key];
    REQUIRE(w.contains(df_key));
    weft::ModelSpec spec = weft::parse_model_text(c.model);
    spec.covariance = cov;
    INFO(c.file << " with " << weft::describe(spec) << " (wald_subset." << key << "." << df_key << ")");
    for (const bool lean : {false, true}) {
        const weft::Fit fit = lean ? weft::fit_model_lean(core_test::grunfeld(), spec)
                                   : weft::fit_model(core_test::grunfeld(), spec);
        REQUIRE(fit.joint);
        CHECK(fit.joint->available);
        CHECK(fit.joint->terms == std::vector<std::string>{"value", "capital"});
        CORE_CHECK_REL(fit.joint->f, w["F"].get<double>(), kTol, "F");
        CORE_CHECK_REL(fit.joint->chi2, w["wald_chi2"].get<double>(), kTol, "chi-square");
        CHECK(fit.joint->df1 == w[df_key]["df1"].get<double>());
        CHECK(fit.joint->df2 == w[df_key]["df2"].get<double>());
        CORE_CHECK_REL(fit.joint->p, w[df_key]["p"].get<double>(), kTol, "p");
    }
}

}  // namespace

TEST_CASE("joint test of all regressors under the model's covariance: Grunfeld against R", "[joint]") {
    const JointCase cases[] = {{"grunfeld_pooled", "pooled"},
                               {"grunfeld_pooled_period_dummies", "pooled periods"},
                               {"grunfeld_fd", "fd"},
                               {"grunfeld_within", "within"},
                               {"grunfeld_within_period_dummies", "within periods"},
                               {"grunfeld_random", "random"},
                               {"grunfeld_between", "between"}};
    for (const JointCase& c : cases) {
        // within: weft's hc1 counts the absorbed unit effects (HC1_lsdv), see test_grunfeld
        const bool within = std::string(c.model).rfind("within", 0) == 0;
        check_joint(c, weft::Covariance::hc1, within ? "HC1_lsdv" : "HC1", "F_df_resid");
        check_joint(c, weft::Covariance::cluster, "CR1", "F_df_G_minus_1");
        check_joint(c, weft::Covariance::dk, "DK", "F_df_T_minus_1");
    }
}

TEST_CASE("joint test: the classical F of all terms stays beside it", "[joint]") {
    // pooled with period indicators: the classical F counts the 19 indicators too
    // (results.f_all_terms of the reference), the joint test only value and capital
    // (results.f_regressors_only: classical Wald F of the regressors, R lmtest).
    const json ref = core_test::read_json("panel/grunfeld_pooled_period_dummies.json");
    const weft::Fit fit = weft::fit_model(core_test::grunfeld(), weft::parse_model_text("pooled periods"));
    REQUIRE(fit.f);
    CORE_CHECK_REL(*fit.f, ref["results"]["f_all_terms"]["F"].get<double>(), kTol, "classical F of all terms");
    CHECK(*fit.f_df1 == 21);
    REQUIRE(fit.joint);
    CORE_CHECK_REL(fit.joint->f, ref["results"]["f_regressors_only"]["F"].get<double>(), kTol, "joint F, classical");
    CHECK(fit.joint->df1 == 2);
    CHECK(fit.joint->df2 == ref["results"]["f_regressors_only"]["df2"].get<double>());
}

TEST_CASE("joint test: not available, with the reason, when the clusters are too few", "[joint]") {
    // Three firms of Grunfeld and three regressors: a cluster covariance from 3 clusters
    // has rank at most 2 in the slopes (the scores of each firm sum to one vector, and
    // the three sum to 0 with an intercept), so no joint test of 3 regressors exists.
    weft::PanelData d = core_test::grunfeld();
    weft::PanelData small;
    small.outcome.name = "inv";
    small.units.name = "firm";
    small.periods.name = "year";
    small.regressors.resize(3);
    small.regressors[0].name = "value";
    small.regressors[1].name = "capital";
    small.regressors[2].name = "value2";
    for (std::size_t i = 0; i < d.outcome.values.size(); ++i) {
        if (d.units.numbers[i] > 3) continue;
        small.outcome.values.push_back(d.outcome.values[i]);
        small.units.numbers.push_back(d.units.numbers[i]);
        small.periods.values.push_back(d.periods.values[i]);
        small.regressors[0].values.push_back(d.regressors[0].values[i]);
        small.regressors[1].values.push_back(d.regressors[1].values[i]);
        small.regressors[2].values.push_back(d.regressors[0].values[i] * d.regressors[0].values[i]);
    }
    small.first_row_number = 2;
    const weft::Fit fit = weft::fit_model(small, weft::parse_model_text("pooled cluster"));
    REQUIRE(fit.joint);
    CHECK_FALSE(fit.joint->available);
    INFO(fit.joint->reason);
    CHECK(fit.joint->reason.find("3 clusters") != std::string::npos);
    // the classical F is computed and kept under its own label
    CHECK(fit.f);
}
