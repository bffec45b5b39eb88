// The stages of a fit (ARCHITECTURE.md "The fit as stages"), internal to weft_core.
//
//   choose rows          fit_rows.cpp       choose_rows, equation_row_order, fd_pairs
//   weights              fit_weights.cpp    weight_source, weigh_rows (rows), weigh_equation
//                                           (rows of the formed equation times sqrt(w))
//   form the equation    fit_equations.cpp  form_equation: one builder per estimator
//   accumulate + solve   solver.cpp         full route: solve_equation (Gram or TSQR)
//                        lean.cpp           streaming route: lean_equation (blocks)
//                        lean_units.cpp     streaming route, within and between: unit
//                                           means in one pass (lean_equation takes them
//                                           off each row; between solves their design)
//   scores and meats     covariance.cpp     compute_covariance (full), the lean score
//                                           pass (lean.cpp); both end in covariance_from_meat
//   inference, fit stats fit_inference.cpp  term_inference, fit_statistics, aligned_series
//
//   over partitions    merge_*.cpp        the same stages per partition of whole units,
//                                           merged (weft/merge.hpp)
//
// model.cpp runs them in order (fit_model, fit_model_lean). A new capability is a new
// stage or a new implementation of one, not a branch inside another.
#pragma once

#include <cstddef>
#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "weft/model.hpp"
#include "internal.hpp"

