// Plain C++ images of what cells deliver and what a function returns, so that
// the functions themselves know nothing of UNO (component.cxx converts).
#pragma once

#include <cstddef>
#include <memory>
#include <new>
#include <stdexcept>
#include <string>
#include <utility>
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

// Blocks of at least a megabyte for column buffers: a freed block is kept (up to a
// bound) and handed out again for the same size, so that the columns of the next call
// land on memory the process already has. Fresh memory costs a page fault and the
// kernel's zeroing per 4 KB page, which on 1,000,000 x 10 cells was more than reading
// the cells. Thread-safe.
void* take_block(std::size_t bytes);
void give_block(void* p, std::size_t bytes) noexcept;
constexpr std::size_t kPooledBlockBytes = std::size_t{1} << 20;

// A vector whose resize leaves new elements unwritten: a column is filled once, by
// the reader, instead of being zeroed first (a million-row column is 8 MB); large
// buffers come from the blocks above.
template <class T>
struct UninitializedAllocator : std::allocator<T> {
    template <class U>
    struct rebind {
        using other = UninitializedAllocator<U>;
    };
    UninitializedAllocator() = default;
    template <class U>
    UninitializedAllocator(const UninitializedAllocator<U>&) noexcept {}
    T* allocate(std::size_t n) {
        if (n * sizeof(T) < kPooledBlockBytes) return std::allocator<T>::allocate(n);
        return static_cast<T*>(take_block(n * sizeof(T)));
    }
    void deallocate(T* p, std::size_t n) noexcept {
        if (n * sizeof(T) < kPooledBlockBytes) std::allocator<T>::deallocate(p, n);
        else give_block(p, n * sizeof(T));
    }
    template <class U>
    void construct(U* p) noexcept {
        ::new (static_cast<void*>(p)) U;
    }
    template <class U, class... Args>
    void construct(U* p, Args&&... args) {
        ::new (static_cast<void*>(p)) U(std::forward<Args>(args)...);
    }
};
template <class T>
using Buffer = std::vector<T, UninitializedAllocator<T>>;

// One column read as numbers: values[i] with missing[i] == 0, or missing[i] == 1.
struct NumericColumn {
    Buffer<double> values;
    Buffer<unsigned char> missing;
};

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

    // A shortcut for reading numbers, where a grid has one: rows [start, end) of the
    // columns first_col .. first_col + n_cols - 1 in one pass over the rows. A cell that
    // holds a plain number goes to values[k][i] with missing[k][i] = 0 (i = r - start,
    // k = c - first_col); every other cell gets values 0 and missing 1 and its (i, c)
    // is appended to `others`, in row-major order, for the caller to read with cell().
    // false (nothing written) when the grid has no shortcut.
    virtual bool read_number_block(std::size_t /*first_col*/, std::size_t /*n_cols*/, std::size_t /*start*/,
                                   std::size_t /*end*/, double* const* /*values*/,
                                   unsigned char* const* /*missing*/,
                                   std::vector<std::pair<std::size_t, std::size_t>>& /*others*/) const {
        return false;
    }
    // A second shortcut, where a grid read its numbers already (while its cells were
    // keyed): hands over column c, rows [start, end), as read_number_block would fill
    // it, with the rows (i = r - start, ascending) left for cell() in `others`. Each
    // column is handed over once; false when it is not there (then use the above).
    virtual bool take_numbers(std::size_t /*c*/, std::size_t /*start*/, std::size_t /*end*/,
                              NumericColumn& /*out*/, std::vector<std::size_t>& /*others*/) const {
        return false;
    }
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
