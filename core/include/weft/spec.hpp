// weft/spec.hpp -- specification tests on a fitted model.
//
// Contract (CONVENTIONS.md "Tests" is the statistical specification):
// - Every test works on a fitted model (weft::Fit) and reuses what the fit already holds:
//   the estimated equation (design, residuals, fitted values, unit and grid period of
//   every row), its factorisation and its covariance. Nothing is refitted; a test that
//   needs another regression (the auxiliary regressions of the heteroskedasticity,
//   serial and robust Hausman tests, the pooled comparator of the effects test) runs
//   it through weft's own solver, solve_equation().
// - Results are plain structs. Statistics are always finite numbers; a part that does
//   not apply is an empty std::optional (never NaN). Outcomes that are numerical, not
//   errors (a variance difference that is not positive definite, aliased auxiliary
//   terms) are reported in the result's fields and warnings.
// - Bad input raises weft::Error with a message that says what is wrong and what to do:
//   a term the model does not estimate (named, and whether it was dropped), a test that
//   does not apply to the estimator (serial test with one period per unit or on
//   between, Hausman without a within and a random fit on the same rows, effects test
//   on a model that is not within), too few rows for an auxiliary regression.
// - p-values are upper tails computed as complements (weft/distributions.hpp).
//
// Stability: fields may be added; existing names and meanings do not change.
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include <Eigen/Core>

#include "weft/model.hpp"
#include "weft/options.hpp"
#include "weft/panel.hpp"

