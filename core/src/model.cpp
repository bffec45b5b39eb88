// fit_model: listwise rows -> estimated equation of the estimator -> solver ->
// covariance -> inference and fit statistics (CONVENTIONS.md "Estimators").
#include <algorithm>
#include <cmath>
#include <limits>
#include <string>

#include <Eigen/Dense>

#include "weft/distributions.hpp"
#include "weft/error.hpp"
#include "weft/buffer.hpp"
#include "weft/model.hpp"
#include "internal.hpp"

namespace weft {

using Eigen::Index;
using Eigen::MatrixXd;
using Eigen::VectorXd;

std::optional<std::size_t> Fit::term_position(std::string_view name) const {
    for (std::size_t k = 0; k < equation.terms.size(); ++k)
        if (equation.terms[k] == name) return k;
    return std::nullopt;
}

namespace {

// What an estimator's builder hands to the solver, plus what it dropped itself.
struct Design {
    EquationInput input;
    std::vector<DroppedTerm> dropped;
};

struct Context {
    const PanelData& data;
    const ModelSpec& spec;
    const PanelIndex& index;
    const std::vector<std::uint8_t>& used;        // per input row
    std::vector<std::string> regressor_names;
    std::size_t k_reg = 0;
};

double value(const Column& column, std::size_t row) { return column.value(row); }

// Equation rows of pooled / within / random: the used rows, in unit-period order.
std::vector<std::size_t> used_rows_in_order(const Context& ctx) {
    std::vector<std::size_t> rows;
    reserve_large(rows, ctx.index.rows_by_unit.size());
    for (std::size_t row : ctx.index.rows_by_unit)
        if (ctx.used[row]) rows.push_back(row);
    return rows;
}

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

std::string period_term(const PanelIndex& index, std::int32_t position) {
    return "period " + format_number(index.grid[static_cast<std::size_t>(position)]);
}

// Unit of each used row's unit, with per-unit row ranges inside `rows` (rows are in
// unit order).
struct UnitRuns {
    std::vector<std::size_t> begin;   // per run
    std::vector<std::size_t> end;
    std::vector<std::int32_t> unit;
};

UnitRuns unit_runs(const PanelIndex& index, const std::vector<std::size_t>& rows) {
    UnitRuns runs;
    for (std::size_t k = 0; k < rows.size(); ++k) {
        const std::int32_t u = index.unit_of_row[rows[k]];
        if (k == 0 || u != runs.unit.back()) {
            if (k > 0) runs.end.push_back(k);
            runs.begin.push_back(k);
            runs.unit.push_back(u);
        }
    }
    if (!rows.empty()) runs.end.push_back(rows.size());
    return runs;
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
        [&](std::size_t j, auto& out) { at_rows(ctx.data.regressors[j], out); },
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
// them is counted in pairs_lost_to_gaps.
void fd_pairs(const Context& ctx, std::vector<std::size_t>& later, std::vector<std::size_t>& earlier,
              std::size_t& pairs_lost_to_gaps) {
    const PanelIndex& index = ctx.index;
    pairs_lost_to_gaps = 0;
    later.clear();
    earlier.clear();
    reserve_large(later, index.rows_by_unit.size());
    reserve_large(earlier, index.rows_by_unit.size());
    for (std::size_t u = 0; u < index.n_units(); ++u) {
        std::size_t prev_used = std::numeric_limits<std::size_t>::max();
        for (std::size_t k = index.unit_start[u]; k < index.unit_start[u + 1]; ++k) {
            const std::size_t row = index.rows_by_unit[k];
            const std::size_t prev_row = k > index.unit_start[u] ? index.rows_by_unit[k - 1] : prev_used;
            if (ctx.used[row] && k > index.unit_start[u] && ctx.used[prev_row]) {
                if (index.period_of_row[prev_row] + 1 == index.period_of_row[row]) {
                    later.push_back(row);
                    earlier.push_back(prev_row);
                } else {
                    ++pairs_lost_to_gaps;  // consecutive rows of the unit, but a grid period between them
                }
            }
        }
    }
}

// ---- fd: dy on [1, dX, period indicators of the later period]
Design build_fd(const Context& ctx, std::size_t& pairs_lost_to_gaps) {
    Design d;
    EquationInput& in = d.input;
    in.estimator = Estimator::fd;
    const PanelIndex& index = ctx.index;
    std::vector<std::size_t> later, earlier;
    fd_pairs(ctx, later, earlier, pairs_lost_to_gaps);
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
        const Column& x = ctx.data.regressors[j];
        // (double sums suffice: they only feed the 1e-13 "no variation" threshold)
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
            diffs = (dd == 0 || std::sqrt(dd) <= 1e-13L * std::sqrt(l)) ? 0.0 : 1.0;
        }
        if (N > 0 && (diffs == 0 || std::sqrt(diffs) <= 1e-13 * std::sqrt(levels))) invariant.push_back(col);
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

// Unit means over `rows` (unit order) of a column given by an accessor.
template <typename Get>
std::vector<double> run_means(const UnitRuns& runs, Get get) {
    std::vector<double> means(runs.begin.size());
    for (std::size_t r = 0; r < runs.begin.size(); ++r) {
        long double sum = 0;
        for (std::size_t k = runs.begin[r]; k < runs.end[r]; ++k) sum += get(k);
        means[r] = static_cast<double>(sum / static_cast<long double>(runs.end[r] - runs.begin[r]));
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
        const Column& x = ctx.data.regressors[j];
        const std::vector<double> means = run_means(runs, [&](std::size_t k) { return value(x, rows[k]); });
        double levels = 0, within = 0;  // only for the 1e-13 threshold: double suffices
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
            within = (w == 0 || std::sqrt(w) <= 1e-13L * std::sqrt(l)) ? 0.0 : 1.0;
        }
        if (within == 0 || std::sqrt(within) <= 1e-13 * std::sqrt(levels)) invariant.push_back(col);
        in.terms.push_back(ctx.regressor_names[j]);
    }
    for (std::int32_t p : pcols) {
        for (std::size_t r = 0; r < runs.begin.size(); ++r) {
            std::size_t count = 0;
            for (std::size_t k = runs.begin[r]; k < runs.end[r]; ++k) count += in.period[k] == p ? 1u : 0u;
            const double share = static_cast<double>(count) / static_cast<double>(runs.end[r] - runs.begin[r]);
            for (std::size_t k = runs.begin[r]; k < runs.end[r]; ++k)
                in.X(static_cast<Index>(k), col) = (in.period[k] == p ? 1.0 : 0.0) - share;
        }
        in.terms.push_back(period_term(ctx.index, p));
        ++col;
    }
    const std::vector<double> ymeans =
        run_means(runs, [&](std::size_t k) { return value(ctx.data.outcome, rows[k]); });
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
            const Column& x = ctx.data.regressors[j];
            put(run_means(runs, [&](std::size_t k) { return value(x, rows[k]); }), out);
        },
        [&](std::int32_t p, auto& out) {
            put(run_means(runs, [&](std::size_t k) { return row_periods[k] == p ? 1.0 : 0.0; }), out);
        },
        [&](auto& out) { put(run_means(runs, [&](std::size_t k) { return value(ctx.data.outcome, rows[k]); }), out); });
    return m;
}

