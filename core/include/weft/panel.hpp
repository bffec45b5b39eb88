// weft/panel.hpp -- input columns, the panel index and the structure report.
//
// Contract:
// - Input columns are copied by the host into these plain structs. A numeric Column is
//   doubles plus an optional missing mask (empty = nothing missing; otherwise the same
//   length, nonzero = the cell is missing/blank/non-numeric). A missing cell drops its
//   row (listwise) and is counted. A NaN or infinity in a cell NOT marked missing is a
//   weft::Error naming the column and the row.
// - Unit ids are text OR numbers (UnitColumn: fill exactly one of `text`, `numbers`;
//   a host with a mixed column converts the numbers to text). An empty text counts as
//   missing. Periods are numbers (dates are numbers in the sheet).
// - Row numbers in messages are first_row_number + (0-based position), so a host
//   that passes first_row_number = 2 (data below a header in row 1) gets "row 12"
//   meaning sheet row 12.
// - PanelIndex (CONVENTIONS.md "Panel index"): the period grid is the sorted list of
//   distinct period values among rows with a valid unit and period; two periods are
//   adjacent when they are neighbours on that grid. Units are numbered in sorted order
//   (numbers ascending, text by byte order). build_index() raises weft::Error on a
//   repeated (unit, period) pair, naming the unit, the period and both rows.
//   Missing values in outcome/regressors do NOT change the grid (only units/periods do).
// - describe_structure() never throws on duplicates (it counts them); it still throws
//   on a length mismatch or a NaN/Inf period not marked missing.
#pragma once

#include <cstddef>
#include <cstdint>
#include <iterator>
#include <utility>
#include <string>
#include <string_view>
#include <vector>

namespace weft {

struct Column {
    std::string name;                   // header text; used for term names and messages
    std::vector<double> values;
    std::vector<std::uint8_t> missing;  // empty = nothing missing

    // Borrowed storage: a host's arrays read in place (weft_panel_borrow_* in the C
    // interface; the host keeps them valid and unchanged while any user of this column
    // lives). When borrowed_values is set, it and borrowed_missing (null = nothing
    // missing) are the column, and values/missing are empty. Readers use size(),
    // data(), value(), mask() and is_missing(), which serve both kinds.
    const double* borrowed_values = nullptr;
    const std::uint8_t* borrowed_missing = nullptr;
    std::size_t borrowed_size = 0;

    static Column borrow(std::string name, const double* values, const std::uint8_t* missing, std::size_t n) {
        Column c;
        c.name = std::move(name);
        c.borrowed_values = values;
        c.borrowed_missing = missing;
        c.borrowed_size = n;
        return c;
    }
    bool borrowed() const { return borrowed_values != nullptr; }
    std::size_t size() const { return borrowed() ? borrowed_size : values.size(); }
    const double* data() const { return borrowed() ? borrowed_values : values.data(); }
    double value(std::size_t row) const { return data()[row]; }
    // The mask, or null when nothing is missing.
    const std::uint8_t* mask() const {
        if (borrowed()) return borrowed_missing;
        return missing.empty() ? nullptr : missing.data();
    }
    // Entries of the owned mask (0 = none); a borrowed mask has size() entries.
    std::size_t mask_size() const { return borrowed() ? (borrowed_missing ? borrowed_size : 0) : missing.size(); }
    bool is_missing(std::size_t row) const {
        const std::uint8_t* m = mask();
        return m != nullptr && m[row] != 0;
    }
};

struct UnitColumn {
    std::string name;
    std::vector<std::string> text;      // unit ids as text, or
    std::vector<double> numbers;        // unit ids as numbers (exactly one is filled)
    std::vector<std::uint8_t> missing;  // empty = nothing missing