namespace weft::detail {

// ---- choose rows
// The rows a fit uses: listwise (a missing outcome, regressor, unit or period drops the
// row). Fills fit.rows_input, rows_used, rows_dropped, n_units, n_periods; throws for
// no usable rows (naming a column that is missing everywhere).
struct RowChoice {
    std::vector<std::uint8_t> used;    // per input row
    std::size_t rows_used = 0;
};

// ---- weights (fit_weights.cpp)
// Where a fit's weights come from (PanelData::weights, or the regressor that
// ModelSpec::weights names, then taken out of the regressors) and the regressors of the
// equation. Throws for an unknown name, weights given twice, or an estimator
// that has no weighted definition (random), in words.
struct WeightSource {
    const Column* column = nullptr;               // null: unweighted
    std::string label;                            // "weights \"pop\"", for messages
    std::vector<const Column*> regressors;        // the equation's regressors, in input order
    std::vector<std::string> names;               // their names (header, or x<k>)
};
WeightSource weight_source(const PanelData& data, const ModelSpec& spec);

// Rows of `used` that the weights leave out: a blank weight clears the row (it counts
// with the missing rows), a zero clears it and is counted (the return value); a negative
// or non-finite weight throws, naming the row. A function of its own so that a host
// that splits the rows (a partitioned fit) can call it per part.
std::size_t weigh_rows(const Column& weights, const std::string& label, std::size_t first_row_number,
                       std::vector<std::uint8_t>& used);

// Checks the columns (lean: shapes only; the streaming route checks values as it reads)
// and the level.
void check_inputs(const PanelData& data, const ModelSpec& spec, bool lean);
RowChoice choose_rows(const PanelData& data, const PanelIndex& index, const WeightSource& weights, Fit& fit);

// What the stages after row choice read.
struct Context {
    const PanelData& data;
    const ModelSpec& spec;
    const PanelIndex& index;
    const std::vector<std::uint8_t>& used;        // per input row
    std::vector<std::string> regressor_names;     // header, or x<k>
    std::size_t k_reg = 0;
    std::vector<const Column*> regressors;        // k_reg columns (the weight column is not one)
    const Column* weights = nullptr;              // null: unweighted
};
Context make_context(const PanelData& data, const ModelSpec& spec, const PanelIndex& index,
                     const std::vector<std::uint8_t>& used, const WeightSource& weights);

// The used rows in unit-period order (the equation rows of pooled, within, random; the
// rows averaged by between).
std::vector<std::size_t> used_rows_in_order(const Context& ctx);

// Per-unit ranges inside a list of rows in unit order.
struct UnitRuns {
    std::vector<std::size_t> begin;   // per run
    std::vector<std::size_t> end;
    std::vector<std::int32_t> unit;
};
UnitRuns unit_runs(const PanelIndex& index, const std::vector<std::size_t>& rows);

// The differences of fd: per unit, consecutive used rows in adjacent grid periods
// (later row, earlier row); consecutive used rows with a grid period between them are
// counted in pairs_lost_to_gaps.
void fd_pairs(const Context& ctx, std::vector<std::size_t>& later, std::vector<std::size_t>& earlier,
              std::size_t& pairs_lost_to_gaps);

// ---- form the equation
// What an estimator's builder hands to the solver, plus what it dropped itself.
struct Design {
    EquationInput input;
    std::vector<DroppedTerm> dropped;
    std::size_t pairs_lost = 0;        // fd: differences not formed because of a gap
    Eigen::VectorXd weights;           // weighted: the equation-row weights (weigh_equation)
};

// The estimated equation of ctx.spec.estimator over `rows` (used rows in unit order,
// with their runs). random also sets fit.random_effects and may add warnings.
Design form_equation(const Context& ctx, const std::vector<std::size_t>& rows, const UnitRuns& runs, Fit& fit);

// ---- weights on the formed equation (fit_weights.cpp)
// The weight of each equation row (pooled, within: the row's; fd: the later row's;
// between: the mean over the unit's rows).
Eigen::VectorXd equation_weights(const Context& ctx, const std::vector<std::size_t>& rows, const UnitRuns& runs,
                                 const EquationInput& in);
// Weighted fit: sets design.weights and scales the rows of X and y by sqrt(w) (every
// covariance family then follows); unweighted: nothing.
void weigh_equation(const Context& ctx, const std::vector<std::size_t>& rows, const UnitRuns& runs,
                    Design& design);
// Sums of a weighted equation's outcome: raw sum w y^2, centred sum w (y - ybar_w)^2.
OutcomeSums weighted_outcome_sums(const Equation& eq);
// Aligned residuals and fitted values of a weighted fit back to the outcome's units.
void unweigh_series(const std::vector<std::size_t>& rows, const UnitRuns& runs, Fit& fit);

// ---- the streaming route's rows (lean.cpp reads them)
// The equation rows of a lean fit, as LeanInput wants them; the LeanInput itself points
// into this object. Empty (count 0) when there are none.
struct LeanRows {
    std::vector<std::uint8_t> is_row;
    std::vector<std::size_t> later, earlier;
    std::size_t count = 0, units = 0, periods = 0, pairs_lost = 0;
    bool sorted = false;          // is_row marks the equation rows (else later, earlier list them)
    bool units_in_order = true;   // the equation rows come with unit numbers that never decrease
};
LeanRows lean_rows(const Context& ctx);

// ---- the streaming route's unit sums (lean_units.cpp): within and between
// The means of [X, y] (columns: the regressors, then y) per unit number over the rows
// is_row marks, read in input order; units without such rows have count 0.
struct UnitMeans {
    UnitMeansMatrix means;                 // (units + 1) x (regressors + 1), the last row zeros
    std::vector<std::size_t> count;        // rows per unit
    std::vector<std::size_t> first_row;    // per unit: its row in its earliest period
    std::size_t units = 0;                 // units with rows
};
// sums_too false: the counts and first rows only, the means left at 0 (for the streaming
// within to fill as it reads, LeanInput::unit_means_pending).
UnitMeans lean_unit_means(const Context& ctx, const std::vector<std::uint8_t>& is_row, bool sums_too = true);
// Whether every unit has at most kLeanBlockRows rows (the streaming within can then find
// its means block by block in input sorted by unit).
bool units_fit_blocks(const UnitMeans& means);
// within, streaming: corr2_rows, corr2_means and the unit effects from the unit
// means, the within outcome's sums and the fitted equation.
void lean_level_statistics(const UnitMeans& means, const OutcomeSums& ysums, Fit& fit);
// between, streaming: the full route's design of unit means, from the sums.
Design between_from_means(const Context& ctx, const UnitMeans& means);
// between: every used row gets its unit's residual and fitted value.
void between_series(const std::vector<std::uint8_t>& is_row, const PanelIndex& index, Fit& fit);

// ---- inference and fit statistics
// Per-term se, t, p and intervals from fit.covariance at fit.spec.level (df from the
// covariance), and the exact-fit rule (every residual 0 to rounding: se 0, t and p NaN).
void term_inference(Fit& fit, const OutcomeSums& ysums);
// tss, R-squared, adjusted R-squared, the classical F on all slopes.
void fit_statistics(Fit& fit, const OutcomeSums& ysums);
// The model's joint test of all regressors under its own covariance (spec_joint.cpp).
void joint_statistics(Fit& fit);
// within, random: R-squared variants from the slopes at levels; within: unit effects.
void level_statistics(const Context& ctx, const std::vector<std::size_t>& rows, const UnitRuns& runs, Fit& fit);
// Residuals and fitted values aligned to the input rows (between: every used row of a
// unit carries the unit's value).
void aligned_series(const std::vector<std::size_t>& rows, const UnitRuns& runs, std::size_t n_rows, Fit& fit);

// "period <value>" for a grid position.
std::string period_term(const PanelIndex& index, std::int32_t position);

}  // namespace weft::detail
