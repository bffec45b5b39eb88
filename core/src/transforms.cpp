// One-pass panel transforms aligned to the input rows (gap-aware on the time grid).
#include "weft/transforms.hpp"

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <string>

#include "weft/error.hpp"
#include "internal.hpp"

namespace weft {

namespace {

Series undefined_series(std::size_t n) {
    Series s;
    s.value.assign(n, 0.0);
    s.defined.assign(n, 0);
    return s;
}

void check_values(const Column& values, const PanelIndex& index) {
    detail::check_column(values, index.n_rows, "units", detail::column_label(values.name, "values"),
                         index.first_row_number);
}

bool usable(const Column& values, const PanelIndex& index, std::size_t row) {
    return index.unit_of_row[row] >= 0 && !values.is_missing(row);
}

}  // namespace

Series lag(const Column& values, const PanelIndex& index, int k) {
    if (k == 0) throw Error("lag: the order k must not be 0 (use a positive k for a lag, negative for a lead)");
    if (index.grid.empty() && index.n_rows > 0 && !index.rows_by_unit.empty())
        throw Error("lag: periods are needed to find earlier rows");
    check_values(values, index);
    Series out = undefined_series(index.n_rows);
    if (static_cast<std::size_t>(k > 0 ? std::int64_t{k} : -std::int64_t{k}) >= index.grid.size()) return out;  // no period that far; keeps period - k and -k from overflowing (fuzz: k = INT_MIN)
    for (std::size_t u = 0; u + 1 < index.unit_start.size(); ++u) {
        const std::size_t begin = index.unit_start[u], end = index.unit_start[u + 1];
        for (std::size_t j = begin; j < end; ++j) {
            const std::size_t row = index.rows_by_unit[j];
            const std::int32_t target = index.period_of_row[row] - k;
            // Positions strictly increase within a unit, so the target is at most |k|
            // entries away: a short scan, never "the previous row".
            if (k > 0) {
                for (std::size_t m = j; m > begin && j - m < static_cast<std::size_t>(k);) {
                    --m;
                    const std::size_t other = index.rows_by_unit[m];
                    const std::int32_t p = index.period_of_row[other];
                    if (p < target) break;
                    if (p == target) {
                        if (!values.is_missing(other)) {
                            out.value[row] = values.value(other);
                            out.defined[row] = 1;
                        }
                        break;
                    }
                }
            } else {
                for (std::size_t m = j + 1; m < end && m - j <= static_cast<std::size_t>(-k); ++m) {
                    const std::size_t other = index.rows_by_unit[m];
                    const std::int32_t p = index.period_of_row[other];
                    if (p > target) break;
                    if (p == target) {
                        if (!values.is_missing(other)) {
                            out.value[row] = values.value(other);
                            out.defined[row] = 1;
                        }
                        break;
                    }
                }
            }
        }
    }
    return out;
}

Series difference(const Column& values, const PanelIndex& index, int k) {
    if (k == 0) throw Error("difference: the order k must not be 0");
    Series out = lag(values, index, k);
    for (std::size_t i = 0; i < index.n_rows; ++i) {
        if (out.defined[i] && usable(values, index, i)) {
            out.value[i] = values.value(i) - out.value[i];
        } else {
            out.value[i] = 0.0;
            out.defined[i] = 0;
        }
    }
    return out;
}

Series unit_means(const Column& values, const PanelIndex& index) {
    check_values(values, index);
    Series out = undefined_series(index.n_rows);
    for (std::size_t u = 0; u + 1 < index.unit_start.size(); ++u) {
        long double sum = 0;
        std::size_t count = 0;
        for (std::size_t j = index.unit_start[u]; j < index.unit_start[u + 1]; ++j) {
            const std::size_t row = index.rows_by_unit[j];
            if (values.is_missing(row)) continue;
            sum += values.value(row);
            ++count;
        }
        if (count == 0) continue;
        const double mean = static_cast<double>(sum / static_cast<long double>(count));
        for (std::size_t j = index.unit_start[u]; j < index.unit_start[u + 1]; ++j) {
            const std::size_t row = index.rows_by_unit[j];
            if (values.is_missing(row)) continue;
            out.value[row] = mean;
            out.defined[row] = 1;
        }
    }
    return out;
}

Series demean(const Column& values, const PanelIndex& index) {
    Series out = unit_means(values, index);
    for (std::size_t i = 0; i < index.n_rows; ++i)
        if (out.defined[i]) out.value[i] = values.value(i) - out.value[i];
    return out;
}

Series quasi_demean(const Column& values, const PanelIndex& index,
                    const std::vector<double>& theta_by_unit) {
    if (theta_by_unit.size() != index.n_units())
        throw Error("quasi-demeaning: " + std::to_string(theta_by_unit.size()) + " theta values for " +
                    std::to_string(index.n_units()) + " units");
    Series out = unit_means(values, index);
    for (std::size_t i = 0; i < index.n_rows; ++i)
        if (out.defined[i])
            out.value[i] = values.value(i) -
                           theta_by_unit[static_cast<std::size_t>(index.unit_of_row[i])] * out.value[i];
    return out;
}

Series lag(const Column& values, const UnitColumn& units, const Column& periods, int k,
           std::size_t first_row_number) {
    return lag(values, build_index(units, periods, first_row_number), k);
}

Series difference(const Column& values, const UnitColumn& units, const Column& periods, int k,
                  std::size_t first_row_number) {
    return difference(values, build_index(units, periods, first_row_number), k);
}

Series demean(const Column& values, const UnitColumn& units, std::size_t first_row_number) {
    detail::check_length(values.size(), "values", units.size(), "units");
    return demean(values, build_unit_groups(units, first_row_number));
}

Series unit_means(const Column& values, const UnitColumn& units, std::size_t first_row_number) {
    detail::check_length(values.size(), "values", units.size(), "units");
    return unit_means(values, build_unit_groups(units, first_row_number));
}

PeriodIndicators period_indicators(const Column& periods, bool omit_first,
                                   std::size_t first_row_number) {
    detail::check_column(periods, periods.size(), "periods", "periods", first_row_number);
    std::vector<double> grid;
    for (std::size_t i = 0; i < periods.size(); ++i)
        if (!periods.is_missing(i)) grid.push_back(periods.value(i));
    std::sort(grid.begin(), grid.end());
    grid.erase(std::unique(grid.begin(), grid.end()), grid.end());
    PeriodIndicators out;
    const std::size_t first = omit_first && !grid.empty() ? 1 : 0;
    for (std::size_t g = first; g < grid.size(); ++g) {
        out.periods.push_back(grid[g]);
        out.labels.push_back("period " + format_number(grid[g]));
        Series s;
        s.value.assign(periods.size(), 0.0);
        s.defined.assign(periods.size(), 0);
        out.columns.push_back(std::move(s));
    }
    for (std::size_t i = 0; i < periods.size(); ++i) {
        if (periods.is_missing(i)) continue;
        const std::size_t g = static_cast<std::size_t>(
            std::lower_bound(grid.begin(), grid.end(), periods.value(i)) - grid.begin());
        for (std::size_t c = 0; c < out.columns.size(); ++c) {
            out.columns[c].defined[i] = 1;
            out.columns[c].value[i] = (c + first == g) ? 1.0 : 0.0;
        }
    }
    return out;
}

}  // namespace weft