    // Borrowed storage (weft_panel_borrow_units_* in the C interface; the host keeps
    // the arrays valid and unchanged while any user of this column lives): numbers, or
    // text as one buffer of bytes where the id of row i is
    // bytes[offsets[i] .. offsets[i + 1]) (offsets has size() + 1 entries). The owned
    // vectors are then empty. Readers use size(), is_text(), number_data(), id_text()
    // and is_missing(), which serve both kinds.
    const double* borrowed_numbers = nullptr;
    const char* borrowed_bytes = nullptr;
    const std::size_t* borrowed_offsets = nullptr;
    const std::uint8_t* borrowed_missing = nullptr;
    std::size_t borrowed_size = 0;

    bool borrowed() const { return borrowed_numbers != nullptr || borrowed_offsets != nullptr; }
    bool is_text() const { return borrowed() ? borrowed_offsets != nullptr : !text.empty(); }
    std::size_t size() const {
        if (borrowed()) return borrowed_size;
        return is_text() ? text.size() : numbers.size();
    }
    const double* number_data() const { return borrowed_numbers != nullptr ? borrowed_numbers : numbers.data(); }
    std::string_view id_text(std::size_t row) const {
        if (borrowed_offsets != nullptr)
            return {borrowed_bytes + borrowed_offsets[row], borrowed_offsets[row + 1] - borrowed_offsets[row]};
        return text[row];
    }
    // The mask, or null when nothing is missing; mask_size() its entries (0 = none).
    const std::uint8_t* mask() const {
        if (borrowed()) return borrowed_missing;
        return missing.empty() ? nullptr : missing.data();
    }
    std::size_t mask_size() const { return borrowed() ? (borrowed_missing ? borrowed_size : 0) : missing.size(); }
    bool is_missing(std::size_t row) const {
        const std::uint8_t* m = mask();
        if (m != nullptr && m[row] != 0) return true;
        return is_text() && id_text(row).empty();
    }
};

// Everything a model function needs. All columns must have the same length.
struct PanelData {
    Column outcome;
    std::vector<Column> regressors;     // term names: Column::name, or "x1", "x2", ... if empty
    UnitColumn units;
    Column periods;
    std::size_t first_row_number = 1;   // number used in messages for input position 0
    // Observation weights (CONVENTIONS.md "Observation weights"): empty (size 0) =
    // unweighted; otherwise one per row, blank (masked) drops the row, 0 leaves it out
    // of the equation and of N, a negative or non-finite value is an error naming the
    // row. ModelSpec::weights (the model word weights=NAME) names a regressor column
    // instead; giving both is an error.
    Column weights;
};

// The input rows in unit-then-period order (PanelIndex::rows_by_unit): a list, or,
// when the input came in that order, 0, 1, ..., n - 1 held as its length alone (a
// large panel then needs no list of 8 bytes a row). Read it as a vector: size(),
// [k], iteration, ==.
class RowOrder {
public:
    RowOrder() = default;
    RowOrder(std::vector<std::size_t> rows) : rows_(std::move(rows)), n_(rows_.size()) {}  // NOLINT: converts
    static RowOrder in_order(std::size_t n) {
        RowOrder order;
        order.n_ = n;
        order.listed_ = false;
        return order;
    }
    std::size_t size() const { return n_; }
    bool empty() const { return n_ == 0; }
    std::size_t operator[](std::size_t k) const { return listed_ ? rows_[k] : k; }
    // false: 0, 1, ..., size() - 1, with no list behind it
    bool listed() const { return listed_; }

    class const_iterator {
    public:
        using iterator_category = std::random_access_iterator_tag;
        using value_type = std::size_t;
        using difference_type = std::ptrdiff_t;
        using pointer = const std::size_t*;
        using reference = std::size_t;
        const_iterator() = default;
        const_iterator(const RowOrder* order, std::size_t k) : order_(order), k_(k) {}
        std::size_t operator*() const { return (*order_)[k_]; }
        std::size_t operator[](difference_type d) const { return (*order_)[k_ + static_cast<std::size_t>(d)]; }
        const_iterator& operator++() { ++k_; return *this; }
        const_iterator operator++(int) { const_iterator at = *this; ++k_; return at; }
        const_iterator& operator--() { --k_; return *this; }
        const_iterator& operator+=(difference_type d) { k_ += static_cast<std::size_t>(d); return *this; }
        const_iterator& operator-=(difference_type d) { k_ -= static_cast<std::size_t>(d); return *this; }
        friend const_iterator operator+(const_iterator it, difference_type d) { return it += d; }
        friend const_iterator operator-(const_iterator it, difference_type d) { return it -= d; }
        friend difference_type operator-(const const_iterator& a, const const_iterator& b) {
            return static_cast<difference_type>(a.k_) - static_cast<difference_type>(b.k_);
        }
        friend bool operator==(const const_iterator& a, const const_iterator& b) { return a.k_ == b.k_; }
        friend bool operator!=(const const_iterator& a, const const_iterator& b) { return a.k_ != b.k_; }
        friend bool operator<(const const_iterator& a, const const_iterator& b) { return a.k_ < b.k_; }

