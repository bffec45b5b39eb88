// weft/merge.hpp -- the fit over partitions of whole units: accumulate, merge, finish
// (ARCHITECTURE.md "Growing past one machine").
//
// A host that holds its panel in partitions (each partition holds every row of its
// units) fits in two passes over them:
//
//   grid     = sorted distinct periods of all rows        (the host merges it first)
//   sums_p   = accumulate_sums(partition p, spec, grid)  (pass 1, per partition)
//   sums     = merge of every sums_p                      (any order, any tree)
//   scores_p = accumulate_scores(partition p, sums)      (pass 2, per partition)
//   scores   = merge of every scores_p
//   fit      = finish_fit(sums, scores)
//
// Pass 1 holds, per partition, the R factor of the candidate equation's columns
// [intercept?, regressors, an indicator for every grid period, y] centred at the
// partition's own means, and the sizes and sums the finish needs. Partials merge by a
// Householder QR of the two stacked triangular factors, after moving both to the merged
// centring point (the first row of each factor takes the shift; Chan, Golub & LeVeque
// 1983 for the same update of centred sums): the merged factor is that of all rows, to
// QR accuracy. The finish then takes the solver's decisions on the small factor
// (period columns present and the reference, no variation within units, constant
// columns, the in-order rank decision of kRankTolerance) and solves. Pass 2 recomputes
// the same estimates from the merged sums on every partition and sums the residual's
// pieces there: SSR, Z'r and Z'Z (long double, so that the finish can take refinement
// steps without reading the data again: Z'r_k = Z'r_0 - Z'Z (c_k - c_0)), the hc meat,
// the per-unit cluster meat, per-period score sums (cluster-period, dk), and for within
// the moments of the R-squared variants.
//
// Supported: pooled, fd, within, with or without period indicators, with or without
// weights; classical, hc0,
// hc1, cluster, cluster0, cluster-period, dk; everything read from the fit afterwards
// (t, p, intervals, F, Wald tests). Refused with a message naming what to use: between
// and random (their second stage needs all unit means at once), hc2, hc3, cr2 (each
// row's leverage), cluster-both (the unit-period cells). The fit's residuals, fitted
// values and unit effects stay in the partitions (Fit::residuals is empty; a test that
// needs the equation's rows refuses); partition_series gives the residuals and fitted
// values of one partition's rows from the merged passes.
//
// Weights (CONVENTIONS.md "Observation weights"; the rules of fit_weights.cpp): the
// panel's weight column (PanelData::weights) or the regressor that weights=NAME names.
// A blank weight drops the row (counted with the dropped rows), a weight of 0 leaves the
// row out of the equation and N (counted apart), a negative weight is an error naming
// the row; fd takes the later row's weight, within demeans with weighted unit means.
// Each equation row is then multiplied by sqrt(w) before pass 1 (the intercept column
// becomes sqrt(w); the centring point of column j is sum w x_j / sum w, merged with the
// weight sums in place of counts), so that pass 2's residuals are sqrt(w) u and every
// score sum is of w x u, as on one machine. A weighted within fit gives no squared
// correlations at levels (as on one machine).
//
// Bytes: to_bytes/from_bytes write and read either partial with a magic tag, a format
// version and a 64-bit FNV-1a check of the contents; from_bytes refuses a damaged,
// truncated or other-version buffer with a weft::Error saying so.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <vector>

#include <Eigen/Core>

#include "weft/model.hpp"
#include "weft/options.hpp"
#include "weft/panel.hpp"

