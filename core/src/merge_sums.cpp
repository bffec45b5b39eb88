// Pass 1 of the fit over partitions (weft/merge.hpp): a partition's candidate equation,
// its centred R factor and sums, and the merge of two such partials.
#include <algorithm>
#include <cmath>
#include <string>

#include <Eigen/Dense>

#include "weft/error.hpp"
#include "weft/merge.hpp"
#include "merge_internal.hpp"

namespace weft {

using Eigen::Index;
using Eigen::MatrixXd;
using Eigen::VectorXd;

void Comoments::add(long double a, long double b, long double weight) {
    // West (1979), the weighted form of the running update
    if (weight == 0) return;
    const long double total = static_cast<long double>(n) + weight;
    const long double da = a - mean_a, db = b - mean_b;
    mean_a += da * weight / total;
    mean_b += db * weight / total;
    caa += weight * da * (a - mean_a);
    cbb += weight * db * (b - mean_b);
    cab += weight * da * (b - mean_b);
    n = static_cast<double>(total);
}

void Comoments::merge(const Comoments& o) {
    if (o.n == 0) return;
    if (n == 0) {
        *this = o;
        return;
    }
    const long double total = static_cast<long double>(n) + o.n;
    const long double da = o.mean_a - mean_a, db = o.mean_b - mean_b;
    const long double w = static_cast<long double>(n) * o.n / total;
    caa += o.caa + da * da * w;
    cbb += o.cbb + db * db * w;
    cab += o.cab + da * db * w;
    mean_a += da * o.n / total;
    mean_b += db * o.n / total;
    n = static_cast<double>(total);
}

std::string partition_refusal(const ModelSpec& spec) {
    const char* one_machine = "fit it on one machine (weft.fit, weft_model_new)";
    if (spec.estimator == Estimator::between || spec.estimator == Estimator::random)
        return std::string(to_word(spec.estimator)) +
               " is not fitted over partitions (its equation needs every unit mean at once); use pooled, fd or "
               "within there, or " + one_machine;
    switch (spec.covariance) {
        case Covariance::hc2:
        case Covariance::hc3:
            return std::string(to_word(spec.covariance)) +
                   " needs each row's leverage, which the partitions do not return; use hc1 (or hc0), or " +
                   one_machine;
        case Covariance::cr2:
            return "cr2 needs each unit's block of the hat matrix, which the partitions do not return; use cluster, "
                   "or " + std::string(one_machine);
        case Covariance::cluster_both:
            return "cluster-both needs the score sums of every unit-period cell; use cluster, cluster-period or dk, "
                   "or " + std::string(one_machine);
        default:
            return {};
    }
}

namespace detail {

namespace {

// The partition's index with its periods placed on the global grid.
PanelIndex global_index(const PanelData& data, const std::vector<double>& grid) {
    if (grid.empty()) throw Error("the period grid is empty; give the sorted distinct periods of all partitions");
    for (std::size_t g = 0; g < grid.size(); ++g)
        if (!std::isfinite(grid[g]))
            throw Error("the period grid holds " + format_number(grid[g]) + " at position " + std::to_string(g + 1) +
                        "; give the finite periods only");
    for (std::size_t g = 1; g < grid.size(); ++g)
        if (!(grid[g - 1] < grid[g]))
            throw Error("the period grid must be sorted and without repeats (position " + std::to_string(g + 1) +
                        " holds " + format_number(grid[g]) + " after " + format_number(grid[g - 1]) + ")");
    PanelIndex index = build_index(data.units, data.periods, data.first_row_number);
    std::vector<std::int32_t> place(index.grid.size());
    for (std::size_t g = 0; g < index.grid.size(); ++g) {
        const auto it = std::lower_bound(grid.begin(), grid.end(), index.grid[g]);
        if (it == grid.end() || *it != index.grid[g])
            throw Error("period " + format_number(index.grid[g]) +
                        " is not on the period grid given; build the grid from the periods of every partition");
        place[g] = static_cast<std::int32_t>(it - grid.begin());
    }
    for (std::int32_t& p : index.period_of_row)
        if (p >= 0) p = place[static_cast<std::size_t>(p)];
    index.grid = grid;
    return index;
}

// Listwise row choice, then the weights' (as choose_rows, without its refusal of an
// empty partition).
void choose_partition_rows(const PanelData& data, const WeightSource& weights, PartitionEquation& pe) {
    const std::size_t n_rows = data.outcome.size();
    pe.used.assign(n_rows, 0);
    for (std::size_t i = 0; i < n_rows; ++i) pe.used[i] = pe.index.unit_of_row[i] >= 0 ? 1 : 0;
    auto drop = [&](const Column& c) {
        if (const std::uint8_t* mask = c.mask())
            for (std::size_t i = 0; i < n_rows; ++i) pe.used[i] &= static_cast<std::uint8_t>(mask[i] == 0);
    };
    drop(data.outcome);
    for (const Column& x : data.regressors) drop(x);
    if (weights.column != nullptr) {
        pe.weight_label = weights.label;
        pe.rows_zero_weight = weigh_rows(*weights.column, weights.label, data.first_row_number, pe.used);
    }
    pe.period_used.assign(pe.index.grid.size(), 0);
    std::vector<std::uint8_t> unit_seen(pe.index.n_units(), 0);
    for (std::size_t i = 0; i < n_rows; ++i) {
        if (!pe.used[i]) continue;
        ++pe.rows_used;
        unit_seen[static_cast<std::size_t>(pe.index.unit_of_row[i])] = 1;
        pe.period_used[static_cast<std::size_t>(pe.index.period_of_row[i])] = 1;
    }
    pe.units_used = static_cast<std::uint64_t>(std::count(unit_seen.begin(), unit_seen.end(), 1));
}

// The candidate columns' names: intercept (pooled, fd with one), regressors, a period
// indicator per grid period (with period indicators).
void name_candidates(const ModelSpec& spec, PartitionEquation& pe) {
    if (spec.estimator != Estimator::within && spec.intercept) {
        pe.candidates.push_back("intercept");
        pe.intercept_column = 0;
    }
    for (const std::string& name : pe.regressor_names) pe.candidates.push_back(name);
    if (spec.period_effects)
        for (std::size_t g = 0; g < pe.index.grid.size(); ++g)
            pe.candidates.push_back(period_term(pe.index, static_cast<std::int32_t>(g)));
}

// Rows (later, earlier) of the equation: pooled and within take the used rows; fd the
// differences of adjacent grid periods. Weighted: each row's weight (fd: the later row's).
void fill_levels_or_differences(const Context& ctx, const std::vector<std::size_t>& later,
                                const std::vector<std::size_t>* earlier, PartitionEquation& pe) {
    const Index N = static_cast<Index>(later.size());
    const Index c0 = pe.intercept_column >= 0 ? 1 : 0;
    const Index k_reg = static_cast<Index>(ctx.k_reg);
    pe.X = MatrixXd::Zero(N, static_cast<Index>(pe.candidates.size()));
    pe.y.resize(N);
    pe.unit.resize(static_cast<std::size_t>(N));
    pe.period.resize(static_cast<std::size_t>(N));
    pe.input_row = later;
    pe.level_squares.assign(static_cast<std::size_t>(k_reg), 0.0L);
    if (ctx.weights != nullptr) pe.weight.resize(N);
    const Column& outcome = ctx.data.outcome;
    for (Index i = 0; i < N; ++i) {
        const std::size_t a = later[static_cast<std::size_t>(i)];
        if (c0) pe.X(i, 0) = 1.0;
        for (Index j = 0; j < k_reg; ++j) {
            const Column& x = *ctx.regressors[static_cast<std::size_t>(j)];
            const double v = x.value(a);
            pe.X(i, c0 + j) = earlier ? v - x.value((*earlier)[static_cast<std::size_t>(i)]) : v;
            pe.level_squares[static_cast<std::size_t>(j)] += static_cast<long double>(v) * v;
        }
        pe.y[i] = earlier ? outcome.value(a) - outcome.value((*earlier)[static_cast<std::size_t>(i)]) : outcome.value(a);
        pe.unit[static_cast<std::size_t>(i)] = pe.index.unit_of_row[a];
        pe.period[static_cast<std::size_t>(i)] = pe.index.period_of_row[a];
        if (ctx.spec.period_effects) pe.X(i, c0 + k_reg + pe.period[static_cast<std::size_t>(i)]) = 1.0;
        if (ctx.weights != nullptr) pe.weight[i] = ctx.weights->value(a);
    }
}

// within: the levels rows demeaned by unit (period indicators too), with weighted unit
// means when weighted (sum w v / sum w, as build_within).
void demean_by_unit(PartitionEquation& pe) {
    const bool weighted = pe.weight.size() != 0;
    for (std::size_t r = 0; r < pe.runs.begin.size(); ++r) {
        const Index b = static_cast<Index>(pe.runs.begin[r]), e = static_cast<Index>(pe.runs.end[r]);
        long double total = 0;
        for (Index i = b; i < e; ++i) total += weighted ? pe.weight[i] : 1.0;
        auto demean = [&](auto&& column) {
            long double sum = 0;
            for (Index i = b; i < e; ++i) sum += (weighted ? pe.weight[i] : 1.0L) * column(i);
            const double mean = static_cast<double>(sum / total);
            for (Index i = b; i < e; ++i) column(i) -= mean;
        };
        for (Index j = 0; j < pe.X.cols(); ++j) demean([&](Index i) -> double& { return pe.X(i, j); });
        demean([&](Index i) -> double& { return pe.y[i]; });
    }
}

// Per regressor: the sum of squares of its equation column before the weights.
void note_change_squares(PartitionEquation& pe) {
    const Index c0 = pe.intercept_column >= 0 ? 1 : 0;
    pe.change_squares.assign(pe.regressor_names.size(), 0.0L);
    for (std::size_t j = 0; j < pe.regressor_names.size(); ++j)
        for (Index i = 0; i < pe.X.rows(); ++i) {
            const long double v = pe.X(i, c0 + static_cast<Index>(j));
            pe.change_squares[j] += v * v;
        }
}

}  // namespace

PartitionEquation partition_equation(const PanelData& data, const ModelSpec& spec, const std::vector<double>& grid) {
    const std::string refusal = partition_refusal(spec);
    if (!refusal.empty()) throw Error(refusal);
    check_inputs(data, spec, false);
    const WeightSource weights = weight_source(data, spec);
    PartitionEquation pe;
    pe.index = global_index(data, grid);
    choose_partition_rows(data, weights, pe);
    const Context ctx = make_context(data, spec, pe.index, pe.used, weights);
    pe.regressor_names = ctx.regressor_names;
    name_candidates(spec, pe);
    pe.rows = used_rows_in_order(ctx);
    pe.runs = unit_runs(pe.index, pe.rows);
    if (spec.estimator == Estimator::fd) {
        std::vector<std::size_t> later, earlier;
        std::size_t lost = 0;
        fd_pairs(ctx, later, earlier, lost);
        pe.pairs_lost = lost;
        fill_levels_or_differences(ctx, later, &earlier, pe);
    } else {
        fill_levels_or_differences(ctx, pe.rows, nullptr, pe);
        if (spec.estimator == Estimator::within) demean_by_unit(pe);
    }
    note_change_squares(pe);
    return pe;
}

void weigh_partition(PartitionEquation& pe) {
    if (pe.weight.size() == 0) return;
    const Eigen::ArrayXd root = pe.weight.array().sqrt();
    if (pe.X.cols() > 0) pe.X.array().colwise() *= root;
    pe.y.array() *= root;
}

}  // namespace detail

namespace {

// The R factor (m x m, zero rows below the rank) of a tall matrix.
MatrixXd r_of(const MatrixXd& w) {
    const Index m = w.cols();
    MatrixXd r = MatrixXd::Zero(m, m);
    if (w.rows() == 0) return r;
    Eigen::HouseholderQR<MatrixXd> qr(w);
    const Index top = std::min(w.rows(), m);
    r.topRows(top) = qr.matrixQR().topRows(top).triangularView<Eigen::Upper>();
    return r;
}

// Move a factor of [1, X - s_old, y - s_old] to [1, X - s_new, y - s_new]: column j
// gains (s_old - s_new)_j times the intercept column, whose factor column is (R00, 0...).
void shift_factor(MatrixXd& r, const VectorXd& s_old, const VectorXd& s_new) {
    for (Index j = 1; j < r.cols(); ++j) r(0, j) += r(0, 0) * (s_old[j] - s_new[j]);
}

}  // namespace

namespace {

// The equation's outcome sums before the weights go into the rows: sum w y, sum w y^2
// and the weighted centred moments (weight 1 each when unweighted; weighted_outcome_sums).
void note_outcome(const detail::PartitionEquation& pe, PartialSums& s) {
    const bool weighted = pe.weight.size() != 0;
    for (Index i = 0; i < pe.y.size(); ++i) {
        const long double w = weighted ? pe.weight[i] : 1.0L, y = pe.y[i];
        s.y_sum += w * y;
        s.y_raw += w * y * y;
        s.weight_sum += w;
        s.y_moments.add(y, y, w);
    }
}

// The centred R factor of [X, y] (rows already times sqrt(w)): with an intercept column c,
// column j is centred as x_j - s_j c with s_j = c'x_j / c'c (the solver's centring; the
// mean when c is all ones).
void centred_factor(const detail::PartitionEquation& pe, PartialSums& s) {
    const Index N = pe.X.rows(), p = pe.X.cols();
    s.raw_squares.assign(static_cast<std::size_t>(p), 0.0L);
    MatrixXd w(N, p + 1);
    w.leftCols(p) = pe.X;
    w.col(p) = pe.y;
    s.shift = VectorXd::Zero(p + 1);
    const int c = s.intercept_column;
    long double cc = 0;
    if (c >= 0)
        for (Index i = 0; i < N; ++i) cc += static_cast<long double>(w(i, c)) * w(i, c);
    for (Index j = 0; j < p + 1; ++j) {
        long double cross = 0, squares = 0;
        for (Index i = 0; i < N; ++i) {
            if (c >= 0) cross += static_cast<long double>(w(i, c)) * w(i, j);
            squares += static_cast<long double>(w(i, j)) * w(i, j);
        }
        if (j < p) s.raw_squares[static_cast<std::size_t>(j)] = squares;
        if (c >= 0 && j != c && N > 0) s.shift[j] = static_cast<double>(cross / cc);
    }
    if (c >= 0)
        for (Index j = 1; j < p + 1; ++j) w.col(j) -= s.shift[j] * w.col(c);
    s.r = r_of(w);
}

}  // namespace

PartialSums accumulate_sums(const PanelData& data, const ModelSpec& spec, const std::vector<double>& grid) {
    detail::PartitionEquation pe = detail::partition_equation(data, spec, grid);
    PartialSums s;
    s.spec = spec;
    s.grid = grid;
    s.regressor_names = pe.regressor_names;
    s.candidates = pe.candidates;
    s.intercept_column = pe.intercept_column;
    s.rows_input = data.outcome.size();
    s.rows_used = pe.rows_used;
    s.rows_zero_weight = pe.rows_zero_weight;
    s.weight_label = pe.weight_label;
    s.units_used = pe.units_used;
    s.pairs_lost = pe.pairs_lost;
    s.period_used = pe.period_used;
    s.level_squares = pe.level_squares;
    s.change_squares = pe.change_squares;
    const Index N = pe.X.rows();
    s.n = static_cast<std::uint64_t>(N);
    s.period_rows.assign(grid.size(), 0);
    std::vector<std::uint8_t> unit_seen(pe.index.n_units(), 0);
    for (Index i = 0; i < N; ++i) {
        ++s.period_rows[static_cast<std::size_t>(pe.period[static_cast<std::size_t>(i)])];
        unit_seen[static_cast<std::size_t>(pe.unit[static_cast<std::size_t>(i)])] = 1;
    }
    s.units_in_equation = static_cast<std::uint64_t>(std::count(unit_seen.begin(), unit_seen.end(), 1));
    note_outcome(pe, s);
    detail::weigh_partition(pe);
    centred_factor(pe, s);
    return s;
}

void merge_sums(PartialSums& into, const PartialSums& o) {
    if (describe(into.spec) != describe(o.spec) || into.spec.dk_lag != o.spec.dk_lag)
        throw Error("the partials were made for different models (\"" + describe(into.spec) + "\" and \"" +
                    describe(o.spec) + "\"); accumulate every partition with the same model text");
    if (into.grid != o.grid)
        throw Error("the partials were made on different period grids; give every partition the same grid");
    if (into.candidates != o.candidates)
        throw Error("the partials have different regressors; give every partition the same columns in the same order");
    if (into.weight_label != o.weight_label)
        throw Error("the partials were made with different weights (" +
                    (into.weight_label.empty() ? std::string("none") : into.weight_label) + " and " +
                    (o.weight_label.empty() ? std::string("none") : o.weight_label) +
                    "); give every partition the same weight column");
    // the centring points merge as means weighted by the weight sums (counts when unweighted)
    const double n_a = static_cast<double>(into.weight_sum), n_b = static_cast<double>(o.weight_sum);
    if (o.n > 0) {
        if (into.n == 0) {
            into.shift = o.shift;
            into.r = o.r;
        } else {
            VectorXd shift = into.shift;
            if (into.intercept_column >= 0) shift = into.shift + (o.shift - into.shift) * (n_b / (n_a + n_b));
            MatrixXd stacked(2 * into.r.rows(), into.r.cols());
            MatrixXd ra = into.r, rb = o.r;
            if (into.intercept_column >= 0) {
                shift_factor(ra, into.shift, shift);
                shift_factor(rb, o.shift, shift);
            }
            stacked << ra, rb;
            into.r = r_of(stacked);
            into.shift = shift;
        }
    }
    into.n += o.n;
    into.weight_sum += o.weight_sum;
    into.rows_input += o.rows_input;
    into.rows_used += o.rows_used;
    into.rows_zero_weight += o.rows_zero_weight;
    into.units_used += o.units_used;
    into.units_in_equation += o.units_in_equation;
    into.pairs_lost += o.pairs_lost;
    for (std::size_t g = 0; g < into.grid.size(); ++g) {
        into.period_used[g] |= o.period_used[g];
        into.period_rows[g] += o.period_rows[g];
    }
    for (std::size_t j = 0; j < into.raw_squares.size(); ++j) into.raw_squares[j] += o.raw_squares[j];
    for (std::size_t j = 0; j < into.level_squares.size(); ++j) into.level_squares[j] += o.level_squares[j];
    for (std::size_t j = 0; j < into.change_squares.size(); ++j) into.change_squares[j] += o.change_squares[j];
    into.y_sum += o.y_sum;
    into.y_raw += o.y_raw;
    into.y_moments.merge(o.y_moments);
}

}  // namespace weft
