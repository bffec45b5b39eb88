// Units of measure change no decision (CONVENTIONS.md "Decisions that must not depend on
// units of measure"; issue 15). Expected values are identities of least squares, not
// numbers: multiplying regressor j by c_j and the outcome by c_y multiplies the estimate
// of j (and its standard error) by c_y / c_j, the intercept's and the period indicators'
// by c_y, covariance (a, b) by s_a s_b, and leaves every t, F, chi-square, p-value, df,
// rank, dropped term and clipping decision as it was (the estimated equation is the same
// one written in other units; e.g. Greene, Econometric Analysis, 7th ed., section 3.5 --
// from memory). Every estimator and covariance family, k in {-9, -3, 3, 9}; relative 1e-9.
//
// The panel is generated here from a fixed seed (its own LCG): 9 units, 7 periods, one
// row missing, x1 and x2 varying, x3 constant within units (dropped by within and fd),
// x4 = x1 + 2 x2 (collinear, dropped everywhere).
#include "core_support.hpp"

#include <cstdint>
#include <functional>

#include "weft/spec.hpp"

namespace {

using core_test::rel_diff;

constexpr double kTol = 1e-9;

struct Lcg {
    std::uint64_t s = 20261205;
    double uniform() {  // in (0, 1)
        s = s * 6364136223846793005ULL + 1442695040888963407ULL;
        return (static_cast<double>(s >> 11) + 0.5) / 9007199254740992.0;
    }
};

weft::PanelData base_panel() {
    Lcg rng;
    weft::PanelData d;
    d.outcome.name = "y";
    const char* names[] = {"x1", "x2", "x3", "x4"};
    for (const char* n : names) {
        weft::Column c;
        c.name = n;
        d.regressors.push_back(c);
    }
    d.units.name = "unit";
    d.periods.name = "period";
    for (int u = 0; u < 9; ++u) {
        const double level = rng.uniform() * 4.0 - 2.0, x3 = 1.0 + rng.uniform();
        for (int t = 0; t < 7; ++t) {
            if (u == 4 && t == 3) continue;  // unbalanced, with a gap inside unit 4
            const double x1 = rng.uniform() + 0.3 * t + 0.2 * level;
            const double x2 = rng.uniform() * 2.0 - 1.0 + 0.1 * u;
            const double noise = (rng.uniform() - 0.5) * (1.0 + x1);  // heteroskedastic
            d.outcome.values.push_back(1.0 + 0.5 * x1 - 0.3 * x2 + 0.2 * x3 + level + noise);
            d.regressors[0].values.push_back(x1);
            d.regressors[1].values.push_back(x2);
            d.regressors[2].values.push_back(x3);
            d.regressors[3].values.push_back(x1 + 2.0 * x2);
            d.units.numbers.push_back(u + 1);
            d.periods.values.push_back(2000 + t);
        }
    }
    d.first_row_number = 2;
    return d;
}

// Regressor j times factor[j], the outcome times cy.
weft::PanelData scaled(const weft::PanelData& base, const std::vector<double>& factor, double cy) {
    weft::PanelData d = base;
    for (double& v : d.outcome.values) v *= cy;
    for (std::size_t j = 0; j < d.regressors.size(); ++j)
        for (double& v : d.regressors[j].values) v *= factor[j];
    return d;
}

// The factor by which a term's estimate changes.
double term_scale(const std::string& term, const std::vector<double>& factor, double cy) {
    const char* names[] = {"x1", "x2", "x3", "x4"};
    for (std::size_t j = 0; j < 4; ++j)
        if (term == names[j]) return cy / factor[j];
    return cy;  // intercept, period indicators
}

#define CHECK_REL(a, b, what)                                                                  \
    do {                                                                                       \
        const double a_ = (a), b_ = (b);                                                       \
        INFO(what << ": scaled " << std::setprecision(17) << a_ << ", expected " << b_);       \
        CHECK(rel_diff(a_, b_) <= kTol);                                                       \
    } while (false)

// Runs f on both panels: either both throw or neither; returns whether they computed.
template <class F>
bool both(const F& f) {
    bool base_ok = true, scaled_ok = true;
    try {
        f(false);
    } catch (const weft::Error&) {
        base_ok = false;
    }
    try {
        f(true);
    } catch (const weft::Error&) {
        scaled_ok = false;
    }
    CHECK(base_ok == scaled_ok);
    return base_ok && scaled_ok;
}

void compare_fits(const weft::Fit& a, const weft::Fit& b, const std::vector<double>& factor, double cy) {
    REQUIRE(a.equation.terms == b.equation.terms);
    REQUIRE(a.dropped.size() == b.dropped.size());
    for (std::size_t j = 0; j < a.dropped.size(); ++j) CHECK(a.dropped[j].name == b.dropped[j].name);
    CHECK_REL(b.covariance.df, a.covariance.df, "df");  // cr2: Satterthwaite, a real number
    CHECK(a.covariance.clipped == b.covariance.clipped);
    CHECK(a.exact_fit == b.exact_fit);
    const auto K = static_cast<Eigen::Index>(a.equation.terms.size());
    std::vector<double> s(static_cast<std::size_t>(K));
    for (Eigen::Index j = 0; j < K; ++j) s[static_cast<std::size_t>(j)] = term_scale(a.equation.terms[static_cast<std::size_t>(j)], factor, cy);
    for (Eigen::Index j = 0; j < K; ++j) {
        const double sj = s[static_cast<std::size_t>(j)];
        INFO("term " << a.equation.terms[static_cast<std::size_t>(j)]);
        CHECK_REL(b.coef[j], a.coef[j] * sj, "estimate");
        CHECK_REL(b.se[j], a.se[j] * sj, "se");
        CHECK_REL(b.t[j], a.t[j], "t");
        for (Eigen::Index i = 0; i < K; ++i)
            if (std::abs(a.covariance.matrix(i, j)) > 1e-6 * a.se[i] * a.se[j])
                CHECK_REL(b.covariance.matrix(i, j), a.covariance.matrix(i, j) * s[static_cast<std::size_t>(i)] * sj,
                          "covariance " << i << "," << j);
    }
    REQUIRE(a.joint.has_value() == b.joint.has_value());
    if (a.joint) {
        CHECK(a.joint->available == b.joint->available);
        CHECK(a.joint->df1 == b.joint->df1);
        if (a.joint->available) {
            CHECK_REL(b.joint->df2, a.joint->df2, "joint df2");
            // A statistic above 1e6 (e.g. after a clip left a tested direction almost
            // without variance) divides by a nearly null eigenvalue and loses digits in
            // proportion: held to 1e-6 there (own tolerance, no source).
            const double tol = a.joint->chi2 > 1e6 ? 1e-6 : kTol;
            INFO("joint F: scaled " << b.joint->f << ", expected " << a.joint->f);
            CHECK(rel_diff(b.joint->f, a.joint->f) <= tol);
            CHECK(rel_diff(b.joint->chi2, a.joint->chi2) <= tol);
        }
    }
    if (a.f) CHECK_REL(*b.f, *a.f, "classical F");
}

const std::vector<weft::Covariance> kFamilies = {
    weft::Covariance::classical, weft::Covariance::hc0,     weft::Covariance::hc1,
    weft::Covariance::hc2,       weft::Covariance::hc3,     weft::Covariance::cluster,
    weft::Covariance::cluster0,  weft::Covariance::cluster_period, weft::Covariance::cluster_both,
    weft::Covariance::dk,        weft::Covariance::cr2};

void check_scale(int k) {
    const double c = std::pow(10.0, k);
    // regressors in opposite directions, the outcome with the first
    const std::vector<double> factor = {c, 1.0 / c, c, 1.0 / c};
    const weft::PanelData base = base_panel();
    const weft::PanelData other = scaled(base, factor, c);
    const weft::Estimator estimators[] = {weft::Estimator::pooled, weft::Estimator::fd, weft::Estimator::within,
                                          weft::Estimator::random, weft::Estimator::between};
    for (weft::Estimator e : estimators)
        for (bool periods : {false, true})
            for (weft::Covariance cov : kFamilies) {
                weft::ModelSpec spec;
                spec.estimator = e;
                spec.period_effects = periods;
                spec.covariance = cov;
                INFO("k = " << k << ", model \"" << weft::describe(spec) << "\"");
                weft::Fit a, b;
                if (!both([&](bool s) { (s ? b : a) = weft::fit_model(s ? other : base, spec); })) continue;
                compare_fits(a, b, factor, c);
                // a joint Wald test of each pair of estimated regressors
                for (const auto& pair : std::vector<std::vector<std::string>>{{"x1", "x2"}, {"x1", "x3"}}) {
                    weft::WaldResult wa, wb;
                    if (!both([&](bool s) { (s ? wb : wa) = weft::wald_test_terms(s ? b : a, pair); })) continue;
                    CHECK_REL(wb.f, wa.f, "Wald F " << pair[0] << ", " << pair[1]);
                    CHECK_REL(wb.f_df2, wa.f_df2, "Wald df2");
                }
                // the auxiliary regressions of the heteroskedasticity tests
                if (cov == weft::Covariance::classical)
                    for (weft::HeteroForm form : {weft::HeteroForm::koenker, weft::HeteroForm::white_full}) {
                        weft::HeteroResult ha, hb;
                        if (!both([&](bool s) { (s ? hb : ha) = weft::hetero_test(s ? b : a, form); })) continue;
                        CHECK(ha.aux_dropped == hb.aux_dropped);
                        CHECK(ha.lm_df == hb.lm_df);
                        CHECK_REL(hb.lm, ha.lm, "hetero LM " << weft::to_word(form));
                    }
            }
    // the Hausman comparison and its robust form
    for (bool periods : {false, true}) {
        weft::ModelSpec spec;
        spec.period_effects = periods;
        INFO("k = " << k << ", Hausman" << (periods ? " with periods" : ""));
        weft::HausmanResult ha, hb;
        if (!both([&](bool s) { (s ? hb : ha) = weft::hausman_test(s ? other : base, spec); })) continue;
        CHECK(ha.rank == hb.rank);
        CHECK(ha.df == hb.df);
        CHECK(ha.positive_definite == hb.positive_definite);
        CHECK_REL(hb.statistic, ha.statistic, "Hausman statistic");
        CHECK_REL(hb.robust.f, ha.robust.f, "Hausman robust F");
        CHECK(hb.robust.f_df1 == ha.robust.f_df1);
    }
}

}  // namespace

