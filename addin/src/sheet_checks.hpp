// Checks of what a sheet passes in, made while the ranges are read and before any
// fit: ranges that start on different sheet rows, a number where a header belongs,
// a number or a date stored as text, an error value in a cell. Each refusal is a
// UserError that names the cell (Data!D57 when the office passed the range itself,
// else "row 57 of regressors"); text read as missing and hidden rows become
// warnings (FUNCTIONS.md "Errors in cells").
#pragma once

#include "cells.hpp"

#include <cstddef>
#include <initializer_list>
#include <string>
#include <vector>

namespace weft_addin {

// A range argument and the name messages give it.
struct NamedGrid {
    const char* name;
    const CellGrid* grid;
};

// "Data!D57", or "row 57, column 2 of regressors" when the place is unknown
// (r and c zero-based within the range).
std::string cell_name(const NamedGrid& g, std::size_t r, std::size_t c);
// The start of a message about that cell: "Data!D57 (in regressors)", or
// "row 57, column 2 of regressors".
std::string located(const NamedGrid& g, std::size_t r, std::size_t c);

// Rows are paired by sheet row: every range whose place is known must start on
// the same sheet row as the first one. The message names both starts and the
// range to give instead.
void require_same_start(std::initializer_list<NamedGrid> ranges);

// The header rules: when `lead` (the outcome, or the values of a helper function)
// starts with a text, the first cell of every range in `numeric` must be text or
// blank; when it starts with a number or a blank, none of them may start with a
// text. Units are not checked (a unit id may be text in any row).
void require_consistent_headers(const NamedGrid& lead, bool header,
                                std::initializer_list<NamedGrid> numeric);

// A text that reads as a number in the C locale or with a decimal comma
// ("-1.2", "-1,2", "1 234,5", "3e-2"), or as a date written out ("2019-03-01",
// "01/03/2019", "1.3.2019").
bool reads_as_number(const std::string& text);
bool reads_as_date(const std::string& text);

// The cells of numeric columns that are not numbers. note() throws for an error
// value or a number or date stored as text and counts any other text (read as
// missing); warnings() says, per range, how many and the first.
class TextCells {
public:
    void note(const NamedGrid& g, std::size_t r, std::size_t c, const Cell& cell);
    // For a column where text is valid (units): only error values are refused.
    static void note_error(const NamedGrid& g, std::size_t r, std::size_t c, const Cell& cell);
    std::vector<std::string> warnings() const;

private:
    struct Seen {
        std::string range;
        std::size_t count = 0;
        std::string first;  // address and text of the first
    };
    std::vector<Seen> seen_;
};

// "rows 5 to 7 of the ranges are hidden or filtered out ..." for each range whose
// place reports hidden rows among rows [start, end).
std::vector<std::string> hidden_row_warnings(std::initializer_list<NamedGrid> ranges,
                                             std::size_t start, std::size_t end);

}  // namespace weft_addin
