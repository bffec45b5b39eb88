// weft/model.hpp -- estimated equations, covariances, fits.
//
// Contract (CONVENTIONS.md is the statistical specification):
// - fit_model(data, spec) indexes the panel, drops rows listwise (a missing outcome,
//   regressor, unit or period), builds the estimated equation of spec.estimator
//   (pooled, fd, within, between, random), solves it (solve_equation: columns centred
//   against the intercept and scaled to unit length; a well-conditioned design, cond
//   <= 1e2, by its Gram matrix, Cholesky and two refinement steps; any other by a
//   tall-skinny Householder QR with the in-order rank decision of kRankTolerance and
//   refinement with long-double residuals), and computes the covariance of
//   spec.covariance, t, p and intervals at spec.level.
// - Term order: intercept (if any), regressors in input order, then period indicators
//   "period <value>" in grid order. Terms that are a linear combination of earlier terms
//   are dropped (DropReason::collinear); under within/fd a regressor with no variation
//   within units is dropped with DropReason::no_within_variation. Dropped terms never
//   appear in Equation::terms and are never given a number.
// - Invalid input raises weft::Error (see error.hpp): length mismatch, NaN/Inf not marked
//   missing (names column and row), repeated (unit, period), no usable rows, fewer
//   equation rows than terms, within with a single unit, fewer than 2 clusters for a
//   cluster covariance, period clusters / dk for between.
// - Everything aligned to input rows (Fit::residuals, Fit::fitted) is a Series: defined
//   only where the row entered the estimated equation (fd: the later row of each
//   difference; between: every used row of the unit carries the unit's value).
// - Optional statistics (std::optional) are empty when they do not apply or cannot be
//   computed; a NaN is never stored as a result.
// - For the tests (Wald, heteroskedasticity, serial, Hausman, effects): Fit::equation is
//   the estimated equation itself (design X in original scale, y, coef, residuals,
//   (X'X)^-1, the R factor of the working design, and the input row / unit / grid
//   period of every equation row). compute_covariance() gives any other covariance of
//   the same equation without refitting; solve_equation() runs an auxiliary OLS through
//   the same solver (with units/periods so that cluster covariances work on it too).
//
// - Weights (ModelSpec::weights or PanelData::weights; CONVENTIONS.md "Observation
//   weights"): the estimated equation is weighted least squares held as OLS on the rows
//   sqrt(w_i) [x_i, y_i]: Equation::X, y, residual and fitted are those scaled rows and
//   Equation::weights holds w_i, so compute_covariance on it is the weighted covariance.
//   Fit::residuals and Fit::fitted are in the outcome's units (y - x'b, x'b).
//
// Stability: fields may be added; existing names and meanings do not change. Changes
// are announced here:
//   2026-12-05: observation weights: ModelSpec::weights, PanelData::weights,
//   Equation::weights, Fit::rows_zero_weight.
//   2026-12-04: Covariance::cr2 and CovarianceResult::term_df (per-term df: t, p and
//   intervals of term k use term_df[k] when it is not empty).
//   2026-12-02: fit_model_lean and Equation::lean_rows / rows_held() added (lean fits for
//   large data; fit_model is unchanged).
//   2026-12-02: Fit::exact_fit added; an exact fit reports se 0 and t, p NaN with a warning.
//   2026-12-02: solver gained the Gram route for well-conditioned designs (no API
//   change; r_factor is then the Cholesky factor of Z'Z, with the same meaning R'R = Z'Z).
#pragma once

#include <cstddef>
#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include <Eigen/Core>

#include "weft/options.hpp"
#include "weft/panel.hpp"
#include "weft/tolerances.hpp"
#include "weft/transforms.hpp"

namespace weft {

// kRankTolerance and the other decision tolerances: weft/tolerances.hpp.

enum class DropReason { collinear, no_within_variation };

struct DroppedTerm {
    std::string name;
    DropReason reason;
    std::string message;   // e.g. "capital has no variation within units; dropped by within"
};

// One estimated equation: y = X b + u over N equation rows and K terms.
struct Equation {
    Estimator estimator = Estimator::pooled;
    std::vector<std::string> terms;     // K names, the columns of X
    int intercept_column = -1;          // column of X acting as intercept (random: 1 - theta_i), -1 none
    Eigen::MatrixXd X;                  // N x K, original scale, transformed by the estimator
    Eigen::VectorXd y;                  // N
    Eigen::VectorXd coef;               // K
    Eigen::VectorXd residual;           // N, y - X coef (residual in long double, rounded)
    Eigen::VectorXd fitted;             // N, X coef
    double ssr = 0;                     // sum of squared residuals (accumulated in long double)
    std::vector<DroppedTerm> dropped;   // terms removed before/while solving

