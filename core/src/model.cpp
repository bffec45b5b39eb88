// fit_model and fit_model_lean: the stages of a fit in order (fit_stages.hpp lists
// where each stage lives; CONVENTIONS.md "Estimators" is the specification):
//   choose rows (and weights) -> form the estimator's equation (weighted: its rows times
//   sqrt(w)) -> accumulate and solve (full route:
//   solve_equation; streaming route: lean_equation) -> scores and covariance ->
//   inference and fit statistics.
#include <cmath>
#include <string>

#include "weft/error.hpp"
#include "weft/model.hpp"
#include "fit_stages.hpp"

namespace weft {

std::optional<std::size_t> Fit::term_position(std::string_view name) const {
    for (std::size_t k = 0; k < equation.terms.size(); ++k)
        if (equation.terms[k] == name) return k;
    return std::nullopt;
}

namespace {

using detail::Design;

// Fewer rows than terms, or no terms at all: refused before solving, in words.
void check_design_size(const Design& design, Estimator estimator) {
    const EquationInput& in = design.input;
    const std::size_t N = static_cast<std::size_t>(in.X.rows());
    const std::size_t K = static_cast<std::size_t>(in.X.cols());
    if (K == 0)
        throw Error(std::string(to_word(estimator)) + ": no terms left to estimate" +
                    (design.dropped.empty() ? std::string() : " (" + design.dropped.front().message + ")") +
                    "; give at least one regressor" +
                    (estimator == Estimator::within || estimator == Estimator::fd ? " that varies within units"
                                                                                    : ""));
    if (N <= K + in.absorbed)
        throw Error(std::string(to_word(estimator)) + ": the estimated equation has " + std::to_string(N) +
                    " rows for " + std::to_string(K) + " terms" +
                    (in.absorbed ? " and " + std::to_string(in.absorbed) + " unit effects" : std::string()) +
                    "; it needs more rows than terms");
}

// The size facts of a solved equation (nobs, K, df, SSR, sigma).
void record_size(Fit& fit) {
    const Equation& eq = fit.equation;
    fit.nobs = eq.nobs();
    fit.n_terms = eq.n_terms();
    fit.df_residual = eq.df_residual();
    fit.ssr = eq.ssr;
    fit.sigma = std::sqrt(eq.ssr / fit.df_residual);
}

// Stages "accumulate and solve" and "scores and covariance", full route: the design
// through solve_equation (the terms the builder dropped listed first), then the
// covariance of spec.covariance (compute_covariance: every standard-error family is a
// meat over the scores there).
detail::OutcomeSums solve_full(Design design, Fit& fit) {
    const ModelSpec& spec = fit.spec;
    check_design_size(design, spec.estimator);
    fit.equation = solve_equation(std::move(design.input));
    Equation& eq = fit.equation;
    eq.weights = std::move(design.weights);
    fit.dropped = design.dropped;
    fit.dropped.insert(fit.dropped.end(), eq.dropped.begin(), eq.dropped.end());
    eq.dropped = fit.dropped;
    if (!(eq.df_residual() > 0))
        throw Error(std::string(to_word(spec.estimator)) + ": after dropping collinear terms the equation has " +
                    std::to_string(eq.nobs()) + " rows for " + std::to_string(eq.n_terms()) + " terms" +
                    (eq.absorbed ? " and " + std::to_string(eq.absorbed) + " unit effects" : std::string()) +
                    "; it needs more rows than terms");
    record_size(fit);
    fit.covariance = compute_covariance(eq, spec.covariance, spec.dk_lag);
    return eq.weights.size() != 0 ? detail::weighted_outcome_sums(eq) : detail::outcome_sums(eq.y);
}

// The same stages, streaming route (lean.cpp): the equation rows, then accumulation,
// solution and the covariance's score sums in passes over the columns. Empty when this
// fit needs the full route.
// within: the unit means (lean_units.cpp) go with it and stay in `means` for the level
// statistics.
std::optional<detail::OutcomeSums> solve_streaming(const detail::Context& ctx, Fit& fit, std::size_t& pairs_lost,
                                                   detail::UnitMeans& means) {
    const detail::LeanRows rows = detail::lean_rows(ctx);
    pairs_lost = rows.pairs_lost;
    if (rows.count == 0) return std::nullopt;
    detail::LeanInput in{ctx.data, ctx.spec, ctx.index, ctx.regressor_names};
    if (ctx.spec.estimator == Estimator::within) {
        if (!rows.sorted || rows.units < 2) return std::nullopt;   // one unit: the full route words it
        // input sorted by unit: the first pass finds the means block by block, as it
        // reads (no pass of its own); else one pass for them first
        const bool on_the_way = ctx.index.in_input_order;
        means = detail::lean_unit_means(ctx, rows.is_row, !on_the_way);
        if (on_the_way && !detail::units_fit_blocks(means)) means = detail::lean_unit_means(ctx, rows.is_row);
        else in.unit_means_pending = on_the_way;
        in.unit_means = &means.means;
        in.absorbed = means.units;
    }
    if (rows.sorted) {
        in.is_row = &rows.is_row;
    } else {
        in.later = &rows.later;
        if (ctx.spec.estimator == Estimator::fd) in.earlier = &rows.earlier;
    }
    in.count = rows.count;
    in.units_in_order = rows.units_in_order;
    in.units = rows.units;
    in.periods = rows.periods;
    in.regressors = &ctx.regressors;
    in.weights = ctx.weights;
    std::optional<detail::LeanResult> result = detail::lean_equation(in);
    if (!result) return std::nullopt;
    fit.equation = std::move(result->equation);
    fit.covariance = std::move(result->covariance);
    fit.residuals = std::move(result->residuals);
    fit.fitted = std::move(result->fitted);
    record_size(fit);
    return result->outcome;
}

// between, streaming: the unit means in one pass over the used rows (lean_units.cpp),
// then the full route's solution and covariance of that small design.
std::optional<detail::OutcomeSums> solve_between_streaming(const detail::Context& ctx, Fit& fit) {
    const detail::LeanRows rows = detail::lean_rows(ctx);
    if (rows.count == 0 || !rows.sorted) return std::nullopt;
    const detail::UnitMeans means = detail::lean_unit_means(ctx, rows.is_row);
    const detail::OutcomeSums ysums = solve_full(detail::between_from_means(ctx, means), fit);
    detail::between_series(rows.is_row, ctx.index, fit);
    return ysums;
}

void warn_fd_gaps(Fit& fit, std::size_t pairs_lost) {
    if (fit.spec.estimator == Estimator::fd && pairs_lost > 0)
        fit.warnings.push_back("fd: " + std::to_string(pairs_lost) +
                               (pairs_lost == 1 ? " difference was" : " differences were") +
                               " not formed because a unit skips a period of the grid");
}

}  // namespace

// The whole fit. lean: take the streaming route (lean.cpp) or return nothing; that route
// checks the values itself (no NaN or infinity outside the masks) as it reads them, and
// any error on it is left to the full route to find and word.
static std::optional<Fit> fit_model_impl(const PanelData& data, const ModelSpec& spec, bool lean) {
    // ---- choose rows
    detail::check_inputs(data, spec, lean);
    Fit fit;
    fit.spec = spec;
    const detail::WeightSource weights = detail::weight_source(data, spec);
    fit.index = build_index(data.units, data.periods, data.first_row_number);
    const detail::RowChoice choice = detail::choose_rows(data, fit.index, weights, fit);
    const detail::Context ctx = detail::make_context(data, spec, fit.index, choice.used, weights);
    fit.weighted = weights.column != nullptr;

    // ---- form the equation, accumulate and solve, scores and covariance
    std::vector<std::size_t> rows;   // full route: the used rows in unit order, by unit
    detail::UnitRuns runs;
    detail::OutcomeSums ysums;
    detail::UnitMeans means;         // streaming within: the unit means
    if (lean) {
        if (!detail::lean_applies(spec)) return std::nullopt;
        // weighted: only pooled and fd stream (within and between take the full route)
        if (fit.weighted && spec.estimator != Estimator::pooled && spec.estimator != Estimator::fd)
            return std::nullopt;
        std::size_t pairs_lost = 0;
        std::optional<detail::OutcomeSums> sums = spec.estimator == Estimator::between
                                                      ? solve_between_streaming(ctx, fit)
                                                      : solve_streaming(ctx, fit, pairs_lost, means);
        if (!sums) return std::nullopt;
        warn_fd_gaps(fit, pairs_lost);
        ysums = *sums;
    } else {
        rows = detail::used_rows_in_order(ctx);
        runs = detail::unit_runs(fit.index, rows);
        Design design = detail::form_equation(ctx, rows, runs, fit);
        detail::weigh_equation(ctx, rows, runs, design);   // weighted: rows times sqrt(w)
        warn_fd_gaps(fit, design.pairs_lost);
        ysums = solve_full(std::move(design), fit);
    }

    // ---- inference and fit statistics (everything after the covariance reads the
    // fitted equation and fit.covariance only)
    detail::term_inference(fit, ysums);
    detail::fit_statistics(fit, ysums);
    detail::joint_statistics(fit);
    if (lean && spec.estimator == Estimator::within)
        detail::lean_level_statistics(means, ysums, fit);
    else if (spec.estimator == Estimator::within || spec.estimator == Estimator::random)
        detail::level_statistics(ctx, rows, runs, fit);
    // aligned residuals and fitted values (a lean fit has them already)
    if (!lean) {
        detail::aligned_series(rows, runs, data.outcome.size(), fit);
        detail::unweigh_series(rows, runs, fit);
    }
    return fit;
}

Fit fit_model(const PanelData& data, const ModelSpec& spec) { return *fit_model_impl(data, spec, false); }

Fit fit_model_lean(const PanelData& data, const ModelSpec& spec) {
    if (detail::lean_applies(spec)) {
        try {
            if (std::optional<Fit> fit = fit_model_impl(data, spec, true)) return std::move(*fit);
        } catch (const Error&) {
            // the full route below finds the same problem and words it
        }
    }
    return fit_model(data, spec);
}

}  // namespace weft
