// Fixed versus random effects (Hausman 1978; Mundlak 1978 auxiliary regression,
// Wooldridge 2010 section 10.7.3) and the F test of within against pooled OLS.
#include <algorithm>
#include <cmath>
#include <string>
#include <unordered_set>
#include <vector>

#include <Eigen/Dense>

#include "weft/distributions.hpp"
#include "weft/error.hpp"
#include "internal.hpp"
#include "scaled.hpp"
#include "weft/tolerances.hpp"
#include "weft/panel.hpp"
#include "weft/spec.hpp"

namespace weft {

namespace {

bool same_rows(const Equation& a, const Equation& b) {
    detail::require_rows(a, "comparing two fits");
    detail::require_rows(b, "comparing two fits");
    if (a.nobs() != b.nobs()) return false;
    std::vector<std::size_t> ra = a.input_row, rb = b.input_row;
    std::sort(ra.begin(), ra.end());
    std::sort(rb.begin(), rb.end());
    return ra == rb;
}

// Labels of the period indicators a fit can carry: "period <value>" for grid values.
std::unordered_set<std::string> period_labels(const Fit& fit) {
    std::unordered_set<std::string> out;
    if (!fit.spec.period_effects) return out;
    for (double g : fit.index.grid) out.insert("period " + format_number(g));
    return out;
}

CovarianceResult classical_of(const Fit& fit) {
    if (fit.covariance.kind == Covariance::classical) return fit.covariance;
    return compute_covariance(fit.equation, Covariance::classical);
}

}  // namespace

namespace {

void check_pair(const Fit& within, const Fit& random) {
    detail::refuse_weighted(within.equation, "Hausman test",
                            "random effects take no weights; use within with weights and cluster standard errors");
    if (within.spec.estimator != Estimator::within || random.spec.estimator != Estimator::random)
        throw Error(std::string("Hausman test: needs a within fit and a random fit of the same "
                                "rows, got ") + to_word(within.spec.estimator) + " and " +
                    to_word(random.spec.estimator) + "; fit the model with within and with random");
    if (within.spec.period_effects != random.spec.period_effects)
        throw Error("Hausman test: one fit has period indicators and the other not; fit both "
                    "with the same period effects");
    const Equation& ew = within.equation;
    const Equation& er = random.equation;
    if (!same_rows(ew, er))
        throw Error("Hausman test: the within fit uses " + std::to_string(ew.nobs()) +
                    " rows and the random fit " + std::to_string(er.nobs()) +
                    " (or other rows); fit both to the same panel");
}

// Slopes common to both fits: regressors, not the intercept nor period indicators.
struct ComparedSlopes {
    std::vector<std::string> terms;
    std::vector<Eigen::Index> pos_w, pos_r;   // their columns in the within and random fits
};

ComparedSlopes compared_slopes(const Fit& within, const Fit& random) {
    const Equation& er = random.equation;
    const auto periods = period_labels(random);
    ComparedSlopes s;
    for (std::size_t j = 0; j < er.terms.size(); ++j) {
        if (static_cast<int>(j) == er.intercept_column) continue;
        if (periods.count(er.terms[j])) continue;
        const auto pw = within.term_position(er.terms[j]);
        if (!pw) continue;
        s.terms.push_back(er.terms[j]);
        s.pos_w.push_back(static_cast<Eigen::Index>(*pw));
        s.pos_r.push_back(static_cast<Eigen::Index>(j));
    }
    if (s.terms.empty())
        throw Error("Hausman test: no regressor is estimated by both within and random (a "
                    "regressor that does not vary within units is dropped by within); add a "
                    "regressor that varies over time");
    return s;
}

// The classical contrast (Hausman 1978): statistic, df, rank, eigenvalues and warnings.
void classical_contrast(const Fit& within, const Fit& random, const ComparedSlopes& s,
                        HausmanResult& r) {
    const CovarianceResult vw = classical_of(within);
    const CovarianceResult vr = classical_of(random);
    const auto q = static_cast<Eigen::Index>(s.terms.size());
    const auto at = [](Eigen::Index a) { return static_cast<std::size_t>(a); };
    Eigen::VectorXd d(q);
    Eigen::MatrixXd vd(q, q);
    for (Eigen::Index a = 0; a < q; ++a) {
        d(a) = within.equation.coef(s.pos_w[at(a)]) - random.equation.coef(s.pos_r[at(a)]);
        for (Eigen::Index b = 0; b < q; ++b)
            vd(a, b) = vw.matrix(s.pos_w[at(a)], s.pos_w[at(b)]) - vr.matrix(s.pos_r[at(a)], s.pos_r[at(b)]);
    }
    vd = 0.5 * (vd + vd.transpose());
    Eigen::VectorXd within_variance(q);  // the scale of the comparison (positive)
    for (Eigen::Index a = 0; a < q; ++a) within_variance(a) = vw.matrix(s.pos_w[at(a)], s.pos_w[at(a)]);

    r.terms = s.terms;
    r.difference = d;
    // Rank and sign decisions in the scaled basis of V_W - V_R (tolerances.hpp), so the
    // df does not depend on units; D from the within variances, as V_W - V_R's own
    // diagonal can cancel to rounding in a direction where the two fits agree. The
    // statistic: over the non-null eigenvalues, the inverse when V_W - V_R has full rank,
    // a generalised inverse otherwise; a negative eigenvalue is kept with its sign (the
    // raw quadratic form).
    const detail::ScaledEigen eig = detail::scaled_eigen(vd, within_variance);
    const double tiny = kHausmanRankTolerance * eig.largest;
    const auto rank = static_cast<std::size_t>(eig.rank(kHausmanRankTolerance));
    std::size_t positive = 0;
    for (Eigen::Index j = 0; j < q; ++j)
        if (eig.lambda(j) > tiny) ++positive;
    const double h = eig.quadratic_form(d, kHausmanRankTolerance);
    // reported: the eigenvalues of V_W - V_R itself (its units), descending
    const Eigen::VectorXd raw = Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd>(vd, Eigen::EigenvaluesOnly).eigenvalues();
    for (Eigen::Index j = q - 1; j >= 0; --j) r.eigenvalues.push_back(raw(j));
    r.rank = rank;
    r.positive_definite = eig.largest > 0 && positive == static_cast<std::size_t>(q);
    if (rank == 0)
        throw Error("Hausman test: the within and random fits give the compared slopes the "
                    "same covariance, so their difference has no variance to test against");
    r.statistic = h;
    r.df = static_cast<double>(rank);
    r.p = h > 0 ? chi2_upper(h, r.df) : 1.0;
    if (rank < static_cast<std::size_t>(q))
        r.warnings.push_back("the classical comparison can test only " + std::to_string(rank) +
                             " independent combinations of the " + std::to_string(q) +
                             " slope differences (the others have no variance), so its df is " +
                             std::to_string(rank) + "; the robust rows do not depend on this: read "
                             "them as well");
    if (!r.positive_definite)
        r.warnings.push_back("do not read the classical statistic here: in " +
                             std::to_string(q - positive) + " of " + std::to_string(q) +
                             " directions the within estimates are not less precise than the random "
                             "ones, so the statistic can be too small or negative; read the robust "
                             "rows instead");
}

// The auxiliary regression (Mundlak 1978; Wooldridge 2010 section 10.7.3): Wald tests,
// cluster-robust and classical, that the added unit means have zero coefficients.
void auxiliary_regression(const Fit& random, const ComparedSlopes& s, HausmanResult& r) {
    const Equation& er = random.equation;
    const auto q = static_cast<Eigen::Index>(s.terms.size());
    // Mundlak: the unit mean of a quasi-demeaned column x - theta_i xbar_i over the unit's
    // rows is (1 - theta_i) xbar_i, so the added columns come from the random equation
    // itself.
    const auto n = static_cast<Eigen::Index>(er.nobs());
    const auto kr = static_cast<Eigen::Index>(er.n_terms());
    std::int32_t max_unit = 0;
    for (auto u : er.unit) max_unit = std::max(max_unit, u);
    std::vector<double> count(static_cast<std::size_t>(max_unit) + 1, 0.0);
    for (auto u : er.unit) count[static_cast<std::size_t>(u)] += 1.0;
    EquationInput aux;
    aux.estimator = Estimator::random;
    aux.X.resize(n, kr + q);
    aux.X.leftCols(kr) = er.X;
    aux.terms = er.terms;
    for (Eigen::Index a = 0; a < q; ++a) {
        std::vector<long double> sum(count.size(), 0.0L);
        const Eigen::Index col = s.pos_r[static_cast<std::size_t>(a)];
        for (Eigen::Index i = 0; i < n; ++i) sum[static_cast<std::size_t>(er.unit[static_cast<std::size_t>(i)])] += er.X(i, col);
        for (Eigen::Index i = 0; i < n; ++i) {
            const auto u = static_cast<std::size_t>(er.unit[static_cast<std::size_t>(i)]);
            aux.X(i, kr + a) = static_cast<double>(sum[u] / static_cast<long double>(count[u]));
        }
        aux.terms.push_back("mean " + s.terms[static_cast<std::size_t>(a)]);
    }
    aux.y = er.y;
    aux.intercept_column = er.intercept_column;
    aux.input_row = er.input_row;
    aux.unit = er.unit;
    aux.period = er.period;
    const Equation mundlak = solve_equation(std::move(aux));

    std::vector<std::string> mean_terms;
    Eigen::MatrixXd restriction = Eigen::MatrixXd::Zero(q, static_cast<Eigen::Index>(mundlak.n_terms()));
    Eigen::Index row = 0;
    for (Eigen::Index a = 0; a < q; ++a) {
        const std::string name = "mean " + s.terms[static_cast<std::size_t>(a)];
        const auto it = std::find(mundlak.terms.begin(), mundlak.terms.end(), name);
        if (it == mundlak.terms.end()) continue;
        restriction(row++, static_cast<Eigen::Index>(it - mundlak.terms.begin())) = 1.0;
        mean_terms.push_back(name);
    }
    if (row == 0)
        throw Error("Hausman test: the unit means of the regressors are collinear with the "
                    "random-effects design, so the auxiliary regression cannot separate them");
    if (row < q)
        r.warnings.push_back("auxiliary regression: " + std::to_string(q - row) +
                             " unit-mean column(s) dropped as collinear");
    restriction.conservativeResize(row, Eigen::NoChange);
    const Eigen::VectorXd zero = Eigen::VectorXd::Zero(row);
    const CovarianceResult vc = compute_covariance(mundlak, Covariance::cluster);
    r.robust = wald_test(mundlak.coef, vc.matrix, vc.df, restriction, zero);
    r.robust.terms = mean_terms;
    r.robust.covariance_label = vc.label;
    r.robust.df_rule = vc.df_rule;
    const CovarianceResult vcl = compute_covariance(mundlak, Covariance::classical);
    r.auxiliary_classical = wald_test(mundlak.coef, vcl.matrix, vcl.df, restriction, zero);
    r.auxiliary_classical.terms = mean_terms;
    r.auxiliary_classical.covariance_label = vcl.label;
    r.auxiliary_classical.df_rule = vcl.df_rule;
}

}  // namespace

HausmanResult hausman_test(const Fit& within, const Fit& random) {
    check_pair(within, random);
    const ComparedSlopes slopes = compared_slopes(within, random);
    HausmanResult r;
    classical_contrast(within, random, slopes, r);
    auxiliary_regression(random, slopes, r);
    return r;
}

namespace {

// Fit one side of a two-fit test, saying which side failed and why.
Fit fit_side(const PanelData& data, ModelSpec spec, Estimator estimator, const char* test) {
    spec.covariance = Covariance::classical;
    spec.estimator = estimator;
    try {
        return fit_model(data, spec);
    } catch (const Error& e) {
        throw Error(std::string(test) + ": the " + to_word(estimator) +
                    " fit it needs is not possible: " + e.what());
    }
}

}  // namespace

HausmanResult hausman_test(const PanelData& data, const ModelSpec& spec) {
    if (!spec.weights.empty() || data.weights.size() != 0)
        throw Error("Hausman test: it compares within with random effects, and random effects take no "
                    "weights in weft; remove weights= from the model, or use within with weights and "
                    "cluster standard errors");
    const Fit within = fit_side(data, spec, Estimator::within, "Hausman test");
    const Fit random = fit_side(data, spec, Estimator::random, "Hausman test");
    return hausman_test(within, random);
}

EffectsResult effects_test(const Fit& within, const Fit& pooled) {
    detail::refuse_weighted(within.equation, "unit-effects test",
                            "remove weights= from the model for this test, or judge the unit effects from the "
                            "weighted within fit's cluster standard errors");
    if (within.spec.estimator != Estimator::within || pooled.spec.estimator != Estimator::pooled ||
        pooled.equation.intercept_column < 0)
        throw Error(std::string("unit-effects test: needs a within fit and a pooled fit with "
                                "intercept of the same rows, got ") +
                    to_word(within.spec.estimator) + " and " + to_word(pooled.spec.estimator) +
                    "; fit the model with within");
    if (within.spec.period_effects != pooled.spec.period_effects)
        throw Error("unit-effects test: one fit has period indicators and the other not; fit "
                    "both with the same period effects");
    if (!same_rows(within.equation, pooled.equation))
        throw Error("unit-effects test: the within and pooled fits use different rows; fit "
                    "both to the same panel");
    EffectsResult r;
    r.ssr_within = within.equation.ssr;
    r.ssr_pooled = pooled.equation.ssr;
    const double df_w = within.equation.df_residual();
    const double df_p = pooled.equation.df_residual();
    r.df1 = df_p - df_w;
    r.df2 = df_w;
    if (!(r.df1 >= 1) || !(r.df2 >= 1))
        throw Error("unit-effects test: no degrees of freedom left (within df " +
                    std::to_string(static_cast<long>(df_w)) + ", pooled df " +
                    std::to_string(static_cast<long>(df_p)) + "); the test needs at least two "
                    "units and more rows than units plus terms");
    r.f = ((r.ssr_pooled - r.ssr_within) / r.df1) / (r.ssr_within / r.df2);
    r.p = f_upper(r.f, r.df1, r.df2);
    if (r.f < 0)
        r.warnings.push_back("SSR of the pooled fit is below that of the within fit "
                             "(rounding); F is reported as computed");
    return r;
}

EffectsResult effects_test(const PanelData& data, const ModelSpec& spec) {
    ModelSpec s = spec;
    s.intercept = true;
    const Fit within = fit_side(data, s, Estimator::within, "unit-effects test");
    const Fit pooled = fit_side(data, s, Estimator::pooled, "unit-effects test");
    return effects_test(within, pooled);
}

}  // namespace weft
