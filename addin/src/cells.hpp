// Plain C++ images of what cells deliver and what a function returns, so that
// the functions themselves know nothing of UNO (component.cxx converts).
#pragma once

#include <cstddef>
#include <stdexcept>
#include <string>
#include <vector>

namespace weft_addin {

// One input cell. Calc hands numbers and booleans as doubles, text as text and
// a blank cell as an empty text; we keep blank apart from text. An error value
// (#DIV/0!) reaches us only through a range object: its text is the error's name.
struct Cell {
    enum class Kind : unsigned char { blank, number, text, error };
    Kind kind = Kind::blank;
    double number = 0.0;
    std::string text;

    bool is_number() const { return kind == Kind::number; }
    bool is_text() const { return kind == Kind::text; }
    bool is_blank() const { return kind == Kind::blank; }
    bool is_error() const { return kind == Kind::error; }
};

// Where a range is on the sheet: its sheet's name and its first cell (zero-based),
// known when the office passed the range itself rather than its values.
struct Place {
    std::string sheet;
    std::size_t row = 0;  // sheet row of the range's first row, 0 = row 1
    std::size_t col = 0;  // sheet column of its first column, 0 = A
    // Rows of the range that the sheet hides (hidden or filtered out), within the
    // rows kept; first_hidden is the first such row within the range.
    std::size_t hidden_rows = 0;
    std::size_t first_hidden = 0;
};

// "Data!D57": the address of cell (r, c) of a range at `p` (sheet names that are
// not plain words are quoted, 'Q1 data'!D57).
std::string cell_address(const Place& p, std::size_t r, std::size_t c);
// "Data!D2:H632": the range of rows x cols at `p`.
std::string range_address(const Place& p, std::size_t rows, std::size_t cols);

// A rectangular range read cell by cell: a Table, or the cells as the office
// passed them, converted one at a time (so a large range is never copied whole
// before its columns are built).
class CellGrid {
public:
    virtual ~CellGrid() = default;
    virtual std::size_t row_count() const = 0;        // rows kept (trailing empty rows trimmed)
    virtual std::size_t col_count() const = 0;
    virtual std::size_t given_row_count() const = 0;  // rows as the sheet passed them
    virtual Cell cell(std::size_t r, std::size_t c) const = 0;
    // Where the range is; nullptr when only its values were passed.
    virtual const Place* place() const { return nullptr; }
};

// A rectangular range, row-major.
struct Table : CellGrid {
    std::size_t rows = 0;        // rows kept (trailing empty rows trimmed)
    std::size_t cols = 0;
    std::size_t given_rows = 0;  // rows as the sheet passed them, for size checks
    std::vector<Cell> cells;
    bool placed = false;  // where is known
    Place where;

    const Cell& at(std::size_t r, std::size_t c) const { return cells[r * cols + c]; }

    std::size_t row_count() const override { return rows; }
    std::size_t col_count() const override { return cols; }
    std::size_t given_row_count() const override { return given_rows; }
    Cell cell(std::size_t r, std::size_t c) const override { return at(r, c); }
    const Place* place() const override { return placed ? &where : nullptr; }
};

// An optional scalar-or-range argument: given == false when it was omitted.
struct Arg {
    bool given = false;
    Table table;  // a scalar arrives as a 1 x 1 table

    bool is_scalar() const { return given && table.rows == 1 && table.cols == 1; }
    // The scalar cell, or a blank cell when omitted.
    const Cell& scalar() const;
};

// One result cell: blank (returned as an empty text), a number or a text.
struct OutCell {
    enum class Kind : unsigned char { blank, number, text };
    Kind kind = Kind::blank;
    double number = 0.0;
    std::string text;
};

struct OutTable {
    std::size_t rows = 0;
    std::size_t cols = 0;
    std::vector<OutCell> cells;

    OutTable() = default;
    OutTable(std::size_t r, std::size_t c) : rows(r), cols(c), cells(r * c) {}
    void set(std::size_t r, std::size_t c, double v);
    void set(std::size_t r, std::size_t c, std::string v);
    // A number, or a blank when v is not finite (never a silent NaN in a cell).
    void set_number_or_blank(std::size_t r, std::size_t c, double v);
};

// A failure the user can fix; what() is the full cell text and starts "weft: ".
class UserError : public std::runtime_error {
public:
    explicit UserError(const std::string& message_after_prefix);
    // For a message that already carries the prefix (weft_last_error's text).
    struct FullText {};
    UserError(FullText, const std::string& full_text);
};

// A one-cell result holding a message.
OutTable message_table(const std::string& text);

}  // namespace weft_addin