double squared_correlation(const std::vector<long double>& a, const std::vector<long double>& b) {
    const std::size_t n = a.size();
    if (n < 2) return std::numeric_limits<double>::quiet_NaN();
    long double ma = 0, mb = 0;
    for (std::size_t i = 0; i < n; ++i) {
        ma += a[i];
        mb += b[i];
    }
    ma /= static_cast<long double>(n);
    mb /= static_cast<long double>(n);
    long double sab = 0, saa = 0, sbb = 0;
    for (std::size_t i = 0; i < n; ++i) {
        sab += (a[i] - ma) * (b[i] - mb);
        saa += (a[i] - ma) * (a[i] - ma);
        sbb += (b[i] - mb) * (b[i] - mb);
    }
    if (saa == 0 || sbb == 0) return std::numeric_limits<double>::quiet_NaN();
    return static_cast<double>(sab * sab / (saa * sbb));
}

std::optional<double> finite_or_empty(double v) {
    if (std::isfinite(v)) return v;
    return std::nullopt;
}

}  // namespace

// The whole fit. lean: take the lean route (lean.cpp) or return nothing; the lean
// route checks the values itself (no NaN or infinity outside the masks) as it reads
// them, and any error on it is left to the full route to find and word.
static std::optional<Fit> fit_model_impl(const PanelData& data, const ModelSpec& spec, bool lean) {
    const std::size_t n_rows = data.outcome.size();
    const std::size_t first = data.first_row_number;
    auto check = [&](const Column& c, const std::string& what) {
        if (lean)
            detail::check_column_shape(c, n_rows, "outcome", what);
        else
            detail::check_column(c, n_rows, "outcome", what, first);
    };
    check(data.outcome, "outcome");
    for (std::size_t j = 0; j < data.regressors.size(); ++j) {
        const Column& x = data.regressors[j];
        check(x, x.name.empty() ? "regressor " + std::to_string(j + 1) : "regressor \"" + x.name + "\"");
    }
    detail::check_length(n_rows, "outcome", data.units.size(), "units");
    detail::check_length(n_rows, "outcome", data.periods.size(), "periods");
    if (!(spec.level > 0 && spec.level < 1))
        throw Error("level: the confidence level must be between 0 and 1, e.g. level=0.95");

    Fit fit;
    fit.spec = spec;
    fit.index = build_index(data.units, data.periods, first);
    const PanelIndex& index = fit.index;

    // listwise: a row is used when its unit, period, outcome and every regressor are present
    std::vector<std::uint8_t> used;
    // (in input order every row has its unit and period: only the masks drop rows)
    bool all_used = index.in_input_order;
    if (all_used) {
        assign_large(used, n_rows, std::uint8_t{1});
    } else {
        assign_large(used, n_rows, std::uint8_t{0});
        for (std::size_t i = 0; i < n_rows; ++i) used[i] = index.unit_of_row[i] >= 0 ? 1 : 0;
    }
    auto drop_missing = [&](const Column& c) {
        const std::uint8_t* mask = c.mask();
        if (mask == nullptr) return;
        all_used = false;
        for (std::size_t i = 0; i < n_rows; ++i) used[i] &= static_cast<std::uint8_t>(mask[i] == 0);
    };
    drop_missing(data.outcome);
    for (const Column& x : data.regressors) drop_missing(x);
    std::size_t rows_used = all_used ? n_rows : 0;
    if (!all_used)
        for (std::size_t i = 0; i < n_rows; ++i) rows_used += used[i];
    fit.rows_input = n_rows;
    fit.rows_used = rows_used;
    fit.rows_dropped = n_rows - rows_used;
    if (rows_used == 0) {
        // name a column that is missing in every row: that is usually the mistake
        auto all_missing = [&](const Column& c) {
            const std::uint8_t* mask = c.mask();
            return n_rows > 0 && mask != nullptr && c.mask_size() == n_rows &&
                   std::all_of(mask, mask + n_rows, [](std::uint8_t m) { return m != 0; });
        };
        std::string culprit;
        if (all_missing(data.outcome)) culprit = "the outcome";
        for (std::size_t j = 0; j < data.regressors.size() && culprit.empty(); ++j)
            if (all_missing(data.regressors[j]))
                culprit = data.regressors[j].name.empty() ? "regressor " + std::to_string(j + 1)
                                                          : "regressor \"" + data.regressors[j].name + "\"";
        if (culprit.empty() && all_missing(data.periods)) culprit = "periods";
        if (!culprit.empty())
            throw Error("no usable rows: " + culprit + " is blank or not a number in all " + std::to_string(n_rows) +
                        " rows; check that its range points at the data");
        throw Error("no usable rows: every row misses the outcome, a regressor, the unit or the period (" +
                    std::to_string(n_rows) + " rows given)");
    }

    Context ctx{data, spec, index, used, {}, data.regressors.size()};
    for (std::size_t j = 0; j < data.regressors.size(); ++j)
        ctx.regressor_names.push_back(data.regressors[j].name.empty() ? "x" + std::to_string(j + 1)
                                                                      : data.regressors[j].name);

    if (rows_used == n_rows) {
        // every row used: every unit and period of the index is among them
        fit.n_units = index.n_units();
        fit.n_periods = index.n_periods();
    } else {
        // units and periods among the used rows
        std::vector<std::uint8_t> unit_seen(index.n_units(), 0), period_seen(index.n_periods(), 0);
        for (std::size_t i = 0; i < n_rows; ++i) {
            if (!used[i]) continue;
            unit_seen[static_cast<std::size_t>(index.unit_of_row[i])] = 1;
            period_seen[static_cast<std::size_t>(index.period_of_row[i])] = 1;
        }
        fit.n_units = static_cast<std::size_t>(std::count(unit_seen.begin(), unit_seen.end(), 1));
        fit.n_periods = static_cast<std::size_t>(std::count(period_seen.begin(), period_seen.end(), 1));
    }
    // equation rows of pooled, within, random, between: the used rows in unit order
    // (the lean fd route does not need them)
    std::vector<std::size_t> rows;
    UnitRuns runs;
    if (!lean) {
        rows = used_rows_in_order(ctx);
        runs = unit_runs(index, rows);
    }

    Design design;
    std::size_t pairs_lost = 0;
    std::vector<double> theta_by_run;
    std::optional<detail::LeanResult> lean_result;
    if (lean) {
        if (!detail::lean_applies(spec)) return std::nullopt;
        const bool fd = spec.estimator == Estimator::fd;
        detail::LeanInput in{data, spec, index, ctx.regressor_names};
        // sorted input (every row has a unit and a period, in unit-period order): the
        // equation rows as a mask over the input rows
        const bool sorted = index.in_input_order;
        std::vector<std::uint8_t> is_row;
        std::vector<std::size_t> later, earlier;
        // the equation rows' units and periods
        std::vector<std::uint8_t> unit_seen(index.n_units(), 0), period_seen(index.n_periods(), 0);
        auto count_row = [&](std::size_t r) {
            ++in.count;
            unit_seen[static_cast<std::size_t>(index.unit_of_row[r])] = 1;
            period_seen[static_cast<std::size_t>(index.period_of_row[r])] = 1;
        };
        if (sorted) {
            assign_large(is_row, n_rows, std::uint8_t{0});
            const std::vector<std::int32_t>& unit = index.unit_of_row;
            const std::vector<std::int32_t>& period = index.period_of_row;
            if (fd) {
                // consecutive used rows of one unit: a difference, unless a grid period
                // lies between (a pair lost); branch-free, the marks of units and
                // periods set by the row's own mark
                std::size_t count = 0, lost = 0;
                for (std::size_t r = 1; r < n_rows; ++r) {
                    const bool pair = (used[r] & used[r - 1]) != 0 && unit[r] == unit[r - 1];
                    const bool adjacent = period[r] == period[r - 1] + 1;
                    const std::uint8_t row = pair && adjacent ? 1 : 0;
                    is_row[r] = row;
                    count += row;
                    lost += pair && !adjacent ? 1 : 0;
                    unit_seen[static_cast<std::size_t>(unit[r])] |= row;
                    period_seen[static_cast<std::size_t>(period[r])] |= row;
                }
                in.count = count;
                pairs_lost += lost;
            } else {
                for (std::size_t r = 0; r < n_rows; ++r) {
                    is_row[r] = used[r];
                    if (is_row[r]) count_row(r);
                }
            }
            in.is_row = &is_row;
        } else if (fd) {
            fd_pairs(ctx, later, earlier, pairs_lost);
            in.later = &later;
            in.earlier = &earlier;
        } else {
            later = used_rows_in_order(ctx);
            in.later = &later;
        }
        {
            if (!sorted)
                for (std::size_t r : later) count_row(r);
            in.units = static_cast<std::size_t>(std::count(unit_seen.begin(), unit_seen.end(), 1));
            in.periods = static_cast<std::size_t>(std::count(period_seen.begin(), period_seen.end(), 1));
        }
        if (in.count == 0) return std::nullopt;
        lean_result = detail::lean_equation(in);
        if (!lean_result) return std::nullopt;
    }
    if (!lean_result) switch (spec.estimator) {
        case Estimator::pooled:
            design = build_pooled(ctx, rows);
            break;
        case Estimator::fd:
            design = build_fd(ctx, pairs_lost);
            if (design.input.X.rows() == 0)
                throw Error("fd: no unit has two usable rows in adjacent periods, so there is nothing to "
                            "difference");
            break;
        case Estimator::within:
            if (runs.begin.size() < 2)
                throw Error("within: all usable rows belong to one unit (\"" +
                            index.unit_labels[static_cast<std::size_t>(runs.unit.front())] +
                            "\"); within needs at least 2 units");
            design = build_within(ctx, rows, runs);
            break;
        case Estimator::between: {
            if (spec.period_effects)
                throw Error("between: the word \"periods\" does not apply to between (one row per unit, "
                            "no periods); remove it or choose pooled, fd, within or random");
            const std::vector<std::int32_t> row_periods = [&] {
                std::vector<std::int32_t> p(rows.size());
                for (std::size_t k = 0; k < rows.size(); ++k) p[k] = index.period_of_row[rows[k]];
                return p;
            }();
            const std::vector<std::int32_t> pcols =
                spec.period_effects ? period_columns(row_periods, index.n_periods(), spec.intercept)
                                    : std::vector<std::int32_t>{};
            MeansDesign m = unit_mean_design(ctx, rows, runs, row_periods, spec.intercept, pcols);
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
            break;
        }
        case Estimator::random: {
            // Swamy & Arora (1972) variance components; unbalanced panels as plm's "swar"
            // (Baltagi & Chang 1994), see shared reference README "random".
            const std::size_t n = runs.begin.size();
            const double N_d = static_cast<double>(rows.size());
            if (n < 2) throw Error("random: all usable rows belong to one unit; random effects need at least 2 units");
            Design within = build_within(ctx, rows, runs);
            double sigma2_e = 0;
            std::size_t k_w = 0;
            if (within.input.X.cols() > 0) {
                Equation w = solve_equation(std::move(within.input));
                k_w = w.n_terms();
                const double df_w = N_d - static_cast<double>(n) - static_cast<double>(k_w);
                if (!(df_w > 0))
                    throw Error("random: the within regression has no residual degrees of freedom (" +
                                std::to_string(rows.size()) + " rows, " + std::to_string(n) + " units, " +
                                std::to_string(k_w) + " terms)");
                sigma2_e = w.ssr / df_w;
            } else {
                long double ss = 0;
                for (Index i = 0; i < within.input.y.size(); ++i) ss += static_cast<long double>(within.input.y[i]) * within.input.y[i];
                sigma2_e = static_cast<double>(ss) / (N_d - static_cast<double>(n));
            }
            // between regression over all rows = weighted by T_i over units
            std::vector<std::int32_t> row_periods(rows.size());
            for (std::size_t k = 0; k < rows.size(); ++k) row_periods[k] = index.period_of_row[rows[k]];
            const std::vector<std::int32_t> pcols =
                spec.period_effects ? period_columns(row_periods, index.n_periods(), spec.intercept)
                                    : std::vector<std::int32_t>{};
            MeansDesign m = unit_mean_design(ctx, rows, runs, row_periods, spec.intercept, pcols);
            std::vector<double> T_i(n);
            bool balanced = true;
            for (std::size_t r = 0; r < n; ++r) {
                T_i[r] = static_cast<double>(runs.end[r] - runs.begin[r]);
                if (T_i[r] != T_i[0]) balanced = false;
            }
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
            double sigma2_u = 0;
            if (balanced) {
                sigma2_u = (b.ssr / (n_d - rank_b) - sigma2_e) / T_i[0];
            } else {
                // trace[(Zb'Zb)^-1 Zs'Z] = trace[(sum T_i zbar zbar')^-1 sum T_i^2 zbar zbar']
                const Index kb = b.X.cols();
                MatrixXd zsz = MatrixXd::Zero(kb, kb);
                for (Index r = 0; r < static_cast<Index>(n); ++r) {
                    const VectorXd w_row = b.X.row(r).transpose();  // sqrt(T_i) zbar_i
                    zsz.noalias() += T_i[static_cast<std::size_t>(r)] * (w_row * w_row.transpose());
                }
                const double trace = (b.xtx_inverse * zsz).trace();
                sigma2_u = (b.ssr - (n_d - rank_b) * sigma2_e) / (N_d - trace);
            }
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
            info.theta_by_unit.assign(index.n_units(), 0.0);
            theta_by_run.resize(n);
            for (std::size_t r = 0; r < n; ++r) {
                const double theta = 1.0 - std::sqrt(sigma2_e / (T_i[r] * sigma2_u + sigma2_e));
                theta_by_run[r] = theta;
                info.theta_by_unit[static_cast<std::size_t>(runs.unit[r])] = theta;
            }
            fit.random_effects = info;
            // quasi-demeaned equation: y - theta ybar on [1 - theta, x - theta xbar, ...]
            EquationInput& in = design.input;
            in.estimator = Estimator::random;
            Design levels = build_pooled(ctx, rows);
            in = std::move(levels.input);
            in.estimator = Estimator::random;
            // build_pooled's period columns must match m's (same rule), so column j of
            // the level design has unit means m.X(:, j)
            for (std::size_t r = 0; r < n; ++r) {
                const double theta = theta_by_run[r];
                for (std::size_t k = runs.begin[r]; k < runs.end[r]; ++k) {
                    const Index i = static_cast<Index>(k);
                    for (Index j = 0; j < in.X.cols(); ++j)
                        in.X(i, j) -= theta * m.X(static_cast<Index>(r), j);
                    in.y[i] -= theta * m.y[static_cast<Index>(r)];
                }
            }
            break;
        }
    }

    if (spec.estimator == Estimator::fd && pairs_lost > 0)
        fit.warnings.push_back("fd: " + std::to_string(pairs_lost) +
                               (pairs_lost == 1 ? " difference was" : " differences were") +
                               " not formed because a unit skips a period of the grid");

    detail::OutcomeSums ysums;
    if (lean_result) {
        fit.equation = std::move(lean_result->equation);
        fit.covariance = std::move(lean_result->covariance);
        fit.residuals = std::move(lean_result->residuals);
        fit.fitted = std::move(lean_result->fitted);
        ysums = lean_result->outcome;
        fit.nobs = fit.equation.nobs();
        fit.n_terms = fit.equation.n_terms();
        fit.df_residual = fit.equation.df_residual();
        fit.ssr = fit.equation.ssr;
        fit.sigma = std::sqrt(fit.ssr / fit.df_residual);
    } else {
    // fewer rows than terms
    {
        const EquationInput& in = design.input;
        const std::size_t N = static_cast<std::size_t>(in.X.rows());
        const std::size_t K = static_cast<std::size_t>(in.X.cols());
        if (K == 0)
            throw Error(std::string(to_word(spec.estimator)) +
                        ": no terms left to estimate" +
                        (design.dropped.empty() ? std::string() : " (" + design.dropped.front().message + ")") +
                        "; give at least one regressor" +
                        (spec.estimator == Estimator::within || spec.estimator == Estimator::fd
                             ? " that varies within units" : ""));
        if (N <= K + in.absorbed)
            throw Error(std::string(to_word(spec.estimator)) + ": the estimated equation has " + std::to_string(N) +
                        " rows for " + std::to_string(K) + " terms" +
                        (in.absorbed ? " and " + std::to_string(in.absorbed) + " unit effects" : std::string()) +
                        "; it needs more rows than terms");
    }

    fit.equation = solve_equation(std::move(design.input));
    Equation& eq = fit.equation;
    fit.dropped = design.dropped;
    fit.dropped.insert(fit.dropped.end(), eq.dropped.begin(), eq.dropped.end());
    eq.dropped = fit.dropped;

    const std::size_t N = eq.nobs(), K = eq.n_terms();
    fit.nobs = N;
    fit.n_terms = K;
    fit.df_residual = eq.df_residual();
    if (!(fit.df_residual > 0))
        throw Error(std::string(to_word(spec.estimator)) + ": after dropping collinear terms the equation has " +
                    std::to_string(N) + " rows for " + std::to_string(K) + " terms" +
                    (eq.absorbed ? " and " + std::to_string(eq.absorbed) + " unit effects" : std::string()) +
                    "; it needs more rows than terms");
    fit.ssr = eq.ssr;
    fit.sigma = std::sqrt(eq.ssr / fit.df_residual);

    fit.covariance = compute_covariance(eq, spec.covariance, spec.dk_lag);
    ysums = detail::outcome_sums(eq.y);
    }  // full equation
    const Equation& eq = fit.equation;
    const std::size_t N = eq.nobs(), K = eq.n_terms();

    // inference
    for (const std::string& w : fit.covariance.warnings) fit.warnings.push_back(w);
    if (spec.estimator == Estimator::within &&
        (spec.covariance == Covariance::hc0 || spec.covariance == Covariance::hc1 ||
         spec.covariance == Covariance::hc2 || spec.covariance == Covariance::hc3))
        fit.warnings.push_back("with within and few periods per unit, hc0-hc3 standard errors are not "
                               "consistent (Stock & Watson 2008); cluster is recommended");
    fit.coef = eq.coef;
    fit.se.resize(static_cast<Index>(K));
    fit.t.resize(static_cast<Index>(K));
    fit.p.resize(static_cast<Index>(K));
    fit.ci_low.resize(static_cast<Index>(K));
    fit.ci_high.resize(static_cast<Index>(K));
    for (Index k = 0; k < static_cast<Index>(K); ++k) {
        // cr2: each term on its own Satterthwaite df
        const std::vector<double>& term_df = fit.covariance.term_df;
        const double df = term_df.empty() ? fit.covariance.df : term_df[static_cast<std::size_t>(k)];
        const double q = t_quantile(1.0 - (1.0 - spec.level) / 2.0, df);
        const double se = std::sqrt(std::max(fit.covariance.matrix(k, k), 0.0));
        fit.se[k] = se;
        fit.t[k] = se > 0 ? eq.coef[k] / se : std::numeric_limits<double>::quiet_NaN();
        fit.p[k] = se > 0 ? t_two_sided_p(fit.t[k], df) : std::numeric_limits<double>::quiet_NaN();
        fit.ci_low[k] = eq.coef[k] - q * se;
        fit.ci_high[k] = eq.coef[k] + q * se;
    }
    // An exact fit (every residual 0 to rounding) has standard errors 0: rounding noise
    // must not be shown as tiny SEs with huge t, so they are set to 0, and t and p are
    // undefined (NaN here; hosts show them as not available), with a warning.
    {
        if (static_cast<long double>(eq.ssr) <= 1e-28L * ysums.raw) {
            fit.exact_fit = true;
            fit.covariance.matrix.setZero();
            for (Index k = 0; k < static_cast<Index>(K); ++k) {
                fit.se[k] = 0;
                fit.t[k] = fit.p[k] = std::numeric_limits<double>::quiet_NaN();
                fit.ci_low[k] = fit.ci_high[k] = eq.coef[k];
            }
            fit.warnings.push_back("the fit is exact: every residual is 0 (to rounding), so the standard "
                                   "errors are 0 and t and p-values are not defined");
        }
    }

    // fit statistics
    const bool has_intercept = eq.intercept_column >= 0;
    const double N_d = static_cast<double>(N);
    {
        const long double centred = ysums.centred, raw = ysums.raw;
        // within: y is demeaned by unit, so the uncentred sum is sum (y - ybar_i)^2
        const bool centre = has_intercept || spec.estimator == Estimator::random;
        const double tss = static_cast<double>(spec.estimator == Estimator::within ? raw : (centre ? centred : raw));
        if (tss > 0) {
            fit.tss = tss;
            const double r2 = 1.0 - eq.ssr / tss;
            fit.r2 = r2;
            const double adj_n = (spec.estimator == Estimator::within || centre) ? N_d - 1.0 : N_d;
            fit.adj_r2 = 1.0 - (1.0 - r2) * adj_n / fit.df_residual;
            if (spec.estimator == Estimator::within) fit.r2_within = r2;
        }
    }
    // F on all slopes (classical)
    {
        std::vector<Index> slopes;
        for (Index k = 0; k < static_cast<Index>(K); ++k)
            if (k != eq.intercept_column) slopes.push_back(k);
        const double qn = static_cast<double>(slopes.size());
        if (!slopes.empty()) {
            double f = std::numeric_limits<double>::quiet_NaN();
            if (spec.estimator == Estimator::random) {
                // Wald form: the 1 - theta column is not a constant in unbalanced panels
                const Index m = static_cast<Index>(slopes.size());
                MatrixXd v(m, m);
                VectorXd bs(m);
                for (Index a = 0; a < m; ++a) {
                    bs[a] = eq.coef[slopes[static_cast<std::size_t>(a)]];
                    for (Index c = 0; c < m; ++c)
                        v(a, c) = eq.xtx_inverse(slopes[static_cast<std::size_t>(a)], slopes[static_cast<std::size_t>(c)]);
                }
                const double s2 = eq.ssr / fit.df_residual;
                Eigen::LDLT<MatrixXd> ldlt(v * s2);
                f = bs.dot(ldlt.solve(bs)) / qn;
                fit.f_rule = "classical Wald F on all slopes (random effects)";
            } else if (fit.tss) {
                f = ((*fit.tss - eq.ssr) / qn) / (eq.ssr / fit.df_residual);
                fit.f_rule = has_intercept ? "((TSS-SSR)/q)/(SSR/df), TSS centred"
                                           : "((TSS-SSR)/q)/(SSR/df), TSS uncentred";
            }
            if (std::isfinite(f) && !fit.exact_fit) {
                fit.f = f;
                fit.f_df1 = qn;
                fit.f_df2 = fit.df_residual;
                fit.f_p = finite_or_empty(f_upper(f, qn, fit.df_residual));
            }
        }
    }
    // within / random: R-squared variants from the slopes at levels
    if (spec.estimator == Estimator::within || spec.estimator == Estimator::random) {
        // x_it' b over used rows at levels (period indicators as 0/1), b without intercept
        std::vector<long double> xb(rows.size(), 0.0L), yl(rows.size());
        for (Index k = 0; k < static_cast<Index>(K); ++k) {
            if (k == eq.intercept_column) continue;
            const std::string& term = eq.terms[static_cast<std::size_t>(k)];
            const long double bk = eq.coef[k];
            bool found = false;
            for (std::size_t j = 0; j < ctx.k_reg && !found; ++j) {
                if (ctx.regressor_names[j] != term) continue;
                found = true;
                for (std::size_t r = 0; r < rows.size(); ++r) xb[r] += bk * data.regressors[j].value(rows[r]);
            }
            if (!found) {
                for (std::size_t r = 0; r < rows.size(); ++r)
                    if (period_term(index, index.period_of_row[rows[r]]) == term) xb[r] += bk;
            }
        }
        for (std::size_t r = 0; r < rows.size(); ++r) yl[r] = data.outcome.value(rows[r]);
        fit.r2_overall = finite_or_empty(squared_correlation(yl, xb));
        std::vector<long double> ym(runs.begin.size()), xm(runs.begin.size());
        std::vector<long double> yd(rows.size()), xd(rows.size());
        for (std::size_t r = 0; r < runs.begin.size(); ++r) {
            long double sy = 0, sx = 0;
            for (std::size_t k = runs.begin[r]; k < runs.end[r]; ++k) {
                sy += yl[k];
                sx += xb[k];
            }
            const long double cnt = static_cast<long double>(runs.end[r] - runs.begin[r]);
            ym[r] = sy / cnt;
            xm[r] = sx / cnt;
            for (std::size_t k = runs.begin[r]; k < runs.end[r]; ++k) {
                yd[k] = yl[k] - ym[r];
                xd[k] = xb[k] - xm[r];
            }
        }
        fit.r2_between = finite_or_empty(squared_correlation(ym, xm));
        if (spec.estimator == Estimator::random) fit.r2_within = finite_or_empty(squared_correlation(yd, xd));
        if (spec.estimator == Estimator::within) {
            fit.unit_effects.assign(index.n_units(), 0.0);
            for (std::size_t r = 0; r < runs.begin.size(); ++r)
                fit.unit_effects[static_cast<std::size_t>(runs.unit[r])] = static_cast<double>(ym[r] - xm[r]);
        }
    }

    // aligned residuals and fitted values (a lean fit has them already)
    if (lean_result) return fit;
    fit.residuals.value.assign(n_rows, 0.0);
    fit.residuals.defined.assign(n_rows, 0);
    fit.fitted = fit.residuals;
    if (spec.estimator == Estimator::between) {
        for (std::size_t r = 0; r < runs.begin.size(); ++r)
            for (std::size_t k = runs.begin[r]; k < runs.end[r]; ++k) {
                const std::size_t row = rows[k];
                fit.residuals.value[row] = eq.residual[static_cast<Index>(r)];
                fit.fitted.value[row] = eq.fitted[static_cast<Index>(r)];
                fit.residuals.defined[row] = fit.fitted.defined[row] = 1;
            }
    } else {
        for (std::size_t i = 0; i < N; ++i) {
            const std::size_t row = eq.input_row[i];
            fit.residuals.value[row] = eq.residual[static_cast<Index>(i)];
            fit.fitted.value[row] = eq.fitted[static_cast<Index>(i)];
            fit.residuals.defined[row] = fit.fitted.defined[row] = 1;
        }
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