    // The factorisation (reused by covariances and tests). Working design Z:
    //   Z_j = (X_j - shift[j] * X_c) / scale[j]   (c = intercept_column; shift[c] = 0)
    // i.e. columns centred against the intercept column and scaled to unit length.
    // Z = Q R with R upper-triangular K x K (Q is not stored; on the Gram route R is the
    // Cholesky factor of Z'Z, the same R up to row signs). Then
    // (X'X)^-1 = M^-1 (R'R)^-1 M^-T with X = Z M.
    Eigen::VectorXd shift;              // K
    Eigen::VectorXd scale;              // K
    Eigen::MatrixXd r_factor;           // K x K
    Eigen::MatrixXd xtx_inverse;        // K x K, (X'X)^-1 in the original scale

    // Where each equation row comes from.
    std::vector<std::size_t> input_row; // 0-based input row (fd: later row; between: first used row of the unit)
    std::vector<std::int32_t> unit;     // unit number (PanelIndex numbering)
    std::vector<std::int32_t> period;   // grid position (fd: the later period; between: -1)
    std::size_t n_units = 0;            // distinct units among the equation rows
    std::size_t n_periods = 0;          // distinct periods among the equation rows
    std::size_t absorbed = 0;           // effects absorbed by the transform, counted in df (within: n_units)
    Eigen::VectorXd weights;            // N equation-row weights of a weighted fit (X, y, residual,
                                        // fitted are then scaled by sqrt(w)); empty: unweighted

    // A lean equation (fit_model_lean) holds no per-row arrays: X has 0 rows (but its K
    // columns), y, residual, fitted, input_row, unit and period are empty, and
    // lean_rows gives N. Everything else (terms, coef, ssr, shift, scale, r_factor,
    // xtx_inverse, n_units, n_periods, absorbed) is as for a full equation.
    std::size_t lean_rows = 0;
    bool rows_held() const { return lean_rows == 0; }

    std::size_t nobs() const { return rows_held() ? static_cast<std::size_t>(X.rows()) : lean_rows; }
    std::size_t n_terms() const { return static_cast<std::size_t>(X.cols()); }
    // N - K - absorbed
    double df_residual() const {
        return static_cast<double>(nobs()) - static_cast<double>(n_terms()) - static_cast<double>(absorbed);
    }
};

// Input of solve_equation(): an explicit design. unit/period may be empty (then
// cluster/period covariances raise weft::Error); if given they have N entries.
struct EquationInput {
    Estimator estimator = Estimator::pooled;   // only used for labels
    Eigen::MatrixXd X;
    Eigen::VectorXd y;
    std::vector<std::string> terms;            // K names (empty: "x1", "x2", ...)
    int intercept_column = -1;
    std::vector<std::size_t> input_row;
    std::vector<std::int32_t> unit;
    std::vector<std::int32_t> period;
    std::size_t absorbed = 0;
};

// OLS through weft's solver (centring, scaling, Gram or tall-skinny QR, in-order rank decision,
// refinement). Collinear columns are dropped and listed in Equation::dropped.
// Throws weft::Error if there are fewer rows than kept terms or no rows.
Equation solve_equation(EquationInput input);

// h_ii = x_i' (X'X)^-1 x_i for every equation row (computed as ||R^-T z_i||^2).
Eigen::VectorXd leverages(const Equation& equation);

struct CovarianceResult {
    Covariance kind = Covariance::classical;
    Eigen::MatrixXd matrix;             // K x K, in term order
    double factor = 1;                  // finite-sample factor applied (hc1, CR1, ...)
    std::string factor_rule;            // e.g. "G/(G-1) * (N-1)/(N-K)"
    double df = 0;                      // df for t, F and intervals
    std::string df_rule;                // "N-K", "N-n-K", "G-1", "T-1", ...
    std::size_t clusters = 0;           // G (unit), G_period, G_min (both), T (dk)
    int dk_lag = -1;                    // lag used (dk only)
    bool clipped = false;               // cluster_both: negative eigenvalues set to 0
                                        // (decided by kClipTolerance)
    double min_eigenvalue = 0;          // cluster_both: smallest eigenvalue before clipping
    double min_scaled_eigenvalue = 0;   // cluster_both: the same in the scaled basis, relative
                                        // to the largest (tolerances.hpp); it decides clipping
    std::vector<std::string> warnings;
    std::string label;                  // readable, e.g. "cluster by unit (CR1)"
    std::vector<double> term_df;        // cr2: Satterthwaite df per term (term order; df is
                                        // then the smallest); empty for the others
};

// Any covariance of an estimated equation (CONVENTIONS.md "Standard errors").
// dk_lag -1 = default floor(T^(1/4)). Throws weft::Error for fewer than 2 clusters or
// when the equation has no units/periods for the requested clustering.
CovarianceResult compute_covariance(const Equation& equation, Covariance kind, int dk_lag = -1);

struct RandomEffectsInfo {
    double sigma2_idiosyncratic = 0;    // SSR_within / (N - n - K_w)
    double sigma2_unit = 0;             // Swamy-Arora, negative set to 0 (with a warning)
    std::vector<double> theta_by_unit;  // per unit number (0 for units not in the equation)
    bool balanced = true;
};

// The model's joint test of all regressors (CONVENTIONS.md "The model's joint test of all
// regressors"): the Wald test that every regressor's coefficient is 0 (not the intercept,
// not period indicators) under the fit's own covariance, F on (q, the covariance's df);
// under cr2 the HTZ F. Computed by spec_joint.cpp.
struct JointTest {
    std::vector<std::string> terms;     // the regressors tested
    bool available = false;
    std::string reason;                 // why not, when not available (a sentence)
    double f = 0, df1 = 0, df2 = 0, p = 1;      // F form (cr2: HTZ)
    double chi2 = 0, chi2_p = 1;                // W on q df
    std::string df_rule;                // e.g. "G-1"
};

struct Fit {
    ModelSpec spec;
    Equation equation;
    std::vector<DroppedTerm> dropped;   // = equation.dropped, with the estimator's own reasons
    CovarianceResult covariance;

