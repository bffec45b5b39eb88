// The estimates of the fit over partitions from the merged pass-1 factor (weft/merge.hpp):
// the decisions of the builders and of the solver (solver.cpp), taken on the small
// factor in the same order, then the solution of the triangular system.
#include <cmath>
#include <string>

#include <Eigen/Dense>

#include "weft/error.hpp"
#include "merge_internal.hpp"

namespace weft::detail {

using Eigen::Index;
using Eigen::MatrixXd;
using Eigen::VectorXd;
using VectorL = Eigen::Matrix<long double, Eigen::Dynamic, 1>;

namespace {

// Up-front refusals with the words fit_model uses.
void check_sums(const PartialSums& s) {
    if (s.rows_used == 0 && s.rows_zero_weight > 0)
        throw Error("no usable rows: every row with its values present has weight 0 (" + s.weight_label +
                    "); give at least some rows a positive weight");
    if (s.rows_used == 0)
        throw Error("no usable rows: every row misses the outcome, a regressor, the unit or the period");
    if (s.spec.estimator == Estimator::fd && s.n == 0)
        throw Error("fd: no unit has two usable rows in adjacent periods, so there is nothing to difference");
    if (s.spec.estimator == Estimator::within && s.units_used < 2)
        throw Error("within: all usable rows belong to one unit; within needs at least 2 units");
}

// Builder decisions: regressors without variation within units (fd, within), period
// columns of periods present, less the reference (the first present) when there is an
// intercept or under within.
std::vector<Index> builder_columns(const PartialSums& s, std::vector<DroppedTerm>& dropped) {
    const ModelSpec& spec = s.spec;
    std::vector<Index> cols;
    const Index c0 = s.intercept_column >= 0 ? 1 : 0;
    if (c0) cols.push_back(0);
    const bool transforms = spec.estimator == Estimator::fd || spec.estimator == Estimator::within;
    for (std::size_t j = 0; j < s.regressor_names.size(); ++j) {
        const Index col = c0 + static_cast<Index>(j);
        const long double diffs = s.change_squares[j], levels = s.level_squares[j];
        if (transforms && s.n > 0 && (diffs == 0 || std::sqrt(diffs) <= 1e-13L * std::sqrt(levels))) {
            const std::string& name = s.regressor_names[j];
            dropped.push_back({name, DropReason::no_within_variation,
                               name + (spec.estimator == Estimator::fd
                                           ? " has no variation within units (all its differences are 0); dropped by fd"
                                           : " has no variation within units; dropped by within (the unit effects "
                                             "absorb it)")});
            continue;
        }
        cols.push_back(col);
    }
    if (spec.period_effects) {
        const bool omit = spec.estimator == Estimator::within || s.intercept_column >= 0;
        bool first = true;
        for (std::size_t g = 0; g < s.grid.size(); ++g) {
            if (s.period_rows[g] == 0) continue;
            if (first && omit) {
                first = false;
                continue;
            }
            first = false;
            cols.push_back(c0 + static_cast<Index>(s.regressor_names.size() + g));
        }
    }
    return cols;
}

// The factor of the chosen columns (and y last): a QR of the merged factor's columns.
MatrixXd select_factor(const MatrixXd& r, const std::vector<Index>& cols) {
    const Index p = static_cast<Index>(cols.size());
    MatrixXd w(r.rows(), p + 1);
    for (Index k = 0; k < p; ++k) w.col(k) = r.col(cols[static_cast<std::size_t>(k)]);
    w.col(p) = r.col(r.cols() - 1);
    Eigen::HouseholderQR<MatrixXd> qr(w);
    const Index top = std::min(w.rows(), p + 1);
    MatrixXd out = MatrixXd::Zero(p + 1, p + 1);
    out.topRows(top) = qr.matrixQR().topRows(top).triangularView<Eigen::Upper>();
    return out;
}

// centre_and_scale's decisions: a column that centring leaves below 1e-13 of its raw
// length is a multiple of the intercept column (or zero) and dropped.
std::vector<Index> drop_constant(const PartialSums& s, const MatrixXd& r, const std::vector<Index>& cols,
                                 std::vector<DroppedTerm>& dropped, VectorXd& scale) {
    std::vector<Index> keep;
    std::vector<double> kept_scale;
    for (std::size_t k = 0; k < cols.size(); ++k) {
        const Index j = cols[k];
        const std::string& name = s.candidates[static_cast<std::size_t>(j)];
        if (j == s.intercept_column) {
            keep.push_back(static_cast<Index>(k));
            kept_scale.push_back(std::sqrt(static_cast<double>(s.weight_sum)));  // the intercept column's length
            continue;
        }
        const double raw = static_cast<double>(s.raw_squares[static_cast<std::size_t>(j)]);
        if (!std::isfinite(raw))
            throw Error(name + " has values too large to compute with (their squares overflow a double); divide the "
                        "column by a power of 10 and scale its estimate back");
        const double ss = s.intercept_column >= 0 ? r.col(static_cast<Index>(k)).squaredNorm() : raw;
        if (ss == 0 || std::sqrt(ss) <= 1e-13 * std::sqrt(raw)) {
            dropped.push_back({name, DropReason::collinear,
                               raw == 0 ? name + " is zero in every row; dropped"
                                        : name + " is constant (collinear with intercept); dropped"});
            continue;
        }
        keep.push_back(static_cast<Index>(k));
        kept_scale.push_back(std::sqrt(ss));
    }
    scale = Eigen::Map<VectorXd>(kept_scale.data(), static_cast<Index>(kept_scale.size()));
    return keep;
}

// rank_decision of solver.cpp on the working factor a ((p+1) x (p+1), y last):
// a term whose distance from the span of the earlier kept terms is <= kRankTolerance of
// its length is dropped. Returns the kept positions; R and qty of the kept terms.
std::vector<Index> decide_rank(MatrixXd a, const std::vector<std::string>& names, std::uint64_t n,
                               std::vector<DroppedTerm>& dropped, MatrixXd& R, VectorXd& qty) {
    const Index p = a.cols() - 1;
    const MatrixXd original_a = a;
    std::vector<Index> kept;
    Index r = 0;
    VectorXd essential, workspace(p + 1);
    for (Index jj = 0; jj < p; ++jj) {
        const double original = original_a.col(jj).head(p).norm();
        const Index m_rows = p + 1 - r;
        const double distance = a.col(jj).segment(r, m_rows).norm();
        if (!(distance > kRankTolerance * original) || static_cast<std::uint64_t>(r) >= n) {
            const std::string& name = names[static_cast<std::size_t>(jj)];
            dropped.push_back({name, DropReason::collinear,
                               name + " is a linear combination of earlier terms (collinear); dropped"});
            continue;
        }
        double tau = 0, beta = 0;
        essential.resize(m_rows - 1);
        a.col(jj).segment(r, m_rows).makeHouseholder(essential, tau, beta);
        a.block(r, jj + 1, m_rows, p - jj).applyHouseholderOnTheLeft(essential, tau, workspace.data());
        a(r, jj) = beta;
        a.col(jj).segment(r + 1, m_rows - 1).setZero();
        kept.push_back(jj);
        ++r;
    }
    const Index k = static_cast<Index>(kept.size());
    R.resize(k, k);
    qty.resize(k);
    for (Index c = 0; c < k; ++c) {
        R.col(c) = a.col(kept[static_cast<std::size_t>(c)]).head(k);
        qty[c] = a(c, p);
    }
    R.triangularView<Eigen::StrictlyLower>().setZero();
    return kept;
}

}  // namespace

MergedEstimates merged_estimates(const PartialSums& s) {
    check_sums(s);
    MergedEstimates est;
    Equation& eq = est.equation;
    eq.estimator = s.spec.estimator;
    std::vector<Index> cols = builder_columns(s, eq.dropped);
    const std::size_t absorbed = s.spec.estimator == Estimator::within ? s.units_in_equation : 0;
    const std::string word = to_word(s.spec.estimator);
    if (cols.empty())
        throw Error(word + ": no terms left to estimate" +
                    (eq.dropped.empty() ? std::string() : " (" + eq.dropped.front().message + ")") +
                    "; give at least one regressor" +
                    (absorbed > 0 || s.spec.estimator == Estimator::fd ? " that varies within units" : ""));
    if (s.n <= cols.size() + absorbed)
        throw Error(word + ": the estimated equation has " + std::to_string(s.n) + " rows for " +
                    std::to_string(cols.size()) + " terms" +
                    (absorbed ? " and " + std::to_string(absorbed) + " unit effects" : std::string()) +
                    "; it needs more rows than terms");
    // the factor of the builder's columns, then of the columns centring keeps, scaled
    MatrixXd r = select_factor(s.r, cols);
    VectorXd scale;
    const std::vector<Index> keep = drop_constant(s, r, cols, eq.dropped, scale);
    std::vector<Index> candidates;
    for (Index k : keep) candidates.push_back(cols[static_cast<std::size_t>(k)]);
    if (candidates.empty()) throw Error("no terms to estimate: every column is zero or constant");
    std::vector<Index> positions = keep;
    r = select_factor(r, positions);
    std::vector<std::string> names;
    for (std::size_t k = 0; k < candidates.size(); ++k) {
        r.col(static_cast<Index>(k)) /= scale[static_cast<Index>(k)];
        names.push_back(s.candidates[static_cast<std::size_t>(candidates[k])]);
    }
    VectorXd qty;
    const std::vector<Index> kept = decide_rank(r, names, s.n, eq.dropped, eq.r_factor, qty);
    const Index K = static_cast<Index>(kept.size());
    eq.shift = VectorXd::Zero(K);
    eq.scale.resize(K);
    for (Index k = 0; k < K; ++k) {
        const Index local = kept[static_cast<std::size_t>(k)];
        const Index col = candidates[static_cast<std::size_t>(local)];
        est.kept.push_back(col);
        eq.terms.push_back(names[static_cast<std::size_t>(local)]);
        eq.scale[k] = scale[local];
        if (col == s.intercept_column) eq.intercept_column = static_cast<int>(k);
        else if (s.intercept_column >= 0) eq.shift[k] = s.shift[col];
    }
    eq.X = MatrixXd(0, K);
    eq.lean_rows = static_cast<std::size_t>(s.n);
    eq.absorbed = absorbed;
    eq.n_units = static_cast<std::size_t>(s.units_in_equation);
    for (std::uint64_t c : s.period_rows) eq.n_periods += c > 0 ? 1 : 0;
    if (!(eq.df_residual() > 0))
        throw Error(word + ": after dropping collinear terms the equation has " + std::to_string(s.n) + " rows for " +
                    std::to_string(K) + " terms" +
                    (absorbed ? " and " + std::to_string(absorbed) + " unit effects" : std::string()) +
                    "; it needs more rows than terms");
    est.shift_y = s.intercept_column >= 0 ? s.shift[s.shift.size() - 1] : 0.0;
    est.c_work = eq.r_factor.triangularView<Eigen::Upper>().solve(qty).cast<long double>();
    eq.coef = original_coefficients(eq, est.c_work, est.shift_y);
    eq.xtx_inverse = xtx_inverse(eq);
    return est;
}

}  // namespace weft::detail
