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
    std::vector<std::string> regressor_names;
    std::vector<std::string> candidates;
    int intercept_column = -1;
    std::uint64_t rows_used = 0, units_used = 0, pairs_lost = 0;
    std::vector<std::uint8_t> period_used;  // per grid period
    std::vector<long double> level_squares; // per regressor (fd, within)
};

PartitionEquation partition_equation(const PanelData& data, const ModelSpec& spec, const std::vector<double>& grid);

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
inline void working_row(const MergedEstimates& est, const Eigen::MatrixXd& X, Eigen::Index i,
                        Eigen::Matrix<long double, Eigen::Dynamic, 1>& z) {
    const Equation& eq = est.equation;
    for (Eigen::Index k = 0; k < z.size(); ++k) {
        const long double x = X(i, est.kept[static_cast<std::size_t>(k)]);
        const long double scale = eq.scale[k], shift = eq.shift[k];
        z[k] = k == eq.intercept_column ? x / scale : (x - shift) / scale;
    }
}

}  // namespace weft::detail
