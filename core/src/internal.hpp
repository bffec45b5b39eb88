// Internal helpers of weft_core shared between its source files (not installed).
#pragma once

#include <cstddef>
#include <string>

#include "weft/panel.hpp"

namespace weft::detail {

// "\"name\"" or the fallback text when the column has no name.
std::string column_label(const std::string& name, const char* fallback);

// Error "<what> has <got> rows but <expected_what> has <expected>" unless equal.
void check_length(std::size_t expected, const char* expected_what, std::size_t got,
                  const std::string& what);

// Length and mask size only.
void check_column_shape(const Column& column, std::size_t n_rows, const char* expected_what,
                        const std::string& what);

// Length and mask size, and no NaN/Inf outside the missing mask.
void check_column(const Column& column, std::size_t n_rows, const char* expected_what,
                  const std::string& what, std::size_t first_row_number);

PanelIndex make_index(const UnitColumn& units, const Column& periods, std::size_t first_row_number,
                      bool reject_duplicates, std::size_t* duplicate_count);

// The rows `valid` (ascending input rows with a unit, and a period when periods is
// given) in (unit, period, row) order, by hashing each id once and a counting sort by
// unit (panel_hash.cpp). Fills unit_of_row, unit_labels and unit_start of index, and
// sets period_of_row to -1 everywhere (the caller places rows on the grid).
std::vector<std::size_t> group_rows_hashed(const UnitColumn& units, const Column* periods,
                                           const std::vector<std::size_t>& valid, PanelIndex& index);

}  // namespace weft::detail

#include <Eigen/Core>

namespace weft { struct Equation; }

namespace weft::detail {

// Rows [first, first + count) of the working design Z of an equation (see
// Equation::shift/scale), written into out (count x K).
void working_block(const Equation& eq, Eigen::Index first, Eigen::Index count, Eigen::MatrixXd& out);

// M^-1 where X = Z M (maps working-basis coefficients to the original basis).
Eigen::MatrixXd working_to_original(const Equation& eq);

// R^-1 of the equation's upper-triangular factor.
Eigen::MatrixXd r_inverse(const Equation& eq);

// Cholesky factor R (R'R = gram) of a working-basis Gram matrix, accepted only when
// cond(R) (Frobenius estimate) is at most condition_limit: the solver's Gram route.
bool gram_factor(const Eigen::MatrixXd& gram, Eigen::MatrixXd& r_out, double condition_limit);

// Working-basis solution c_work (y shifted by shift_y against the intercept) back to
// the coefficients of the original columns (uses eq.shift, eq.scale, eq.intercept_column).
Eigen::VectorXd original_coefficients(const Equation& eq, const Eigen::Matrix<long double, Eigen::Dynamic, 1>& c_work,
                                      long double shift_y);

// (X'X)^-1 = M^-1 (R'R)^-1 M^-T of an equation with its factor set.
Eigen::MatrixXd xtx_inverse(const Equation& eq);

// Rows per block in the tall-skinny QR and in the blockwise score passes.
inline constexpr Eigen::Index kBlockRows = 2048;
// Rows per block of the tall-skinny QR (sized so a block stays in the L1/L2 cache).
inline constexpr Eigen::Index kTsqrBlockRows = 256;
// Largest cond(Z) (Frobenius estimate from R) for which the solver takes the Gram
// route; above it (or when any term is near collinear) the tall-skinny QR decides.
// At 1e2, cond^2 eps ~ 1e-12. Measured on NIST: Longley (cond between 1e2 and 1e3)
// keeps SE LRE 15.0 on the QR but 12.6 on the Gram route, Wampler3-5 (about 1e4) drop
// from 13.7 to 10.3, so the limit sits below both.
inline constexpr double kGramConditionLimit = 1e2;

// Driscoll-Kraay meat from the per-period score sums h (grid x K, rows in grid order)
// with Bartlett weights 1 - j/(lag+1); and the default lag floor(T^(1/4)).
Eigen::MatrixXd dk_meat(const Eigen::MatrixXd& h, int lag);
int dk_default_lag(std::size_t periods);

}  // namespace weft::detail

#include "weft/model.hpp"

namespace weft::detail {

// Throws unless the equation holds its rows (a lean equation does not).
void require_rows(const Equation& eq, const char* what);

// Throws "<what>: not defined for a weighted fit in weft; <instead>" when eq is weighted
// (fit_weights.cpp).
void refuse_weighted(const Equation& eq, const char* what, const char* instead);

// The sandwich B meat B' (meat in the working basis) with the factor, df and label of
// `kind` (hc0-hc3, cluster, cluster0, cluster-period, dk; classical ignores the meat);
// clusters = G (or T for dk).
CovarianceResult covariance_from_meat(const Equation& eq, Covariance kind, const Eigen::MatrixXd& meat,
                                      std::size_t clusters, int lag);

}  // namespace weft::detail