namespace weft {

// ---- Wald tests ------------------------------------------------------------------------

// W = (R b - r)' (R V R')^-1 (R b - r), reported as chi-square(q) and as F = W / q on
// (q, df) with df the inference df of the covariance used (CONVENTIONS.md: N-K, N-n-K,
// G-1, T-1).
struct WaldResult {
    std::vector<std::string> terms;  // terms tested (terms form), empty for a general R
    double chi2 = 0;                 // W
    double chi2_df = 0;              // q
    double chi2_p = 1;               // upper tail of chi-square(q)
    double f = 0;                    // W / q
    double f_df1 = 0;                // q
    double f_df2 = 0;                // df of the covariance
    double f_p = 1;                  // upper tail of F(q, df)
    std::string covariance_label;    // e.g. "cluster by unit (CR1)"
    std::string df_rule;             // e.g. "G-1"
    double f_scale = 1;              // F = f_scale * W / q (cr2: the HTZ factor (nu-q+1)/nu)
};

// R b = r under an explicit covariance V (K x K) with inference df `df`. R is q x K with
// q >= 1. Throws weft::Error when the sizes disagree or R V R' is singular (e.g. a
// clipped two-way covariance with no variance left in the tested direction).
WaldResult wald_test(const Eigen::VectorXd& coef, const Eigen::MatrixXd& covariance,
                     double df, const Eigen::MatrixXd& restriction,
                     const Eigen::VectorXd& value);

// R b = r under the fit's own covariance (whatever its family).
WaldResult wald_test(const Fit& fit, const Eigen::MatrixXd& restriction,
                     const Eigen::VectorXd& value);

// The named terms are all zero, under the fit's own covariance (WEFT.JOINT). Throws
// weft::Error for an empty list, a name given twice, or a name the model does not
// estimate (the message says whether the term was dropped and lists the model's terms).
WaldResult wald_test_terms(const Fit& fit, const std::vector<std::string>& terms);

// "wage_a, wage_b" -> {"wage_a", "wage_b"}: split at commas, trim spaces; empty names
// are skipped.
std::vector<std::string> split_term_list(std::string_view text);

// ---- heteroskedasticity ----------------------------------------------------------------

enum class HeteroForm {
    koenker,        // studentized Breusch-Pagan (Koenker 1981): N R^2 of u^2 on [1, Z]
    bp,             // original Breusch-Pagan (1979): ESS/2 of u^2/(SSR/N) - 1 on [1, Z]
    white_special,  // White (1980) on [1, yhat, yhat^2]
    white_full      // White (1980) on [1, Z, squares and cross products of Z]
};

// "koenker", "bp", "white-special", "white-full" (case-insensitive); the empty text
// gives koenker. Throws weft::Error naming the word and listing the accepted ones.
HeteroForm parse_hetero_form(std::string_view word);
const char* to_word(HeteroForm form);

// Z = every column of the estimated equation except the intercept column (within: the
// demeaned columns; random: the quasi-demeaned ones without the 1 - theta column; fd:
// the differenced ones, period indicators included).
struct HeteroResult {
    HeteroForm form = HeteroForm::koenker;
    double lm = 0;          // koenker/white: N R^2; bp: ESS/2
    double lm_df = 0;       // q = auxiliary terms kept, intercept not counted
    double lm_p = 1;        // upper tail of chi-square(q)
    double f = 0;           // (R^2/q) / ((1-R^2)/(N-q-1)) of the auxiliary regression (for bp
                            // too: u^2/(SSR/N) - 1 is affine in u^2, so its R^2 is the same)
    double f_df1 = 0;       // q
    double f_df2 = 0;       // N - q - 1
    double f_p = 1;         // upper tail of F(q, N-q-1)
    double aux_r2 = 0;      // R^2 of u^2 on the auxiliary columns (same for koenker and bp)
    std::size_t aux_terms = 0;    // auxiliary columns offered, intercept not counted
    std::size_t aux_dropped = 0;  // of those, dropped as collinear (white-full squares of indicators)
    std::vector<std::string> warnings;
};

// Throws weft::Error when the auxiliary regression has no more rows than columns
// (white-full with many regressors: the message suggests white-special).
HeteroResult hetero_test(const Fit& fit, HeteroForm form = HeteroForm::koenker);
HeteroResult hetero_test(const Equation& equation, HeteroForm form = HeteroForm::koenker);

// ---- serial correlation ----------------------------------------------------------------

// The test of no serial correlation in the level errors (Wooldridge 2010, sections
// 10.5.4 and 10.6.3): H0 slope = null_value with a cluster-by-unit (CR1, K = 2) SE,
// F = ((slope - null_value)/se)^2 on (1, G-1).
struct LevelErrorTest {
    double null_value = 0;   // fd: -0.5; within: -1/(T-1), T = periods in the equation
    double se = 0;           // CR1 by unit of the slope
    double se_cluster0 = 0;  // CR0 by unit (the form whose F is on (1, pairs-2))
    double f = 0;
    double f_df1 = 1;
    double f_df2 = 0;        // G - 1
    double f_p = 1;
    std::string rule;        // "fd: slope -0.5" / "within: slope -1/(T-1), T = 20"
};

struct SerialResult {
    // OLS of u_it on [1, u_i,t-1], t-1 the previous grid period of the same unit (pairs
    // across a gap do not exist); classical SE, t on pairs - 2 df.
    double intercept = 0;
    double slope = 0;
    double se = 0;
    double t = 0;
    double df = 0;           // pairs - 2
    double p = 1;            // two-sided
    std::size_t pairs = 0;
    std::size_t units = 0;   // units contributing a pair (the clusters G)
    std::optional<LevelErrorTest> level;  // fd and within only
    std::vector<std::string> warnings;
};

// Throws weft::Error for between (one row per unit), when no unit has two adjacent
// periods in the estimated equation, or with fewer than 3 pairs or 2 units.
SerialResult serial_test(const Fit& fit);
SerialResult serial_test(const Equation& equation);

// ---- Hausman ---------------------------------------------------------------------------

struct HausmanResult {
    std::vector<std::string> terms;   // slopes compared (regressors common to both fits)
    Eigen::VectorXd difference;       // b_within - b_random over terms
    double statistic = 0;             // raw H, never its absolute value (may be negative)
    double df = 0;                    // number of slopes compared; when V_within - V_random is
                                      // singular, its rank (the statistic then uses the
                                      // generalised inverse over the non-null eigenvalues)
    double p = 1;                     // upper tail of chi-square(df) at H (1 if H <= 0)
    std::size_t rank = 0;             // rank of V_within - V_random, decided in its scaled
                                      // basis (kHausmanRankTolerance, tolerances.hpp)
    bool positive_definite = false;
    std::vector<double> eigenvalues;  // of V_within - V_random, descending
    // Mundlak (1978) auxiliary regression (Wooldridge 2010 section 10.7.3): unit means of
    // the compared regressors, times (1 - theta_i), added to the random-effects equation;
    // Wald test that their coefficients are zero.
    WaldResult robust;                // cluster by unit (CR1, K = all columns), F on (q, G-1)
    WaldResult auxiliary_classical;   // classical covariance, F on (q, N-K)
    std::vector<std::string> warnings;
};

// Contrast two fits of the same rows: `within` (estimator within) and `random`
// (estimator random), with the same period effects. The classical form uses classical
// covariances of both (the fits' own when they are classical, otherwise computed from
// their factorisations). Throws weft::Error when the estimators are not within and
// random, the rows differ, or no slope is common to both.
HausmanResult hausman_test(const Fit& within, const Fit& random);

// Fit within and random to the data with spec (its estimator and covariance are
// ignored; both fits use classical covariances) and contrast them.
HausmanResult hausman_test(const PanelData& data, const ModelSpec& spec);

// ---- unit effects ----------------------------------------------------------------------

// F = ((SSR_pooled - SSR_within)/(df_pooled - df_within)) / (SSR_within/df_within), the
// pooled comparator an OLS with intercept, the same regressors and the same period
// indicators on the same rows.
struct EffectsResult {
    double f = 0;
    double df1 = 0;          // df_pooled - df_within (n - 1 unless a regressor is time-invariant)
    double df2 = 0;          // N - n - K
    double p = 1;
    double ssr_pooled = 0;
    double ssr_within = 0;
    std::vector<std::string> warnings;
};

// `within` must be a within fit and `pooled` a pooled fit with intercept of the same
// rows and period effects. Throws weft::Error otherwise.
EffectsResult effects_test(const Fit& within, const Fit& pooled);

// Fit within and pooled (with intercept) to the data with spec's period effects (its
// estimator and covariance are ignored) and compare.
EffectsResult effects_test(const PanelData& data, const ModelSpec& spec);

}  // namespace weft
