// Panel index: unit numbering, the period grid, duplicate rule, structure report.
#include "weft/panel.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <limits>
#include <numeric>
#include <string>

#include <Eigen/Core>

#include "weft/error.hpp"
#include "weft/buffer.hpp"
#include "internal.hpp"

namespace weft {

std::string format_number(double value) {
    if (value == 0) return "0";
    char buffer[40];
    // whole numbers (years, ids, date serials) in plain digits, never "1.94e+03"
    if (std::fabs(value) < 1e15 && value == std::floor(value)) {
        // exact in a 64-bit integer; digits by hand (snprintf is slow for the many unit
        // labels of a large panel)
        long long v = static_cast<long long>(value);
        const bool negative = v < 0;
        unsigned long long a = negative ? 0ull - static_cast<unsigned long long>(v) : static_cast<unsigned long long>(v);
        char* end = buffer + sizeof buffer;
        char* at = end;
        do {
            *--at = static_cast<char>('0' + a % 10);
            a /= 10;
        } while (a != 0);
        if (negative) *--at = '-';
        return std::string(at, end);
    }
    for (int digits = 1; digits <= 17; ++digits) {
        std::snprintf(buffer, sizeof buffer, "%.*g", digits, value);
        if (std::strtod(buffer, nullptr) == value) break;
    }
    return buffer;
}

namespace detail {

std::string column_label(const std::string& name, const char* fallback) {
    if (!name.empty()) return "\"" + name + "\"";
    return fallback;
}

void check_length(std::size_t expected, const char* expected_what, std::size_t got,
                  const std::string& what) {
    if (expected != got)
        throw Error(what + " has " + std::to_string(got) + " rows but " + expected_what + " has " +
                    std::to_string(expected) + "; give all columns the same rows");
}

void check_column_shape(const Column& column, std::size_t n_rows, const char* expected_what,
                        const std::string& what) {
    check_length(n_rows, expected_what, column.size(), what);
    if (column.mask_size() != 0 && column.mask_size() != column.size())
        throw Error(what + ": the missing-value mask has " + std::to_string(column.mask_size()) +
                    " entries for " + std::to_string(column.size()) + " rows");
}

void check_column(const Column& column, std::size_t n_rows, const char* expected_what,
                  const std::string& what, std::size_t first_row_number) {
    check_column_shape(column, n_rows, expected_what, what);
    // every value finite: one vectorised test (the common case); else find the row
    if (column.mask() == nullptr &&
        Eigen::Map<const Eigen::ArrayXd>(column.data(), static_cast<Eigen::Index>(column.size()))
            .isFinite()
            .all())
        return;
    for (std::size_t i = 0; i < column.size(); ++i) {
        if (column.is_missing(i)) continue;
        if (!std::isfinite(column.value(i)))
            throw Error(what + ", row " + std::to_string(first_row_number + i) +
                        ": the value is not a finite number (NaN or infinity); leave the cell "
                        "blank or enter a number");
    }
}

namespace {

void check_units(const UnitColumn& units, std::size_t first_row_number) {
    if (!units.borrowed() && !units.text.empty() && !units.numbers.empty())
        throw Error("units: give the unit ids either as text or as numbers, not both");
    const std::size_t n = units.size();
    if (units.mask_size() != 0 && units.mask_size() != n)
        throw Error("units: the missing-value mask has " + std::to_string(units.mask_size()) +
                    " entries for " + std::to_string(n) + " rows");
    if (!units.is_text()) {
        for (std::size_t i = 0; i < n; ++i) {
            if (units.is_missing(i)) continue;
            if (!std::isfinite(units.number_data()[i]))
                throw Error("units, row " + std::to_string(first_row_number + i) +
                            ": the unit id is not a finite number; leave the cell blank or "
                            "enter an id");
        }
    }
}

// Ids whose rows are already in (unit, period) order: number and label the units.
void label_sorted(const UnitColumn& units, const std::vector<std::size_t>& rows, PanelIndex& index) {
    const std::size_t n = units.size();
    assign_large(index.unit_of_row, n, std::int32_t{-1});
    assign_large(index.period_of_row, n, std::int32_t{-1});
    index.unit_labels.clear();
    index.unit_start.clear();
    std::int32_t id = -1;
    for (std::size_t k = 0; k < rows.size(); ++k) {
        const std::size_t i = rows[k];
        const bool first = units.is_text() ? k == 0 || units.id_text(rows[k - 1]) != units.id_text(i)
                                           : k == 0 || units.number_data()[rows[k - 1]] != units.number_data()[i];
        if (first) {
            index.unit_start.push_back(k);
            index.unit_labels.push_back(units.is_text() ? std::string(units.id_text(i))
                                                        : format_number(units.number_data()[i]));
            ++id;
        }
        index.unit_of_row[i] = id;
    }
    index.unit_start.push_back(rows.size());
}

// Sort rows with a valid unit (and period, when given) by (unit, period, row).
// Returns the sorted rows; fills unit numbers and labels.
std::vector<std::size_t> group_rows(const UnitColumn& units, const Column* periods,
                                    PanelIndex& index) {
    const std::size_t n = units.size();
    std::vector<std::size_t> rows;
    reserve_large(rows, n);
    const bool none_missing = !units.is_text() && units.mask() == nullptr &&
                              (periods == nullptr || periods->mask() == nullptr);
    if (none_missing) {
        rows.resize(n);
        std::iota(rows.begin(), rows.end(), std::size_t{0});
    } else {
        for (std::size_t i = 0; i < n; ++i) {
            if (units.is_missing(i)) continue;
            if (periods != nullptr && periods->is_missing(i)) continue;
            rows.push_back(i);
        }
    }
    index.n_rows = n;
    bool sorted = false;   // the rows came in (unit, period) order
    if (!units.is_text() && periods != nullptr) {
        // numeric ids with periods: input usually comes sorted, tested pair by pair
        const double* u = units.number_data();
        const double* p = periods->data();
        sorted = true;
        for (std::size_t k = 1; k < rows.size() && sorted; ++k) {
            const std::size_t a = rows[k - 1], b = rows[k];
            sorted = u[a] < u[b] || (u[a] == u[b] && (p[a] < p[b] || (p[a] == p[b] && a < b)));
        }
    }
    if (units.is_text() && periods != nullptr) {
        // text ids already in (unit, period) order: the same test, stopping at the first
        // row out of place (at once for a sheet sorted by period)
        sorted = true;
        for (std::size_t k = 1; k < rows.size() && sorted; ++k) {
            const std::size_t a = rows[k - 1], b = rows[k];
            const int c = units.id_text(a).compare(units.id_text(b));
            const double pa = periods->value(a), pb = periods->value(b);
            sorted = c < 0 || (c == 0 && (pa < pb || (pa == pb && a < b)));
        }
    }
    if (sorted) {
        label_sorted(units, rows, index);
    } else {
        // any other order or text ids: hashed once, counting sort (panel_hash.cpp)
        rows = group_rows_hashed(units, periods, rows, index);
        sorted = rows.size() == n;
        for (std::size_t k = 0; k < rows.size() && sorted; ++k) sorted = rows[k] == k;
    }
    // nothing skipped and nothing moved: rows_by_unit is 0, 1, ..., n - 1
    index.in_input_order = periods != nullptr && sorted && rows.size() == n;
    return rows;
}

// A repeated (unit, period) pair: the message names the unit, the period and both rows
// (row numbers as the host counts them).
Error duplicate_pair(const std::string& unit, double period, std::size_t first_row, std::size_t second_row) {
    return Error("unit \"" + unit + "\" has two rows for period " + format_number(period) + " (rows " +
                 std::to_string(first_row) + " and " + std::to_string(second_row) +
                 "); keep one row per unit and period");
}

// The common case in one pass over the rows: numeric unit ids and periods, nothing
// missing, rows sorted by unit, then period. Fills the index as make_index would and
// returns true; returns false, with the index to be rebuilt, as soon as a row leaves
// that case (a value that is not finite, a row out of order, many periods), so that the
// general path below decides and words any message. A repeated (unit, period) pair is
// reported only once the whole input is known to be in this case: the general path
// would report an earlier problem (a bad id further down) first.
bool index_sorted_numbers(const UnitColumn& units, const Column& periods, PanelIndex& index,
                          bool reject_duplicates, std::size_t& duplicates) {
    const std::size_t n = units.size();
    if (units.is_text() || units.mask() != nullptr || periods.mask() != nullptr || periods.size() != n || n == 0)
        return false;
    const double* u = units.number_data();
    const double* p = periods.data();
    index.n_rows = n;
    assign_large(index.unit_of_row, n, std::int32_t{0});
    assign_large(index.period_of_row, n, std::int32_t{0});
    std::int32_t* unit_of_row = index.unit_of_row.data();
    std::int32_t* period_of_row = index.period_of_row.data();
    std::vector<double>& grid = index.grid;
    grid.clear();
    bool renumber = false;           // a period was inserted inside the grid: positions so far are stale
    std::size_t first_duplicate = 0;  // its later row (0: none; row 0 cannot be one)
    double last_u = 0, last_p = 0;
    std::int32_t id = -1;
    std::size_t g = 0;               // grid position of the last row's period
    for (std::size_t i = 0; i < n; ++i) {
        const double ui = u[i], pi = p[i];
        if (!std::isfinite(ui) || !std::isfinite(pi)) return false;
        if (i == 0 || ui != last_u) {
            if (i > 0 && !(ui > last_u)) return false;
            ++id;
            index.unit_start.push_back(i);
            index.unit_labels.push_back(format_number(ui));
            last_u = ui;
        } else if (!(pi > last_p)) {
            if (pi != last_p) return false;
            ++duplicates;
            if (first_duplicate == 0) first_duplicate = i;
        }
        last_p = pi;
        // rows of a unit come in period order: the same period, the next one, or the first
        if (g < grid.size() && grid[g] == pi) {
        } else if (g + 1 < grid.size() && grid[g + 1] == pi) {
            ++g;
        } else if (!grid.empty() && grid[0] == pi) {
            g = 0;
        } else {
            const auto it = std::lower_bound(grid.begin(), grid.end(), pi);
            g = static_cast<std::size_t>(it - grid.begin());
            if (it == grid.end() || *it != pi) {
                if (grid.size() >= 4096) return false;
                if (it != grid.end()) renumber = true;
                grid.insert(it, pi);
            }
        }
        unit_of_row[i] = id;
        period_of_row[i] = static_cast<std::int32_t>(g);
    }
    index.unit_start.push_back(n);
    if (renumber) {
        // positions on the final grid: a pointer that only moves forward within a unit
        for (std::size_t v = 0; v + 1 < index.unit_start.size(); ++v) {
            std::size_t at = 0;
            for (std::size_t i = index.unit_start[v]; i < index.unit_start[v + 1]; ++i) {
                while (grid[at] < p[i]) ++at;
                period_of_row[i] = static_cast<std::int32_t>(at);
            }
        }
    }
    if (reject_duplicates && first_duplicate != 0) {
        const std::size_t i = first_duplicate;
        throw duplicate_pair(index.unit_labels[static_cast<std::size_t>(unit_of_row[i])], p[i],
                             index.first_row_number + i - 1, index.first_row_number + i);
    }
    index.rows_by_unit = RowOrder::in_order(n);
    index.in_input_order = true;
    return true;
}

}  // namespace

// Index with a choice of what to do with repeated (unit, period) pairs.
PanelIndex make_index(const UnitColumn& units, const Column& periods, std::size_t first_row_number,
                      bool reject_duplicates, std::size_t* duplicate_count) {
    {
        PanelIndex index;
        index.first_row_number = first_row_number;
        std::size_t duplicates = 0;
        if (index_sorted_numbers(units, periods, index, reject_duplicates, duplicates)) {
            if (duplicate_count != nullptr) *duplicate_count = duplicates;
            return index;
        }
    }
    check_units(units, first_row_number);
    check_column(periods, units.size(), "units", "periods", first_row_number);
    PanelIndex index;
    index.first_row_number = first_row_number;
    std::vector<std::size_t> rows = group_rows(units, &periods, index);

    // Distinct periods: a panel has few periods and many rows, so keep a small sorted
    // list and binary-search it (falling back to sorting everything when the periods
    // turn out to be many).
    std::vector<double> grid;
    {
        double last = std::numeric_limits<double>::quiet_NaN();
        bool many = false;
        std::size_t hint = 0;  // grid position of the last period seen
        for (std::size_t i : rows) {
            const double p = periods.value(i);
            if (p == last) continue;
            last = p;
            // rows of a unit come in period order: the next grid period, or the first
            if (hint + 1 < grid.size() && grid[hint + 1] == p) {
                ++hint;
                continue;
            }
            if (!grid.empty() && grid[0] == p) {
                hint = 0;
                continue;
            }
            auto it = std::lower_bound(grid.begin(), grid.end(), p);
            hint = static_cast<std::size_t>(it - grid.begin());
            if (it != grid.end() && *it == p) continue;
            if (grid.size() >= 4096) {
                many = true;
                break;
            }
            grid.insert(it, p);
        }
        if (many) {
            grid.clear();
            grid.reserve(rows.size());
            for (std::size_t i : rows) grid.push_back(periods.value(i));
            std::sort(grid.begin(), grid.end());
            grid.erase(std::unique(grid.begin(), grid.end()), grid.end());
        }
    }
    index.grid = std::move(grid);
    // Grid positions: rows of a unit are sorted by period, so a pointer that only moves
    // forward finds them in O(rows + grid) per unit. A row with the period of the row
    // before it in its unit repeats a (unit, period) pair.
    std::size_t duplicates = 0;
    for (std::size_t u = 0; u + 1 < index.unit_start.size(); ++u) {
        std::size_t g = 0;
        for (std::size_t k = index.unit_start[u]; k < index.unit_start[u + 1]; ++k) {
            const std::size_t i = rows[k];
            const double p = periods.value(i);
            if (index.grid[g] > p) g = 0;  // guard only: rows are sorted by period
            while (index.grid[g] < p) ++g;
            index.period_of_row[i] = static_cast<std::int32_t>(g);
            if (k == index.unit_start[u]) continue;
            const std::size_t prev = rows[k - 1];
            if (periods.value(prev) != p) continue;
            ++duplicates;
            if (reject_duplicates)
                throw duplicate_pair(index.unit_labels[u], p, first_row_number + prev, first_row_number + i);
        }
    }
    if (duplicate_count != nullptr) *duplicate_count = duplicates;
    index.rows_by_unit = std::move(rows);
    return index;
}

}  // namespace detail

PanelIndex build_index(const UnitColumn& units, const Column& periods, std::size_t first_row_number) {
    return detail::make_index(units, periods, first_row_number, true, nullptr);
}

PanelIndex build_unit_groups(const UnitColumn& units, std::size_t first_row_number) {
    detail::check_units(units, first_row_number);
    PanelIndex index;
    index.first_row_number = first_row_number;
    index.rows_by_unit = detail::group_rows(units, nullptr, index);
    return index;
}

StructureReport describe_structure(const UnitColumn& units, const Column& periods,
                                   std::size_t first_row_number) {
    std::size_t duplicates = 0;
    const PanelIndex index = detail::make_index(units, periods, first_row_number, false, &duplicates);
    StructureReport report;
    report.rows_input = index.n_rows;
    report.rows = index.rows_by_unit.size();
    report.rows_missing = report.rows_input - report.rows;
    report.units = index.n_units();
    report.periods = index.n_periods();
    report.duplicate_pairs = duplicates;
    std::vector<double> distinct_per_unit;
    distinct_per_unit.reserve(index.n_units());
    bool all_full = true;
    for (std::size_t u = 0; u < index.n_units(); ++u) {
        const std::size_t begin = index.unit_start[u], end = index.unit_start[u + 1];
        if (end - begin == 1) ++report.single_row_units;
        std::size_t distinct = 0;
        std::int32_t last = -1;
        for (std::size_t k = begin; k < end; ++k) {
            const std::int32_t p = index.period_of_row[index.rows_by_unit[k]];
            if (p != last) ++distinct;
            last = p;
        }
        const std::int32_t first_p = index.period_of_row[index.rows_by_unit[begin]];
        const std::int32_t last_p = index.period_of_row[index.rows_by_unit[end - 1]];
        const std::size_t span = static_cast<std::size_t>(last_p - first_p) + 1;
        if (span > distinct) {
            report.gaps += span - distinct;
            ++report.units_with_gaps;
        }
        if (distinct != index.n_periods()) all_full = false;
        distinct_per_unit.push_back(static_cast<double>(distinct));
    }
    report.balanced = report.units > 0 && all_full && duplicates == 0;
    if (!distinct_per_unit.empty()) {
        std::sort(distinct_per_unit.begin(), distinct_per_unit.end());
        const std::size_t m = distinct_per_unit.size();
        report.min_periods = distinct_per_unit.front();
        report.max_periods = distinct_per_unit.back();
        report.median_periods = (m % 2 == 1) ? distinct_per_unit[m / 2]
                                             : 0.5 * (distinct_per_unit[m / 2 - 1] + distinct_per_unit[m / 2]);
    }
    return report;
}

}  // namespace weft