TEST_CASE("units of measure: regressors and outcome times 10^k change no decision", "[scale]") {
    for (int k : {-9, -3, 3, 9}) check_scale(k);
}

TEST_CASE("units of measure: the property test's panel exercises the decisions", "[scale]") {
    // So that the test above cannot pass vacuously: on this panel terms are dropped,
    // fits compute under every family, and the joint test is available.
    const weft::PanelData base = base_panel();
    weft::ModelSpec spec;
    spec.estimator = weft::Estimator::within;
    spec.covariance = weft::Covariance::cluster;
    const weft::Fit fit = weft::fit_model(base, spec);
    CHECK(fit.dropped.size() == 2);  // x3 (no variation within units) and x4 (collinear)
    REQUIRE(fit.joint);
    CHECK(fit.joint->available);
    CHECK(fit.joint->df2 == 8);       // G - 1 = 9 - 1
    // some two-way covariance is clipped, so the clipping decision is exercised
    bool any_clipped = false;
    for (const char* text : {"pooled cluster-both", "pooled periods cluster-both", "within cluster-both",
                             "within periods cluster-both", "fd cluster-both", "random periods cluster-both"})
        any_clipped = any_clipped || weft::fit_model(base, weft::parse_model_text(text)).covariance.clipped;
    CHECK(any_clipped);
    const weft::HausmanResult h = weft::hausman_test(base, weft::ModelSpec{});
    CHECK(h.rank >= 1);
}