    private:
        const RowOrder* order_ = nullptr;
        std::size_t k_ = 0;
    };
    const_iterator begin() const { return {this, 0}; }
    const_iterator end() const { return {this, n_}; }

    friend bool operator==(const RowOrder& a, const RowOrder& b) {
        if (a.n_ != b.n_) return false;
        for (std::size_t k = 0; k < a.n_; ++k)
            if (a[k] != b[k]) return false;
        return true;
    }

private:
    std::vector<std::size_t> rows_;
    std::size_t n_ = 0;
    bool listed_ = true;
};

// Rows grouped by unit and placed on the period grid.
struct PanelIndex {
    std::size_t n_rows = 0;                  // input rows (all of them)
    std::size_t first_row_number = 1;
    std::vector<double> grid;                // sorted distinct period values (the time grid)
    std::vector<std::string> unit_labels;    // one per unit, in unit-number order
    std::vector<std::int32_t> unit_of_row;   // per input row: unit number, -1 = unit or period missing
    std::vector<std::int32_t> period_of_row; // per input row: grid position, -1 = as above
    // CSR layout: the rows of unit u, sorted by period, are
    // rows_by_unit[unit_start[u] .. unit_start[u+1]).
    std::vector<std::size_t> unit_start;     // size n_units() + 1
    RowOrder rows_by_unit;
    // true exactly when rows_by_unit is 0, 1, ..., n_rows - 1: every row has a unit and
    // a period, and the input came sorted by unit, then period
    bool in_input_order = false;

    std::size_t n_units() const { return unit_labels.size(); }
    std::size_t n_periods() const { return grid.size(); }
    std::size_t row_number(std::size_t row) const { return first_row_number + row; }
};

// Build the index; throws weft::Error on length mismatch, NaN/Inf unit number or period
// not marked missing, or a repeated (unit, period).
PanelIndex build_index(const UnitColumn& units, const Column& periods,
                       std::size_t first_row_number = 1);

// Group rows by unit only (no periods): for demeaning and unit means. Rows whose unit is
// missing get unit -1. grid is empty, rows within a unit keep input order.
PanelIndex build_unit_groups(const UnitColumn& units, std::size_t first_row_number = 1);

// WEFT.PANEL: structure facts over units and periods.
struct StructureReport {
    std::size_t rows_input = 0;        // all rows
    std::size_t rows = 0;              // rows with a valid unit and period
    std::size_t rows_missing = 0;      // rows whose unit or period is missing
    std::size_t units = 0;
    std::size_t periods = 0;           // size of the time grid
    bool balanced = false;             // every unit has every grid period once, no duplicates
    double min_periods = 0;            // distinct periods per unit
    double median_periods = 0;
    double max_periods = 0;
    std::size_t gaps = 0;              // grid periods missing between a unit's first and last period, summed over units
    std::size_t units_with_gaps = 0;
    std::size_t duplicate_pairs = 0;   // rows repeating an earlier (unit, period) pair
    std::size_t single_row_units = 0;  // units with exactly one row
};

StructureReport describe_structure(const UnitColumn& units, const Column& periods,
                                   std::size_t first_row_number = 1);

// Text of a number as used in labels ("period 1936", unit "7"): shortest round-trip form.
std::string format_number(double value);

}  // namespace weft