    // per term, in Equation::terms order
    Eigen::VectorXd coef, se, t, p, ci_low, ci_high;

    // summary facts
    std::size_t rows_input = 0;         // input rows
    std::size_t rows_used = 0;          // input rows used (levels rows)
    std::size_t rows_dropped = 0;       // rows dropped for a missing value (listwise; a blank weight too)
    std::size_t rows_zero_weight = 0;   // rows left out because their weight is 0 (not in rows_used)
    std::size_t nobs = 0;               // equation rows N (fd: differences; between: units)
    std::size_t n_units = 0;
    std::size_t n_periods = 0;
    std::size_t n_terms = 0;            // K
    double df_residual = 0;             // N - K (within: N - n - K)
    double ssr = 0;
    double sigma = 0;                   // sqrt(ssr / df_residual)
    std::optional<double> tss;          // of the estimated equation's y (centred, or uncentred without intercept; within: sum (y - ybar_i)^2)
    std::optional<double> r2;           // 1 - ssr/tss (within: = corr2_deviations)
    std::optional<double> adj_r2;
    std::optional<double> corr2_deviations;    // within, random (random: corr^2 of demeaned y and demeaned X b)
    std::optional<double> corr2_means;   // within, random: corr^2(ybar_i, xbar_i' b) over units (empty when weighted)
    std::optional<double> corr2_rows;   // within, random: corr^2(y_it, x_it' b) over rows (empty when weighted)
    std::optional<double> f, f_df1, f_df2, f_p;  // classical F of all terms but the intercept
                                                 // (period indicators included)
    std::optional<JointTest> joint;     // the model's joint test (empty: no regressor term)
    std::string f_rule;
    std::optional<RandomEffectsInfo> random_effects;
    std::vector<double> unit_effects;   // within: ybar_i - xbar_i' b per unit number, weighted unit means
                                        // when weighted (empty otherwise)
    bool exact_fit = false;             // every residual 0 to rounding (SSR <= 1e-28 y'y): se = 0,
                                        // t and p NaN (not defined), F empty, and a warning
    std::vector<std::string> warnings;

    Series residuals;                   // aligned to input rows
    Series fitted;                      // fitted values of the estimated equation, aligned

    PanelIndex index;

    // Position of a term in Equation::terms, or empty.
    std::optional<std::size_t> term_position(std::string_view name) const;
};

Fit fit_model(const PanelData& data, const ModelSpec& spec);

// The same Fit as fit_model, computed where possible in streaming passes over the
// columns that never hold the estimated equation's rows: pooled and fd without period
// indicators, covariance classical, hc0, hc1, cluster, cluster0, cluster-period or dk,
// a well-conditioned design (the solver's Gram route) with no term to drop. Its
// Fit::equation is then lean (Equation::rows_held() is false); Fit::residuals and
// Fit::fitted are filled as always. Anywhere else it is fit_model(data, spec). The tests
// that need the equation's rows (heteroskedasticity, serial correlation, unit effects,
// another covariance of the same equation) take a fit_model result. Estimates agree with
// fit_model's to rounding (the same solver steps, accumulated in another order).
Fit fit_model_lean(const PanelData& data, const ModelSpec& spec);

}  // namespace weft
