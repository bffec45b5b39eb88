// Stage "form the equation" of a fit (fit_stages.hpp): the estimated equation of each
// estimator (CONVENTIONS.md "Estimators") as an explicit design for the solver.
#include <cmath>
#include <limits>
#include <string>

#include <Eigen/Dense>

#include "weft/error.hpp"
#include "fit_stages.hpp"

namespace weft::detail {

using Eigen::Index;
using Eigen::MatrixXd;
using Eigen::VectorXd;

std::string period_term(const PanelIndex& index, std::int32_t position) {
    return "period " + format_number(index.grid[static_cast<std::size_t>(position)]);
}

namespace {

double value(const Column& column, std::size_t row) { return column.value(row); }

// Grid positions present among the given periods, sorted; the reference (first) is
// removed when `omit_reference`.
std::vector<std::int32_t> period_columns(const std::vector<std::int32_t>& periods, std::size_t grid_size,
                                         bool omit_reference) {
    std::vector<std::uint8_t> present(grid_size, 0);
    for (std::int32_t p : periods) present[static_cast<std::size_t>(p)] = 1;
    std::vector<std::int32_t> out;
    for (std::size_t g = 0; g < grid_size; ++g)
        if (present[g]) out.push_back(static_cast<std::int32_t>(g));
    if (omit_reference && !out.empty()) out.erase(out.begin());
    return out;
}

void fill_ids(const Context& ctx, const std::vector<std::size_t>& rows, EquationInput& in) {
    in.input_row = rows;
    in.unit.resize(rows.size());
    in.period.resize(rows.size());
    for (std::size_t k = 0; k < rows.size(); ++k) {
        in.unit[k] = ctx.index.unit_of_row[rows[k]];
        in.period[k] = ctx.index.period_of_row[rows[k]];
    }
}

// The shape shared by the levels design (pooled, random) and the unit-means design
// (between, random): n rows of [intercept, regressors, period columns pcols] and y.
// column(j, out) writes regressor j, period(p, out) the indicator of grid period p,
// outcome(out) y.
template <typename RegressorColumn, typename PeriodColumn, typename Outcome>
void fill_design(const Context& ctx, Index n, bool intercept, const std::vector<std::int32_t>& pcols, MatrixXd& X,
                 VectorXd& y, std::vector<std::string>& terms, int& intercept_column, RegressorColumn column,
                 PeriodColumn period, Outcome outcome) {
    const Index K = (intercept ? 1 : 0) + static_cast<Index>(ctx.k_reg) + static_cast<Index>(pcols.size());
    X.resize(n, K);
    y.resize(n);
    Index col = 0;
    if (intercept) {
        X.col(col++).setOnes();
        terms.push_back("intercept");
        intercept_column = 0;
    }
    for (std::size_t j = 0; j < ctx.k_reg; ++j, ++col) {
        auto out = X.col(col);
        column(j, out);
        terms.push_back(ctx.regressor_names[j]);
    }
    for (std::int32_t p : pcols) {
        auto out = X.col(col++);
        period(p, out);
        terms.push_back(period_term(ctx.index, p));
    }
    outcome(y);
}

// ---- pooled: y on [1, X, period indicators]
Design build_pooled(const Context& ctx, const std::vector<std::size_t>& rows) {
    Design d;
    EquationInput& in = d.input;
    in.estimator = Estimator::pooled;
    fill_ids(ctx, rows, in);
    const bool intercept = ctx.spec.intercept;
    const std::vector<std::int32_t> pcols =
        ctx.spec.period_effects ? period_columns(in.period, ctx.index.n_periods(), intercept)
                                : std::vector<std::int32_t>{};
    const Index N = static_cast<Index>(rows.size());
    auto at_rows = [&](const Column& c, auto& out) {
        for (Index i = 0; i < N; ++i) out[i] = value(c, rows[static_cast<std::size_t>(i)]);
    };
    fill_design(
        ctx, N, intercept, pcols, in.X, in.y, in.terms, in.intercept_column,
        [&](std::size_t j, auto& out) { at_rows(*ctx.regressors[j], out); },
        [&](std::int32_t p, auto& out) {
            for (Index i = 0; i < N; ++i) out[i] = in.period[static_cast<std::size_t>(i)] == p ? 1.0 : 0.0;
        },
        [&](auto& out) { at_rows(ctx.data.outcome, out); });
    return d;
}

// Drop columns (by position in in.X/in.terms) and record why.
void drop_columns(Design& d, const std::vector<Index>& columns, DropReason reason, const std::string& why) {
    if (columns.empty()) return;
    EquationInput& in = d.input;
    std::vector<std::uint8_t> gone(static_cast<std::size_t>(in.X.cols()), 0);
    for (Index c : columns) {
        gone[static_cast<std::size_t>(c)] = 1;
        d.dropped.push_back({in.terms[static_cast<std::size_t>(c)], reason,
                             in.terms[static_cast<std::size_t>(c)] + " " + why});
    }
    const Index keep = in.X.cols() - static_cast<Index>(columns.size());
    MatrixXd x(in.X.rows(), keep);
    std::vector<std::string> terms;
    int intercept = -1;
    Index k = 0;
    for (Index c = 0; c < in.X.cols(); ++c) {
        if (gone[static_cast<std::size_t>(c)]) continue;
        if (c == in.intercept_column) intercept = static_cast<int>(k);
        x.col(k++) = in.X.col(c);
        terms.push_back(in.terms[static_cast<std::size_t>(c)]);
    }
    in.X = std::move(x);
    in.terms = std::move(terms);
    in.intercept_column = intercept;
}

// The differences of fd: for each unit, consecutive used rows in adjacent grid periods
// (later row, earlier row); a pair of consecutive used rows with a grid period between

// ---- fd: dy on [1, dX, period indicators of the later period]
Design build_fd(const Context& ctx) {
    Design d;
    EquationInput& in = d.input;
    in.estimator = Estimator::fd;
    const PanelIndex& index = ctx.index;
    std::vector<std::size_t> later, earlier;
    fd_pairs(ctx, later, earlier, d.pairs_lost);
    fill_ids(ctx, later, in);
    const bool intercept = ctx.spec.intercept;
    const std::vector<std::int32_t> pcols =
        ctx.spec.period_effects ? period_columns(in.period, index.n_periods(), intercept)
                                : std::vector<std::int32_t>{};
    const Index N = static_cast<Index>(later.size());
    const Index K = (intercept ? 1 : 0) + static_cast<Index>(ctx.k_reg) + static_cast<Index>(pcols.size());
    in.X.resize(N, K);
    in.y.resize(N);
    Index col = 0;
    if (intercept) {
        in.X.col(col++).setOnes();
        in.terms.push_back("intercept");
        in.intercept_column = 0;
    }
    std::vector<Index> invariant;
    for (std::size_t j = 0; j < ctx.k_reg; ++j, ++col) {
        const Column& x = *ctx.regressors[j];
        // (double sums suffice: they only feed the kConstantTolerance "no variation" threshold)
        double levels = 0, diffs = 0;
        for (Index i = 0; i < N; ++i) {
            const double a = value(x, later[static_cast<std::size_t>(i)]);
            const double b = value(x, earlier[static_cast<std::size_t>(i)]);
            in.X(i, col) = a - b;
            levels += a * a;
            diffs += (a - b) * (a - b);
        }
        if (!std::isfinite(levels) || !std::isfinite(diffs)) {
            // values near the double range: redo the sums where they cannot overflow
            long double l = 0, dd = 0;
            for (Index i = 0; i < N; ++i) {
                const long double a = value(x, later[static_cast<std::size_t>(i)]);
                const long double b = value(x, earlier[static_cast<std::size_t>(i)]);
                l += a * a;
                dd += (a - b) * (a - b);
            }
            levels = (dd == 0) ? 1.0 : 0.0;
            diffs = (dd == 0 || std::sqrt(dd) <= static_cast<long double>(kConstantTolerance) * std::sqrt(l)) ? 0.0 : 1.0;
        }
        if (N > 0 && (diffs == 0 || std::sqrt(diffs) <= kConstantTolerance * std::sqrt(levels))) invariant.push_back(col);
        in.terms.push_back(ctx.regressor_names[j]);
    }
    for (std::int32_t p : pcols) {
        for (Index i = 0; i < N; ++i) in.X(i, col) = in.period[static_cast<std::size_t>(i)] == p ? 1.0 : 0.0;
        in.terms.push_back(period_term(index, p));
        ++col;
    }
    for (Index i = 0; i < N; ++i)
        in.y[i] = value(ctx.data.outcome, later[static_cast<std::size_t>(i)]) -
                  value(ctx.data.outcome, earlier[static_cast<std::size_t>(i)]);
    drop_columns(d, invariant, DropReason::no_within_variation,
                 "has no variation within units (all its differences are 0); dropped by fd");
    return d;
}

// Unit means over `rows` (unit order) of a column given by an accessor; weighted by
// ctx.weights when the fit is weighted (sum w v / sum w; weight 1 each otherwise).
template <typename Get>
std::vector<double> run_means(const Context& ctx, const std::vector<std::size_t>& rows, const UnitRuns& runs,
                              Get get) {
    std::vector<double> means(runs.begin.size());
    for (std::size_t r = 0; r < runs.begin.size(); ++r) {
        long double sum = 0, total = 0;
        for (std::size_t k = runs.begin[r]; k < runs.end[r]; ++k) {
            const long double w = ctx.weights != nullptr ? ctx.weights->value(rows[k]) : 1.0L;
            sum += w * get(k);
            total += w;
        }
        means[r] = static_cast<double>(sum / total);
    }
    return means;
}

// ---- within (and the within part of random): demeaned y on demeaned X (+ demeaned
// period indicators, reference = earliest period present), no intercept.
Design build_within(const Context& ctx, const std::vector<std::size_t>& rows, const UnitRuns& runs) {
    Design d;
    EquationInput& in = d.input;
    in.estimator = Estimator::within;
    fill_ids(ctx, rows, in);
    const std::vector<std::int32_t> pcols =
        ctx.spec.period_effects ? period_columns(in.period, ctx.index.n_periods(), true)
                                : std::vector<std::int32_t>{};
    const Index N = static_cast<Index>(rows.size());
    const Index K = static_cast<Index>(ctx.k_reg) + static_cast<Index>(pcols.size());
    in.X.resize(N, K);
    in.y.resize(N);
    in.absorbed = runs.begin.size();
    std::vector<Index> invariant;
    Index col = 0;
    for (std::size_t j = 0; j < ctx.k_reg; ++j, ++col) {
        const Column& x = *ctx.regressors[j];
        const std::vector<double> means = run_means(ctx, rows, runs, [&](std::size_t k) { return value(x, rows[k]); });
        double levels = 0, within = 0;  // only for the kConstantTolerance threshold: double suffices
        for (std::size_t r = 0; r < runs.begin.size(); ++r)
            for (std::size_t k = runs.begin[r]; k < runs.end[r]; ++k) {
                const double v = value(x, rows[k]);
                const double dm = v - means[r];
                in.X(static_cast<Index>(k), col) = dm;
                levels += v * v;
                within += dm * dm;
            }
        if (!std::isfinite(levels) || !std::isfinite(within)) {
            // values near the double range: redo the sums where they cannot overflow
            long double l = 0, w = 0;
            for (Index k = 0; k < N; ++k) {
                const long double v = value(x, rows[static_cast<std::size_t>(k)]);
                const long double dm = in.X(k, col);
                l += v * v;
                w += dm * dm;
            }
            levels = 1.0;
            within = (w == 0 || std::sqrt(w) <= static_cast<long double>(kConstantTolerance) * std::sqrt(l)) ? 0.0 : 1.0;
        }
        if (within == 0 || std::sqrt(within) <= kConstantTolerance * std::sqrt(levels)) invariant.push_back(col);
        in.terms.push_back(ctx.regressor_names[j]);
    }
    for (std::int32_t p : pcols) {
        const std::vector<double> shares =  // weighted: the weighted share
            ctx.weights != nullptr
                ? run_means(ctx, rows, runs, [&](std::size_t k) { return in.period[k] == p ? 1.0 : 0.0; })
                : std::vector<double>{};
        for (std::size_t r = 0; r < runs.begin.size(); ++r) {
            std::size_t count = 0;
            for (std::size_t k = runs.begin[r]; k < runs.end[r]; ++k) count += in.period[k] == p ? 1u : 0u;
            const double share = ctx.weights != nullptr
                                     ? shares[r]
                                     : static_cast<double>(count) / static_cast<double>(runs.end[r] - runs.begin[r]);
            for (std::size_t k = runs.begin[r]; k < runs.end[r]; ++k)
                in.X(static_cast<Index>(k), col) = (in.period[k] == p ? 1.0 : 0.0) - share;
        }
        in.terms.push_back(period_term(ctx.index, p));
        ++col;
    }
    const std::vector<double> ymeans =
        run_means(ctx, rows, runs, [&](std::size_t k) { return value(ctx.data.outcome, rows[k]); });
    for (std::size_t r = 0; r < runs.begin.size(); ++r)
        for (std::size_t k = runs.begin[r]; k < runs.end[r]; ++k)
            in.y[static_cast<Index>(k)] = value(ctx.data.outcome, rows[k]) - ymeans[r];
    drop_columns(d, invariant, DropReason::no_within_variation,
                 "has no variation within units; dropped by within (the unit effects absorb it)");
    return d;
}

// Unit means of the level design [1?, X, period indicators] (one row per run), used by
// between and random.
struct MeansDesign {
    MatrixXd X;             // runs x K
    VectorXd y;             // runs
    std::vector<std::string> terms;
    int intercept_column = -1;
};

MeansDesign unit_mean_design(const Context& ctx, const std::vector<std::size_t>& rows, const UnitRuns& runs,
                             const std::vector<std::int32_t>& row_periods, bool intercept,
                             const std::vector<std::int32_t>& pcols) {
    MeansDesign m;
    const Index n = static_cast<Index>(runs.begin.size());
    auto put = [&](const std::vector<double>& means, auto& out) {
        for (Index r = 0; r < n; ++r) out[r] = means[static_cast<std::size_t>(r)];
    };
    fill_design(
        ctx, n, intercept, pcols, m.X, m.y, m.terms, m.intercept_column,
        [&](std::size_t j, auto& out) {
            const Column& x = *ctx.regressors[j];
            put(run_means(ctx, rows, runs, [&](std::size_t k) { return value(x, rows[k]); }), out);
        },
        [&](std::int32_t p, auto& out) {
            put(run_means(ctx, rows, runs, [&](std::size_t k) { return row_periods[k] == p ? 1.0 : 0.0; }), out);
        },
        [&](auto& out) { put(run_means(ctx, rows, runs, [&](std::size_t k) { return value(ctx.data.outcome, rows[k]); }), out); });
    return m;
}

// Grid position of every row of `rows`.
std::vector<std::int32_t> periods_of(const Context& ctx, const std::vector<std::size_t>& rows) {
    std::vector<std::int32_t> p(rows.size());
    for (std::size_t k = 0; k < rows.size(); ++k) p[k] = ctx.index.period_of_row[rows[k]];
    return p;
}

// ---- between: unit means of y on unit means of [1, X]
Design build_between(const Context& ctx, const std::vector<std::size_t>& rows, const UnitRuns& runs) {
    const ModelSpec& spec = ctx.spec;
    if (spec.period_effects)
        throw Error("between: the word \"periods\" does not apply to between (one row per unit, "
                    "no periods); remove it or choose pooled, fd, within or random");
    const std::vector<std::int32_t> row_periods = periods_of(ctx, rows);
    const std::vector<std::int32_t> pcols =
        spec.period_effects ? period_columns(row_periods, ctx.index.n_periods(), spec.intercept)
                            : std::vector<std::int32_t>{};
    MeansDesign m = unit_mean_design(ctx, rows, runs, row_periods, spec.intercept, pcols);
    Design design;
    EquationInput& in = design.input;
    in.estimator = Estimator::between;
    in.X = std::move(m.X);
    in.y = std::move(m.y);
    in.terms = std::move(m.terms);
    in.intercept_column = m.intercept_column;
    for (std::size_t r = 0; r < runs.begin.size(); ++r) {
        in.input_row.push_back(rows[runs.begin[r]]);
        in.unit.push_back(runs.unit[r]);
        in.period.push_back(-1);
    }
    return design;
}

// ---- random: Swamy & Arora (1972) variance components; unbalanced panels as plm's
// "swar" (Baltagi & Chang 1994), see shared reference README "random".

// sigma_e^2 from the within regression.
double random_sigma2_e(const Context& ctx, const std::vector<std::size_t>& rows, const UnitRuns& runs) {
    const std::size_t n = runs.begin.size();
    const double N_d = static_cast<double>(rows.size());
    Design within = build_within(ctx, rows, runs);
    if (within.input.X.cols() > 0) {
        Equation w = solve_equation(std::move(within.input));
        const std::size_t k_w = w.n_terms();
        const double df_w = N_d - static_cast<double>(n) - static_cast<double>(k_w);
        if (!(df_w > 0))
            throw Error("random: the within regression has no residual degrees of freedom (" +
                        std::to_string(rows.size()) + " rows, " + std::to_string(n) + " units, " +
                        std::to_string(k_w) + " terms)");
        return w.ssr / df_w;
    }
    long double ss = 0;
    for (Index i = 0; i < within.input.y.size(); ++i)
        ss += static_cast<long double>(within.input.y[i]) * within.input.y[i];
    return static_cast<double>(ss) / (N_d - static_cast<double>(n));
}

// sigma_u^2 from the between regression over all rows (= weighted by T_i over units).
double random_sigma2_u(const MeansDesign& m, const std::vector<double>& T_i, bool balanced, double sigma2_e,
                       double N_d) {
    const std::size_t n = T_i.size();
    EquationInput between;
    between.X = m.X;
    between.y = m.y;
    for (Index r = 0; r < static_cast<Index>(n); ++r) {
        const double w = std::sqrt(T_i[static_cast<std::size_t>(r)]);
        if (between.X.cols() > 0) between.X.row(r) *= w;  // no columns (no intercept, no regressor): Eigen would offset a null pointer (UB)
        between.y[r] *= w;
    }
    between.terms = m.terms;
    between.intercept_column = m.intercept_column;
    Equation b = solve_equation(std::move(between));
    const double rank_b = static_cast<double>(b.n_terms());
    const double n_d = static_cast<double>(n);
    if (!(n_d - rank_b > 0))
        throw Error("random: " + std::to_string(n) + " units are too few for the between regression with " +
                    std::to_string(b.n_terms()) + " terms; random effects need more units than terms");
    if (balanced) return (b.ssr / (n_d - rank_b) - sigma2_e) / T_i[0];
    // trace[(Zb'Zb)^-1 Zs'Z] = trace[(sum T_i zbar zbar')^-1 sum T_i^2 zbar zbar']
    const Index kb = b.X.cols();
    MatrixXd zsz = MatrixXd::Zero(kb, kb);
    for (Index r = 0; r < static_cast<Index>(n); ++r) {
        const VectorXd w_row = b.X.row(r).transpose();  // sqrt(T_i) zbar_i
        zsz.noalias() += T_i[static_cast<std::size_t>(r)] * (w_row * w_row.transpose());
    }
    const double trace = (b.xtx_inverse * zsz).trace();
    return (b.ssr - (n_d - rank_b) * sigma2_e) / (N_d - trace);
}

Design build_random(const Context& ctx, const std::vector<std::size_t>& rows, const UnitRuns& runs, Fit& fit) {
    const ModelSpec& spec = ctx.spec;
    const std::size_t n = runs.begin.size();
    const double N_d = static_cast<double>(rows.size());
    if (n < 2) throw Error("random: all usable rows belong to one unit; random effects need at least 2 units");
    const double sigma2_e = random_sigma2_e(ctx, rows, runs);
    const std::vector<std::int32_t> row_periods = periods_of(ctx, rows);
    const std::vector<std::int32_t> pcols =
        spec.period_effects ? period_columns(row_periods, ctx.index.n_periods(), spec.intercept)
                            : std::vector<std::int32_t>{};
    MeansDesign m = unit_mean_design(ctx, rows, runs, row_periods, spec.intercept, pcols);
    std::vector<double> T_i(n);
    bool balanced = true;
    for (std::size_t r = 0; r < n; ++r) {
        T_i[r] = static_cast<double>(runs.end[r] - runs.begin[r]);
        if (T_i[r] != T_i[0]) balanced = false;
    }
    double sigma2_u = random_sigma2_u(m, T_i, balanced, sigma2_e, N_d);
    RandomEffectsInfo info;
    info.sigma2_idiosyncratic = sigma2_e;
    info.balanced = balanced;
    if (!(sigma2_u > 0)) {
        if (sigma2_u < 0)
            fit.warnings.push_back("random: the estimated unit variance was negative and is set to 0 "
                                   "(random effects reduce to pooled OLS)");
        sigma2_u = 0;
    }
    info.sigma2_unit = sigma2_u;
    info.theta_by_unit.assign(ctx.index.n_units(), 0.0);
    std::vector<double> theta_by_run(n);
    for (std::size_t r = 0; r < n; ++r) {
        const double theta = 1.0 - std::sqrt(sigma2_e / (T_i[r] * sigma2_u + sigma2_e));
        theta_by_run[r] = theta;
        info.theta_by_unit[static_cast<std::size_t>(runs.unit[r])] = theta;
    }
    fit.random_effects = info;
    // quasi-demeaned equation: y - theta ybar on [1 - theta, x - theta xbar, ...];
    // build_pooled's period columns match m's (same rule), so column j of the level
    // design has unit means m.X(:, j)
    Design design = build_pooled(ctx, rows);
    EquationInput& in = design.input;
    in.estimator = Estimator::random;
    for (std::size_t r = 0; r < n; ++r) {
        const double theta = theta_by_run[r];
        for (std::size_t k = runs.begin[r]; k < runs.end[r]; ++k) {
            const Index i = static_cast<Index>(k);
            for (Index j = 0; j < in.X.cols(); ++j) in.X(i, j) -= theta * m.X(static_cast<Index>(r), j);
            in.y[i] -= theta * m.y[static_cast<Index>(r)];
        }
    }
    return design;
}

}  // namespace

Design form_equation(const Context& ctx, const std::vector<std::size_t>& rows, const UnitRuns& runs, Fit& fit) {
    switch (ctx.spec.estimator) {
        case Estimator::pooled:
            return build_pooled(ctx, rows);
        case Estimator::fd: {
            Design design = build_fd(ctx);
            if (design.input.X.rows() == 0)
                throw Error("fd: no unit has two usable rows in adjacent periods, so there is nothing to "
                            "difference");
            return design;
        }
        case Estimator::within:
            if (runs.begin.size() < 2)
                throw Error("within: all usable rows belong to one unit (\"" +
                            ctx.index.unit_labels[static_cast<std::size_t>(runs.unit.front())] +
                            "\"); within needs at least 2 units");
            return build_within(ctx, rows, runs);
        case Estimator::between:
            return build_between(ctx, rows, runs);
        case Estimator::random:
            return build_random(ctx, rows, runs, fit);
    }
    throw Error("internal: unknown estimator");
}

}  // namespace weft::detail
