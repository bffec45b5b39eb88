// Pass 2 of the fit over partitions (weft/merge.hpp): with the estimates recomputed from
// the merged pass 1, each partition sums the pieces of its residuals that the
// covariance, SSR, one refinement step and the fit statistics need; the finish turns the
// merged sums into a Fit through the same stages as fit_model (covariance_from_meat,
// term_inference, fit_statistics).
#include <cmath>
#include <string>

#include <Eigen/Dense>

#include "weft/error.hpp"
#include "merge_internal.hpp"

namespace weft {

using Eigen::Index;
using Eigen::MatrixXd;
using Eigen::VectorXd;

namespace {

// Refinement steps at the finish (each costs K^2 operations, no pass over the data).
// The full solver takes three with long-double residuals; four here reach the same
// NIST digits (tests/core/test_merge.cpp prints them).
constexpr int kRefinementSteps = 4;

bool needs_rows_meat(Covariance c) { return c == Covariance::hc0 || c == Covariance::hc1; }
bool needs_unit_meat(Covariance c) { return c == Covariance::cluster || c == Covariance::cluster0; }
bool needs_period_sums(Covariance c) { return c == Covariance::cluster_period || c == Covariance::dk; }

// within: x'b at levels (regressors and 0/1 period indicators; no intercept) against y
// over the used rows and over the unit means.
void level_moments(const PanelData& data, const detail::PartitionEquation& pe, const detail::MergedEstimates& est,
                   PartialScores& out) {
    const Index k_reg = static_cast<Index>(pe.regressor_names.size());
    for (std::size_t r = 0; r < pe.runs.begin.size(); ++r) {
        long double sy = 0, sx = 0;
        for (std::size_t k = pe.runs.begin[r]; k < pe.runs.end[r]; ++k) {
            const std::size_t row = pe.rows[k];
            long double xb = 0;
            for (std::size_t t = 0; t < est.kept.size(); ++t) {
                const Index col = est.kept[t];
                const long double b = est.equation.coef[static_cast<Index>(t)];
                if (col < k_reg)
                    xb += b * data.regressors[static_cast<std::size_t>(col)].value(row);
                else if (col - k_reg == pe.index.period_of_row[row])
                    xb += b;
            }
            const long double y = data.outcome.value(row);
            out.level_rows.add(y, xb);
            sy += y;
            sx += xb;
        }
        const long double cnt = static_cast<long double>(pe.runs.end[r] - pe.runs.begin[r]);
        out.level_means.add(sy / cnt, sx / cnt);
    }
}

// The partition's equation under the merged sums' model and grid, checked against them.
detail::PartitionEquation partition_under(const PanelData& data, const PartialSums& merged) {
    detail::PartitionEquation pe = detail::partition_equation(data, merged.spec, merged.grid);
    if (pe.candidates != merged.candidates)
        throw Error("the partition's regressors differ from those of the merged sums; give every partition the same "
                    "columns in the same order");
    if (pe.weight_label != merged.weight_label)
        throw Error("the partition's weights (" + (pe.weight_label.empty() ? std::string("none") : pe.weight_label) +
                    ") differ from those of the merged sums (" +
                    (merged.weight_label.empty() ? std::string("none") : merged.weight_label) +
                    "); give every partition the same weight column in both passes");
    return pe;
}

}  // namespace

PartialScores accumulate_scores(const PanelData& data, const PartialSums& merged) {
    const detail::MergedEstimates est = detail::merged_estimates(merged);
    detail::PartitionEquation pe = partition_under(data, merged);
    PartialScores out_levels;
    // within at levels (unweighted only: a weighted fit gives no squared correlations there)
    if (merged.spec.estimator == Estimator::within && pe.weight.size() == 0) level_moments(data, pe, est, out_levels);
    detail::weigh_partition(pe);
    const Covariance kind = merged.spec.covariance;
    const Index N = pe.X.rows(), K = static_cast<Index>(est.kept.size());
    PartialScores out = std::move(out_levels);
    out.n = static_cast<std::uint64_t>(N);
    out.gradient.assign(static_cast<std::size_t>(K), 0.0L);
    out.gram.assign(static_cast<std::size_t>(K * K), 0.0L);
    out.meat_rows = MatrixXd::Zero(K, K);
    out.meat_units = MatrixXd::Zero(K, K);
    out.period_sums = MatrixXd::Zero(needs_period_sums(kind) ? static_cast<Index>(merged.grid.size()) : 0, K);
    out.period_present.assign(merged.grid.size(), 0);
    Eigen::Matrix<long double, Eigen::Dynamic, 1> zl(K);
    VectorXd z(K), unit_sum = VectorXd::Zero(K);
    for (Index i = 0; i < N; ++i) {
        const long double r = detail::equation_residual(est, pe.X, pe.y, i, zl);
        out.ssr += r * r;
        for (Index k = 0; k < K; ++k) {
            out.gradient[static_cast<std::size_t>(k)] += r * zl[k];
            long double* column = &out.gram[static_cast<std::size_t>(k * K)];
            for (Index j = k; j < K; ++j) column[j] += zl[j] * zl[k];
        }
        z = zl.cast<double>();
        const double rd = static_cast<double>(r);
        const std::size_t t = static_cast<std::size_t>(pe.period[static_cast<std::size_t>(i)]);
        out.period_present[t] = 1;
        if (needs_rows_meat(kind)) out.meat_rows.selfadjointView<Eigen::Lower>().rankUpdate(z, rd * rd);
        if (needs_period_sums(kind)) out.period_sums.row(static_cast<Index>(t)) += rd * z.transpose();
        unit_sum += rd * z;
        const bool unit_ends = i + 1 == N || pe.unit[static_cast<std::size_t>(i + 1)] != pe.unit[static_cast<std::size_t>(i)];
        if (unit_ends) {
            if (needs_unit_meat(kind)) out.meat_units.selfadjointView<Eigen::Lower>().rankUpdate(unit_sum);
            unit_sum.setZero();
            ++out.units;
        }
    }
    return out;
}

void merge_scores(PartialScores& into, const PartialScores& o) {
    if (into.gradient.size() != o.gradient.size() || into.period_sums.rows() != o.period_sums.rows() ||
        into.period_present.size() != o.period_present.size())
        throw Error("the score partials were made from different merged sums; compute every partition's scores from "
                    "the same merged sums");
    into.n += o.n;
    into.ssr += o.ssr;
    for (std::size_t k = 0; k < into.gradient.size(); ++k) into.gradient[k] += o.gradient[k];
    for (std::size_t k = 0; k < into.gram.size(); ++k) into.gram[k] += o.gram[k];
    into.meat_rows += o.meat_rows;
    into.meat_units += o.meat_units;
    into.units += o.units;
    into.period_sums += o.period_sums;
    for (std::size_t g = 0; g < into.period_present.size(); ++g) into.period_present[g] |= o.period_present[g];
    into.level_rows.merge(o.level_rows);
    into.level_means.merge(o.level_means);
}

namespace {

// The meat of the model's covariance from the merged scores, with G (or T) and the lag.
MatrixXd merged_meat(const ModelSpec& spec, const PartialScores& sc, std::size_t& clusters, int& lag) {
    const Covariance kind = spec.covariance;
    const char* word = to_word(kind);
    std::size_t periods = 0;
    for (std::uint8_t v : sc.period_present) periods += v;
    auto require = [&](std::size_t G, const char* what) {
        if (G < 2)
            throw Error(std::string(word) + ": " + std::to_string(G) + " " + what +
                        " cluster found, at least 2 are needed; choose another standard-error word");
    };
    if (needs_rows_meat(kind)) return sc.meat_rows.selfadjointView<Eigen::Lower>();
    if (needs_unit_meat(kind)) {
        clusters = static_cast<std::size_t>(sc.units);
        require(clusters, "unit");
        return sc.meat_units.selfadjointView<Eigen::Lower>();
    }
    if (kind == Covariance::cluster_period) {
        clusters = periods;
        require(clusters, "period");
        return sc.period_sums.transpose() * sc.period_sums;
    }
    if (kind == Covariance::dk) {
        clusters = periods;
        require(clusters, "period");
        lag = spec.dk_lag < 0 ? detail::dk_default_lag(periods) : spec.dk_lag;
        return detail::dk_meat(sc.period_sums, lag);
    }
    return MatrixXd::Zero(sc.meat_rows.rows(), sc.meat_rows.cols());
}

using VectorL = Eigen::Matrix<long double, Eigen::Dynamic, 1>;
using MatrixL = Eigen::Matrix<long double, Eigen::Dynamic, Eigen::Dynamic>;

// Refinement (corrected semi-normal equations, Bjorck 1996 section 6.6.5) from the
// long-double sums: c += (R'R)^-1 Z'r with Z'r = Z'r0 - Z'Z (c - c0); the finish takes
// SSR exactly as ||r0 - Z d||^2 = ||r0||^2 - 2 d'Z'r0 + d'Z'Z d, d = c - c0.
struct Refinement {
    VectorL g0, d;
    MatrixL gram;
};

Refinement refine(const detail::MergedEstimates& est, const PartialSums& sums, const PartialScores& scores) {
    const Equation& eq = est.equation;
    const Index K = eq.n_terms();
    if (static_cast<Index>(scores.gradient.size()) != K || scores.n != sums.n)
        throw Error("the scores do not belong to these sums (" + std::to_string(scores.n) + " equation rows scored, " +
                    std::to_string(sums.n) + " accumulated); score every partition once with the merged sums");
    Refinement ref;
    ref.g0 = Eigen::Map<const VectorL>(scores.gradient.data(), K);
    ref.gram = Eigen::Map<const MatrixL>(scores.gram.data(), K, K);
    ref.gram.triangularView<Eigen::StrictlyUpper>() = ref.gram.transpose().triangularView<Eigen::StrictlyUpper>();
    ref.d = VectorL::Zero(K);
    for (int step = 0; step < kRefinementSteps; ++step) {
        const VectorXd g = (ref.g0 - ref.gram * ref.d).cast<double>();
        VectorXd delta = eq.r_factor.transpose().triangularView<Eigen::Lower>().solve(g);
        delta = eq.r_factor.triangularView<Eigen::Upper>().solve(delta);
        ref.d += delta.cast<long double>();
    }
    return ref;
}

std::optional<double> squared_correlation(const Comoments& m) {
    if (m.n < 2 || m.caa == 0 || m.cbb == 0) return std::nullopt;
    const double v = static_cast<double>(m.cab * m.cab / (m.caa * m.cbb));
    return std::isfinite(v) ? std::optional<double>(v) : std::nullopt;
}

}  // namespace

Fit finish_fit(const PartialSums& sums, const PartialScores& scores) {
    detail::MergedEstimates est = detail::merged_estimates(sums);
    Equation& eq = est.equation;
    const Refinement ref = refine(est, sums, scores);
    est.c_work += ref.d;
    eq.coef = detail::original_coefficients(eq, est.c_work, est.shift_y);
    const long double ssr = scores.ssr - 2.0L * ref.d.dot(ref.g0) + ref.d.dot(ref.gram * ref.d);
    eq.ssr = static_cast<double>(ssr > 0 ? ssr : scores.ssr);

    Fit fit;
    fit.spec = sums.spec;
    fit.dropped = eq.dropped;
    std::size_t clusters = 0;
    int lag = -1;
    const MatrixXd meat = merged_meat(sums.spec, scores, clusters, lag);
    fit.rows_input = static_cast<std::size_t>(sums.rows_input);
    fit.rows_used = static_cast<std::size_t>(sums.rows_used);
    fit.rows_zero_weight = static_cast<std::size_t>(sums.rows_zero_weight);
    fit.rows_dropped = fit.rows_input - fit.rows_used - fit.rows_zero_weight;
    fit.weighted = !sums.weight_label.empty();
    if (sums.rows_zero_weight > 0)  // choose_rows' words
        fit.warnings.push_back(sums.weight_label + ": " + std::to_string(sums.rows_zero_weight) +
                               (sums.rows_zero_weight == 1 ? " row has" : " rows have") + " weight 0 and " +
                               (sums.rows_zero_weight == 1 ? "is" : "are") + " left out of the estimated equation");
    fit.n_units = static_cast<std::size_t>(sums.units_used);
    for (std::uint8_t v : sums.period_used) fit.n_periods += v;
    fit.equation = std::move(eq);
    const Equation& e = fit.equation;
    fit.covariance = detail::covariance_from_meat(e, sums.spec.covariance, meat, clusters, lag);
    fit.nobs = e.nobs();
    fit.n_terms = e.n_terms();
    fit.df_residual = e.df_residual();
    fit.ssr = e.ssr;
    fit.sigma = std::sqrt(e.ssr / fit.df_residual);
    if (sums.spec.estimator == Estimator::fd && sums.pairs_lost > 0)
        fit.warnings.push_back("fd: " + std::to_string(sums.pairs_lost) +
                               (sums.pairs_lost == 1 ? " difference was" : " differences were") +
                               " not formed because a unit skips a period of the grid");
    detail::OutcomeSums ysums;
    ysums.sum = sums.y_sum;
    ysums.raw = sums.y_raw;
    ysums.centred = sums.y_moments.caa;
    // the index holds the global grid only (the rows stay in the partitions): the joint
    // test of all regressors reads it to leave out the period terms
    fit.index.grid = sums.grid;
    detail::term_inference(fit, ysums);
    detail::fit_statistics(fit, ysums);
    detail::joint_statistics(fit);
    if (sums.spec.estimator == Estimator::within && !fit.weighted) {
        fit.corr2_rows = squared_correlation(scores.level_rows);
        fit.corr2_means = squared_correlation(scores.level_means);
    }
    return fit;
}

PartitionSeries partition_series(const PanelData& data, const PartialSums& sums, const PartialScores& scores) {
    detail::MergedEstimates est = detail::merged_estimates(sums);
    est.c_work += refine(est, sums, scores).d;  // the finished fit's estimates
    detail::PartitionEquation pe = partition_under(data, sums);
    detail::weigh_partition(pe);
    const std::size_t n_rows = data.outcome.size();
    PartitionSeries out;
    out.residuals.value.assign(n_rows, 0.0);
    out.residuals.defined.assign(n_rows, 0);
    out.fitted = out.residuals;
    Eigen::Matrix<long double, Eigen::Dynamic, 1> zl(static_cast<Index>(est.kept.size()));
    for (Index i = 0; i < pe.X.rows(); ++i) {
        // working units are sqrt(w) times the outcome's (Fit::residuals: y - x'b, x'b)
        const long double r = detail::equation_residual(est, pe.X, pe.y, i, zl);
        const long double root = pe.weight.size() != 0 ? std::sqrt(static_cast<long double>(pe.weight[i])) : 1.0L;
        const std::size_t row = pe.input_row[static_cast<std::size_t>(i)];
        out.residuals.value[row] = static_cast<double>(r / root);
        out.fitted.value[row] = static_cast<double>((pe.y[i] - r) / root);
        out.residuals.defined[row] = out.fitted.defined[row] = 1;
    }
    return out;
}

}  // namespace weft
