// Stage "choose rows" of a fit (fit_stages.hpp): input checks, listwise rows, the rows
// of each equation in unit-period order, the differences of fd, and the equation rows
// of the streaming route.
#include <algorithm>
#include <limits>
#include <string>

#include "weft/buffer.hpp"
#include "weft/error.hpp"
#include "fit_stages.hpp"

namespace weft::detail {

void check_inputs(const PanelData& data, const ModelSpec& spec, bool lean) {
    const std::size_t n_rows = data.outcome.size();
    const std::size_t first = data.first_row_number;
    auto check = [&](const Column& c, const std::string& what) {
        if (lean)
            check_column_shape(c, n_rows, "outcome", what);
        else
            check_column(c, n_rows, "outcome", what, first);
    };
    check(data.outcome, "outcome");
    for (std::size_t j = 0; j < data.regressors.size(); ++j) {
        const Column& x = data.regressors[j];
        check(x, x.name.empty() ? "regressor " + std::to_string(j + 1) : "regressor \"" + x.name + "\"");
    }
    if (data.weights.size() != 0) check(data.weights, data.weights.name.empty() ? std::string("weights")
                                                                                : "weights \"" + data.weights.name + "\"");
    check_length(n_rows, "outcome", data.units.size(), "units");
    check_length(n_rows, "outcome", data.periods.size(), "periods");
    if (!(spec.level > 0 && spec.level < 1))
        throw Error("level: the confidence level must be between 0 and 1, e.g. level=0.95");
}

namespace {

// No usable rows: name a column that is missing in every row, which is usually the mistake.
[[noreturn]] void throw_no_rows(const PanelData& data, std::size_t n_rows) {
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

}  // namespace

RowChoice choose_rows(const PanelData& data, const PanelIndex& index, const WeightSource& weights, Fit& fit) {
    const std::size_t n_rows = data.outcome.size();
    RowChoice choice;
    std::vector<std::uint8_t>& used = choice.used;
    // listwise: a row is used when its unit, period, outcome and every regressor are
    // present (in input order every row has its unit and period: only the masks drop rows)
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
    std::size_t zero_weight = 0;
    if (weights.column != nullptr) {
        all_used = false;
        zero_weight = weigh_rows(*weights.column, weights.label, data.first_row_number, used);
    }
    std::size_t rows_used = all_used ? n_rows : 0;
    if (!all_used)
        for (std::size_t i = 0; i < n_rows; ++i) rows_used += used[i];
    choice.rows_used = rows_used;
    fit.rows_input = n_rows;
    fit.rows_used = rows_used;
    fit.rows_zero_weight = zero_weight;
    fit.rows_dropped = n_rows - rows_used - zero_weight;
    if (zero_weight > 0)
        fit.warnings.push_back(weights.label + ": " + std::to_string(zero_weight) +
                               (zero_weight == 1 ? " row has" : " rows have") + " weight 0 and " +
                               (zero_weight == 1 ? "is" : "are") + " left out of the estimated equation");
    if (rows_used == 0 && zero_weight > 0)
        throw Error("no usable rows: every row with its values present has weight 0 (" + weights.label +
                    "); give at least some rows a positive weight");
    if (rows_used == 0) throw_no_rows(data, n_rows);

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
    return choice;
}

Context make_context(const PanelData& data, const ModelSpec& spec, const PanelIndex& index,
                     const std::vector<std::uint8_t>& used, const WeightSource& weights) {
    Context ctx{data, spec, index, used, weights.names, weights.regressors.size(), weights.regressors, weights.column};
    return ctx;
}

std::vector<std::size_t> used_rows_in_order(const Context& ctx) {
    std::vector<std::size_t> rows;
    reserve_large(rows, ctx.index.rows_by_unit.size());
    for (std::size_t row : ctx.index.rows_by_unit)
        if (ctx.used[row]) rows.push_back(row);
    return rows;
}

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

namespace {

// Sorted input (every row has a unit and a period, in unit-period order): the equation
// rows as a mask over the input rows. fd: consecutive used rows of one unit form a
// difference, unless a grid period lies between (a pair lost); branch-free, the marks of
// units and periods set by the row's own mark.
void mark_sorted_rows(const Context& ctx, LeanRows& out, std::vector<std::uint8_t>& unit_seen,
                      std::vector<std::uint8_t>& period_seen) {
    const std::size_t n_rows = ctx.used.size();
    const std::vector<std::uint8_t>& used = ctx.used;
    std::vector<std::uint8_t>& is_row = out.is_row;
    assign_large(is_row, n_rows, std::uint8_t{0});
    const std::vector<std::int32_t>& unit = ctx.index.unit_of_row;
    const std::vector<std::int32_t>& period = ctx.index.period_of_row;
    if (ctx.spec.estimator == Estimator::fd) {
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
        out.count = count;
        out.pairs_lost += lost;
        return;
    }
    for (std::size_t r = 0; r < n_rows; ++r) {
        is_row[r] = used[r];
        if (is_row[r]) {
            ++out.count;
            unit_seen[static_cast<std::size_t>(unit[r])] = 1;
            period_seen[static_cast<std::size_t>(period[r])] = 1;
        }
    }
}

// The fd differences ordered by their later input row, so that a block reads the
// columns forward whatever the sheet's order (period-major: both rows of a difference
// move forward together).
void fd_pairs_by_input_row(const Context& ctx, LeanRows& out) {
    fd_pairs(ctx, out.later, out.earlier, out.pairs_lost);
    if (std::is_sorted(out.later.begin(), out.later.end())) return;
    constexpr std::size_t none = std::numeric_limits<std::size_t>::max();
    std::vector<std::size_t> earlier_of;
    assign_large(earlier_of, ctx.used.size(), none);
    for (std::size_t k = 0; k < out.later.size(); ++k) earlier_of[out.later[k]] = out.earlier[k];
    std::size_t k = 0;
    for (std::size_t r = 0; r < earlier_of.size(); ++r) {
        if (earlier_of[r] == none) continue;
        out.later[k] = r;
        out.earlier[k] = earlier_of[r];
        ++k;
    }
}

}  // namespace

LeanRows lean_rows(const Context& ctx) {
    const PanelIndex& index = ctx.index;
    LeanRows out;
    // pooled, within, between: the equation rows are the used rows, read in input order
    // whatever it is (within takes each row's unit mean off as it reads it)
    out.sorted = index.in_input_order || ctx.spec.estimator != Estimator::fd;
    out.units_in_order = index.in_input_order;
    // the equation rows' units and periods
    std::vector<std::uint8_t> unit_seen(index.n_units(), 0), period_seen(index.n_periods(), 0);
    if (out.sorted) {
        mark_sorted_rows(ctx, out, unit_seen, period_seen);
    } else {
        if (ctx.spec.estimator == Estimator::fd)
            fd_pairs_by_input_row(ctx, out);
        else
            out.later = used_rows_in_order(ctx);
        std::int32_t last_unit = -1;
        for (std::size_t r : out.later) {
            ++out.count;
            const std::int32_t unit = index.unit_of_row[r];
            if (unit < last_unit) out.units_in_order = false;
            last_unit = unit;
            unit_seen[static_cast<std::size_t>(unit)] = 1;
            period_seen[static_cast<std::size_t>(index.period_of_row[r])] = 1;
        }
    }
    out.units = static_cast<std::size_t>(std::count(unit_seen.begin(), unit_seen.end(), 1));
    out.periods = static_cast<std::size_t>(std::count(period_seen.begin(), period_seen.end(), 1));
    return out;
}

}  // namespace weft::detail
