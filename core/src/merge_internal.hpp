// Internal pieces of the fit over partitions (weft/merge.hpp), shared by merge_sums.cpp,
// merge_scores.cpp and merge_bytes.cpp.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <vector>

#include <Eigen/Core>

#include "weft/merge.hpp"
#include "fit_stages.hpp"

namespace weft::detail {

// A partition's candidate equation: every row of the estimated equation of pooled, fd
// or within over the partition's units, with a column per candidate term
// (PartialSums::candidates) and y. Period indicators are there for every grid period.
struct PartitionEquation {
    PanelIndex index;                       // the partition's index, periods placed on the global grid
    std::vector<std::uint8_t> used;         // per input row
    std::vector<std::size_t> rows;          // used rows in unit order
    UnitRuns runs;                          // of rows
    Eigen::MatrixXd X;                      // N x candidates
    Eigen::VectorXd y;                      // N
    std::vector<std::int32_t> unit;         // per equation row (partition unit number)
    std::vector<std::int32_t> period;       // per equation row (global grid position)
    std::vector<std::size_t> input_row;     // per equation row: its input row (fd: the later row)
    std::vector<std::string> regressor_names;
    std::vector<std::string> candidates;
    int intercept_column = -1;
    std::uint64_t rows_used = 0, units_used = 0, pairs_lost = 0;
    std::vector<std::uint8_t> period_used;  // per grid period
    std::vector<long double> level_squares; // per regressor (fd, within)
    std::vector<long double> change_squares;// per regressor: squares of its equation column (before weights)
    Eigen::VectorXd weight;                 // N equation-row weights (fd: the later row's); empty: unweighted
    std::string weight_label;               // "weights \"w\""; empty: unweighted
    std::uint64_t rows_zero_weight = 0;     // used rows that a weight of 0 left out
};

// The equation before the weights go into its rows (within: demeaned with weighted unit
// means); weigh_partition then multiplies X and y by sqrt(weight) (no weights: nothing).
PartitionEquation partition_equation(const PanelData& data, const ModelSpec& spec, const std::vector<double>& grid);
void weigh_partition(PartitionEquation& pe);

// The estimates from merged pass-1 sums: the lean equation (terms, basis, factor,
// coefficients), the working solution, and where each kept term sits among the candidates.
struct MergedEstimates {
    Equation equation;                      // lean: lean_rows = N
    std::vector<Eigen::Index> kept;         // per kept term: its candidate column
    Eigen::Matrix<long double, Eigen::Dynamic, 1> c_work;
    long double shift_y = 0;
};
MergedEstimates merged_estimates(const PartialSums& sums);

// Working row of equation row i of a candidate design under the estimates, in long
// double: the working design is defined by these very shift and scale numbers, and the
// refinement needs its rows to more than double's digits (as solver.cpp's residual_long).
// Columns are centred against the intercept column's value in the row (1, or sqrt(w)
// when weighted), as the solver centres them.
inline void working_row(const MergedEstimates& est, const Eigen::MatrixXd& X, Eigen::Index i,
                        Eigen::Matrix<long double, Eigen::Dynamic, 1>& z) {
    const Equation& eq = est.equation;
    const long double c = eq.intercept_column >= 0 ? X(i, est.kept[static_cast<std::size_t>(eq.intercept_column)]) : 0.0L;
    for (Eigen::Index k = 0; k < z.size(); ++k) {
        const long double x = X(i, est.kept[static_cast<std::size_t>(k)]);
        const long double scale = eq.scale[k], shift = eq.shift[k];
        z[k] = k == eq.intercept_column ? x / scale : (x - shift * c) / scale;
    }
}

// The intercept column's value in equation row i (1, or sqrt(w) when weighted; 0 without
// an intercept): the residual is y - shift_y c - z'c_work.
inline long double intercept_value(const MergedEstimates& est, const Eigen::MatrixXd& X, Eigen::Index i) {
    const int c = est.equation.intercept_column;
    return c >= 0 ? static_cast<long double>(X(i, est.kept[static_cast<std::size_t>(c)])) : 0.0L;
}

// The residual of equation row i under the estimates (working units: sqrt(w) u when
// weighted); z receives the row's working columns.
inline long double equation_residual(const MergedEstimates& est, const Eigen::MatrixXd& X, const Eigen::VectorXd& y,
                                     Eigen::Index i, Eigen::Matrix<long double, Eigen::Dynamic, 1>& z) {
    working_row(est, X, i, z);
    long double r = static_cast<long double>(y[i]) - est.shift_y * intercept_value(est, X, i);
    for (Eigen::Index k = 0; k < z.size(); ++k) r -= est.c_work[k] * z[k];
    return r;
}

}  // namespace weft::detail