#include <cstdint>
#include <optional>
#include <vector>

namespace weft::detail {

// Sums of an estimated equation's y (long double): sum, sum of squares, and sum of
// squares about the mean (two-pass).
struct OutcomeSums {
    long double sum = 0;
    long double raw = 0;
    long double centred = 0;
};
OutcomeSums outcome_sums(const Eigen::VectorXd& y);

// ---- lean fits (lean.cpp): the estimated equation in streaming passes over the columns.
// Rows per block of the streaming route (lean.cpp says why 512).
inline constexpr Eigen::Index kLeanBlockRows = 512;
// Unit means, one row per unit: a block's units then sit together in memory.
using UnitMeansMatrix = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;
struct LeanInput {
    const PanelData& data;
    const ModelSpec& spec;
    const PanelIndex& index;
    const std::vector<std::string>& regressor_names;
    // The equation rows, given one of two ways:
    //  - input sorted by unit and period (pooled: any order): is_row[r] = 1 when input
    //    row r is an equation row (fd: the difference of rows r - 1 and r);
    //  - otherwise later (the input row of each equation row; fd: the later row) and,
    //    for fd, earlier (the earlier row of each difference).
    const std::vector<std::uint8_t>* is_row = nullptr;
    const std::vector<std::size_t>* later = nullptr;
    const std::vector<std::size_t>* earlier = nullptr;
    std::size_t count = 0;    // equation rows N
    bool units_in_order = true;   // their unit numbers never decrease (else the score pass holds every unit's sums)
    std::size_t units = 0;    // distinct units among them
    std::size_t periods = 0;  // distinct grid periods among them
    // The regressor columns (null: every column of data.regressors; weights=NAME leaves
    // the weight column out) and, for a weighted fit, the weight column: each equation
    // row (fd: the later row's weight) is read times sqrt(w), as weigh_equation scales
    // the full route's rows.
    const std::vector<const Column*>* regressors = nullptr;
    const Column* weights = nullptr;
    // within: the unit means of [X, y] ((unit numbers + 1) x (regressors + 1), the last
    // row zeros), taken off each equation row as it is read (no intercept then), and the
    // unit effects counted in df
    UnitMeansMatrix* unit_means = nullptr;
    std::size_t absorbed = 0;
    // within on input sorted by unit: the means are not known yet; the first pass finds
    // them block by block (blocks end where a unit ends) before taking them off
    bool unit_means_pending = false;
};

struct LeanResult {
    Equation equation;                        // lean: Equation::rows_held() is false
    CovarianceResult covariance;
    OutcomeSums outcome;
    Series residuals;                         // aligned to input rows
    Series fitted;
};

// within, means found on the way (lean_units.cpp): block starts over the input rows
// [lo, hi) (rows sorted by unit), each block at most `block` rows and ending where a
// unit ends; empty when a unit has more rows than that. block_unit_means: the means of
// [X, y] over the rows [a, a + b) with keep != 0 of each unit in them, into means.
std::vector<std::size_t> unit_aligned_blocks(const PanelIndex& index, std::size_t lo, std::size_t hi, std::size_t block);
void block_unit_means(const LeanInput& in, std::size_t a, Eigen::Index b, const double* keep, UnitMeansMatrix& means);

// Whether the estimator and covariance of spec have a lean route at all.
bool lean_applies(const ModelSpec& spec);

// The lean equation, or empty when this design needs the full route (a term to drop,
// a design the Gram route does not take, values near the limits of double, too few
// clusters...): the full route then decides and words any error.
std::optional<LeanResult> lean_equation(const LeanInput& in);

}  // namespace weft::detail

#include "weft/spec.hpp"

namespace weft::detail {

// Dense ids 0..G-1 in order of first appearance for ids >= 0; returns G.
std::size_t dense_ids(const std::vector<std::int32_t>& ids, std::vector<std::int32_t>& dense);

// cr2 by unit (covariance_cr2.cpp): the covariance with CovarianceResult::term_df.
CovarianceResult cr2_covariance(const Equation& eq);

// Wald test of R b = r under cr2: chi-square rows the plain W on q df, F rows the HTZ
// test of Pustejovsky and Tipton (2018). Throws weft::Error when the HTZ df are not
// positive.
WaldResult cr2_wald_test(const Equation& eq, const Eigen::VectorXd& coef, const Eigen::MatrixXd& covariance,
                         const Eigen::MatrixXd& restriction, const Eigen::VectorXd& value);

}  // namespace weft::detail