namespace weft {

// Centred sums of two variables (n, means, co-moments), merged by the pairwise update.
struct Comoments {
    double n = 0;
    long double mean_a = 0, mean_b = 0, caa = 0, cbb = 0, cab = 0;
    void add(long double a, long double b, long double weight = 1);  // n is then the sum of weights
    void merge(const Comoments& other);
};

// Pass 1 of one partition, or of several merged.
struct PartialSums {
    ModelSpec spec;
    std::vector<double> grid;                  // the global period grid
    std::vector<std::string> regressor_names;  // header, or x<k>
    std::vector<std::string> candidates;       // candidate term names, in term order
    int intercept_column = -1;                 // 0 with an intercept, else -1
    std::uint64_t rows_input = 0, rows_used = 0, units_used = 0, units_in_equation = 0, pairs_lost = 0;
    std::uint64_t n = 0;                        // equation rows
    std::uint64_t rows_zero_weight = 0;         // used rows left out by a weight of 0
    std::string weight_label;                   // "weights \"w\"" of a weighted fit; empty: unweighted
    long double weight_sum = 0;                 // sum of the equation rows' weights (n when unweighted)
    std::vector<std::uint8_t> period_used;      // per grid period: a used row there
    std::vector<std::uint64_t> period_rows;     // per grid period: equation rows there (fd: later period)
    std::vector<long double> raw_squares;       // per candidate: sum of squares of its equation column
    std::vector<long double> level_squares;     // per regressor (fd, within): sum of squares at levels
    std::vector<long double> change_squares;    // per regressor: sum of squares of its fd or within column,
                                                // before the weights (the no-variation decision)
    Eigen::VectorXd shift;                      // candidates + 1 (y last): centring point
    Eigen::MatrixXd r;                          // (candidates + 1)^2, upper triangular
    long double y_sum = 0, y_raw = 0;           // of the equation's y
    Comoments y_moments;                        // of the equation's y (a = b = y)
};

// Pass 2 of one partition, or of several merged.
struct PartialScores {
    std::uint64_t n = 0;                        // equation rows seen
    long double ssr = 0;
    std::vector<long double> gradient;          // Z'r, working basis
    std::vector<long double> gram;              // Z'Z (K x K, column-major), for further refinement steps
    Eigen::MatrixXd meat_rows;                  // sum z z' r^2 (hc0, hc1)
    Eigen::MatrixXd meat_units;                 // sum over units of s s', s = Z_g' r_g
    std::uint64_t units = 0;                    // units with equation rows
    Eigen::MatrixXd period_sums;                // grid x K: per-period Z_t' r_t (cluster-period, dk)
    std::vector<std::uint8_t> period_present;   // per grid period: an equation row there
    Comoments level_rows, level_means;          // within: (y, x'b) over used rows, over unit means
};

// Pass 1 of a partition that holds every row of its units. Throws weft::Error for bad
// input (as fit_model does), a period not on grid, or a model the route refuses.
PartialSums accumulate_sums(const PanelData& data, const ModelSpec& spec, const std::vector<double>& grid);
// into += other. Throws when the two were made for different models, columns or grids.
void merge_sums(PartialSums& into, const PartialSums& other);
// Pass 2 of a partition, with the merged pass 1.
PartialScores accumulate_scores(const PanelData& data, const PartialSums& merged);
void merge_scores(PartialScores& into, const PartialScores& other);
// The fit from the merged passes. Throws weft::Error as fit_model does (no rows, too
// few rows for the terms, fewer than 2 clusters...).
Fit finish_fit(const PartialSums& sums, const PartialScores& scores);

// The finished fit's residuals and fitted values on one partition's rows (a third pass,
// with the merged sums and scores): aligned to the partition's input rows, defined where
// fit_model's Fit::residuals would be (fd: the later row of each difference), in the
// outcome's units. The estimates are finish_fit's (the same refinement steps).
struct PartitionSeries {
    Series residuals, fitted;
};
PartitionSeries partition_series(const PanelData& data, const PartialSums& sums, const PartialScores& scores);

// Whether spec can be fitted over partitions; else the message (with "weft: " left
// to the interface) saying what to use.
std::string partition_refusal(const ModelSpec& spec);

std::vector<std::uint8_t> to_bytes(const PartialSums& sums);
std::vector<std::uint8_t> to_bytes(const PartialScores& scores);
// Which partial a buffer holds: 1 sums, 2 scores (after checking it whole).
int partial_kind(const std::uint8_t* bytes, std::size_t size);
PartialSums sums_from_bytes(const std::uint8_t* bytes, std::size_t size);
PartialScores scores_from_bytes(const std::uint8_t* bytes, std::size_t size);

}  // namespace weft
