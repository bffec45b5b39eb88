// The UNO component that Calc sees: XCalcFunctions (the cell functions), XAddIn
// (function-wizard texts), XServiceName (the name stored in files) and
// XServiceInfo. Every method converts the cells to plain tables, calls
// functions.cxx and converts back, and catches everything: nothing may escape
// into the office, and only a returned text reaches the user.

#include "block_sizer.hpp"
#include "cells.hpp"
#include "event_cells.hpp"
#include "functions.hpp"
#include "sheet_ranges.hpp"
#include "texts.hpp"
#include "trace.hpp"
#include "warnings_view.hpp"

#include <org/weft/XCalcFunctions.hpp>

#include <com/sun/star/lang/Locale.hpp>
#include <com/sun/star/lang/XServiceInfo.hpp>
#include <com/sun/star/lang/XServiceName.hpp>
#include <com/sun/star/sheet/XAddIn.hpp>
#include <com/sun/star/table/XCellRange.hpp>
#include <com/sun/star/uno/XComponentContext.hpp>
#include <cppuhelper/implbase4.hxx>
#include <cppuhelper/supportsservice.hxx>
#include <rtl/ustring.hxx>
#include <sal/types.h>

#include <algorithm>
#include <chrono>
#include <cstdint>
#include <exception>
#include <new>
#include <string>
#include <vector>

namespace css = com::sun::star;
using css::uno::Any;
using css::uno::Sequence;
using rtl::OUString;

namespace weft_addin {

namespace {

// File-format contract: formulas are stored as this service name plus the
// method name (ORG.WEFT.CALCFUNCTIONS.ESTIMATES). Never change it.
const char* const service_name = "org.weft.CalcFunctions";
const char* const implementation_name = "org.weft.CalcFunctions";
const char* const addin_service = "com.sun.star.sheet.AddIn";

using AnyRows = Sequence<Sequence<Any>>;

OUString to_ou(const std::string& s) {
    return OUString(s.data(), static_cast<sal_Int32>(s.size()), RTL_TEXTENCODING_UTF8);
}

OUString to_ou(const char* s) { return OUString::createFromAscii(s); }

std::string to_utf8(const OUString& s) {
    const rtl::OString o = rtl::OUStringToOString(s, RTL_TEXTENCODING_UTF8);
    return std::string(o.getStr(), static_cast<std::size_t>(o.getLength()));
}

// A blank cell arrives as an empty text (or void for an omitted argument).
bool is_blank(const Any& a) {
    switch (a.getValueTypeClass()) {
    case css::uno::TypeClass_VOID:
        return true;
    case css::uno::TypeClass_STRING:
        return static_cast<const OUString*>(a.getValue())->isEmpty();
    default:
        return false;
    }
}

// A text cell as to_cell reads it: a non-empty string.
bool is_text_value(const Any& a) {
    return a.getValueTypeClass() == css::uno::TypeClass_STRING &&
           !static_cast<const OUString*>(a.getValue())->isEmpty();
}

// Numeric type classes other than double (cells pass doubles; an API caller may not).
bool other_number_class(css::uno::TypeClass t) {
    switch (t) {
    case css::uno::TypeClass_FLOAT:
    case css::uno::TypeClass_LONG:
    case css::uno::TypeClass_SHORT:
    case css::uno::TypeClass_HYPER:
    case css::uno::TypeClass_BYTE:
    case css::uno::TypeClass_UNSIGNED_LONG:
    case css::uno::TypeClass_UNSIGNED_SHORT:
    case css::uno::TypeClass_UNSIGNED_HYPER:
        return true;
    default:
        return false;
    }
}

Cell to_cell(const Any& a) {
    Cell c;
    const css::uno::TypeClass type = a.getValueTypeClass();
    if (type == css::uno::TypeClass_DOUBLE || other_number_class(type)) {
        double v = 0.0;
        if (a >>= v) {
            c.kind = Cell::Kind::number;
            c.number = v;
        }
        return c;
    }
    switch (type) {
    case css::uno::TypeClass_BOOLEAN: {
        bool b = false;
        a >>= b;
        c.kind = Cell::Kind::number;
        c.number = b ? 1.0 : 0.0;
        break;
    }
    case css::uno::TypeClass_STRING: {
        OUString s;
        a >>= s;
        if (!s.isEmpty()) {
            c.kind = Cell::Kind::text;
            c.text = to_utf8(s);
        }
        break;
    }
    default:
        break;  // nothing else comes from cells; treat it as blank
    }
    return c;
}

// Rows up to and including the last row that holds a non-blank cell. A
// whole-column reference passes all 1,048,576 rows; scanning from the bottom
// stops at the data, so the cost is the blank tail, not a conversion of it.
std::size_t used_rows(const AnyRows& rows) {
    for (sal_Int32 r = rows.getLength(); r > 0; --r) {
        const Sequence<Any>& row = rows[r - 1];
        for (sal_Int32 c = 0; c < row.getLength(); ++c)
            if (!is_blank(row[c])) return static_cast<std::size_t>(r);
    }
    return 0;
}

Table to_table(const AnyRows& rows, std::size_t keep) {
    Table t;
    t.given_rows = static_cast<std::size_t>(rows.getLength());
    t.rows = keep;
    for (std::size_t r = 0; r < keep; ++r)
        t.cols = std::max(t.cols, static_cast<std::size_t>(rows[static_cast<sal_Int32>(r)].getLength()));
    if (keep == 0 && rows.getLength() > 0) t.cols = static_cast<std::size_t>(rows[0].getLength());
    // Built in place, one write per cell (a resize then assignment writes twice).
    t.cells.reserve(t.rows * t.cols);
    for (std::size_t r = 0; r < keep; ++r) {
        const Sequence<Any>& row = rows[static_cast<sal_Int32>(r)];
        const Any* cells = row.getConstArray();
        const std::size_t n = static_cast<std::size_t>(row.getLength());
        for (std::size_t c = 0; c < n; ++c) t.cells.push_back(to_cell(cells[c]));
        for (std::size_t c = n; c < t.cols; ++c) t.cells.emplace_back();
    }
    return t;
}

// Rows kept of ranges that must line up row by row. Trailing rows blank in every
// range are dropped together, so a blank outcome at the bottom is still a
// dropped row when other ranges have data there.
std::vector<std::size_t> kept_rows(std::initializer_list<const AnyRows*> ranges) {
    bool same = true;
    std::size_t keep = 0;
    for (const AnyRows* r : ranges) {
        if (r->getLength() != (*ranges.begin())->getLength()) same = false;
        keep = std::max(keep, used_rows(*r));
    }
    std::vector<std::size_t> out;
    for (const AnyRows* r : ranges) out.push_back(same ? keep : used_rows(*r));
    return out;
}

void log_convert(std::chrono::steady_clock::time_point start, const AnyRows& first,
                 std::size_t kept) {
    const double ms = std::chrono::duration<double, std::milli>(std::chrono::steady_clock::now() -
                                                                start).count();
    log_line("convert " + std::to_string(ms) + " ms, " + std::to_string(first.getLength()) +
             " rows given, " + std::to_string(kept) + " kept");
}

// Convert ranges that must line up row by row (the helper functions).
std::vector<Table> to_tables(std::initializer_list<const AnyRows*> ranges) {
    const auto start = std::chrono::steady_clock::now();
    const std::vector<std::size_t> keep = kept_rows(ranges);
    std::vector<Table> out;
    std::size_t i = 0;
    for (const AnyRows* r : ranges) out.push_back(to_table(*r, keep[i++]));
    CallTrace::mark("convert");
    log_convert(start, **ranges.begin(), keep.front());
    return out;
}

// The numbers of a range, read while its cells are keyed (the cells are then in the
// cache once, not fetched from memory again for the columns): CellGrid::take_numbers.
struct ReadAhead {
    std::size_t start = 0;                         // first row held (1 under a header)
    std::vector<NumericColumn> columns;            // rows start .. start + held - 1
    std::vector<std::vector<std::size_t>> others;  // per column: rows left for cell()
    std::vector<bool> taken;

    void prepare(std::size_t rows, std::size_t cols) {
        const std::size_t held = rows > start ? rows - start : 0;
        columns.resize(cols);
        others.assign(cols, {});
        taken.assign(cols, false);
        for (NumericColumn& c : columns) {
            c.values.resize(held);
            c.missing.resize(held);
        }
    }
    // Row r of the range (r >= start): its cells in cache already.
    void note_row(std::size_t r, const Any* cells, std::size_t width) {
        const std::size_t i = r - start;
        for (std::size_t c = 0; c < columns.size(); ++c) {
            if (c < width && cells[c].getValueTypeClass() == css::uno::TypeClass_DOUBLE) {
                columns[c].values[i] = *static_cast<const double*>(cells[c].getValue());
                columns[c].missing[i] = 0;
            } else {
                columns[c].values[i] = 0.0;
                columns[c].missing[i] = 1;
                others[c].push_back(i);
            }
        }
    }
    // Column c, rows [first, end) of the range, as CellGrid::take_numbers hands it over.
    bool take(std::size_t c, std::size_t first, std::size_t end, NumericColumn& out,
              std::vector<std::size_t>& rows_left) {
        if (first != start || end < first || c >= columns.size() || taken[c]) return false;
        taken[c] = true;
        NumericColumn& col = columns[c];
        std::vector<std::size_t>& left = others[c];
        const std::size_t held = col.values.size(), n = end - first;
        col.values.resize(n);
        col.missing.resize(n);
        if (n <= held) {
            left.erase(std::lower_bound(left.begin(), left.end(), n), left.end());
        } else {
            for (std::size_t i = held; i < n; ++i) {  // below the rows read: blank to cell()
                col.values[i] = 0.0;
                col.missing[i] = 1;
                left.push_back(i);
            }
        }
        out = std::move(col);
        rows_left.insert(rows_left.end(), left.begin(), left.end());
        return true;
    }
};

// A range as the office passed it, read one cell at a time: the model functions
// build their columns straight from it, without a converted copy of every cell.
// With `sheet`, the range came as the cells themselves: it knows its place and
// the error values in it (sheet_ranges.hpp).
class AnyGrid : public CellGrid {
public:
    AnyGrid(const AnyRows& rows, std::size_t keep, const SheetRange* sheet = nullptr,
            ReadAhead* ahead = nullptr)
        : rows_(rows), keep_(keep), sheet_(sheet), ahead_(ahead) {
        if (sheet != nullptr) {  // its width is known: no pass over the rows
            cols_ = sheet->cols;
            return;
        }
        const std::size_t have = std::min(keep, static_cast<std::size_t>(rows.getLength()));
        for (std::size_t r = 0; r < have; ++r)
            cols_ = std::max(cols_, static_cast<std::size_t>(rows[static_cast<sal_Int32>(r)].getLength()));
        if (keep == 0 && rows.getLength() > 0) cols_ = static_cast<std::size_t>(rows[0].getLength());
    }
    std::size_t row_count() const override { return keep_; }
    std::size_t col_count() const override { return cols_; }
    std::size_t given_row_count() const override {
        return sheet_ != nullptr ? sheet_->given_rows : static_cast<std::size_t>(rows_.getLength());
    }
    Cell cell(std::size_t r, std::size_t c) const override {
        // A sheet range is read only down to its sheet's last used row; the rows
        // kept may go further when another range's sheet is used further down.
        if (r >= static_cast<std::size_t>(rows_.getLength())) return Cell();
        const Sequence<Any>& row = rows_[static_cast<sal_Int32>(r)];
        if (c >= static_cast<std::size_t>(row.getLength())) return Cell();
        const Any& a = row.getConstArray()[c];
        if (sheet_ != nullptr && a.getValueTypeClass() == css::uno::TypeClass_TYPE) return error_cell(r, c);
        return to_cell(a);
    }
    const Place* place() const override { return sheet_ != nullptr ? &sheet_->place : nullptr; }

    // Numbers straight from the anys: no Cell per cell, no virtual call per cell.
    bool read_number_block(std::size_t first_col, std::size_t n_cols, std::size_t start, std::size_t end,
                           double* const* values, unsigned char* const* missing,
                           std::vector<std::pair<std::size_t, std::size_t>>& others) const override {
        const std::size_t have = static_cast<std::size_t>(rows_.getLength());
        const Sequence<Any>* rows = rows_.getConstArray();
        for (std::size_t r = start; r < end; ++r) {
            const std::size_t i = r - start;
            const std::size_t width = r < have ? static_cast<std::size_t>(rows[r].getLength()) : 0;
            const Any* cells = r < have ? rows[r].getConstArray() : nullptr;
            for (std::size_t k = 0; k < n_cols; ++k) {
                const std::size_t c = first_col + k;
                if (c < width && cells[c].getValueTypeClass() == css::uno::TypeClass_DOUBLE) {
                    values[k][i] = *static_cast<const double*>(cells[c].getValue());
                    missing[k][i] = 0;
                } else {
                    values[k][i] = 0.0;
                    missing[k][i] = 1;
                    others.emplace_back(i, c);
                }
            }
        }
        return true;
    }

    bool take_numbers(std::size_t c, std::size_t start, std::size_t end, NumericColumn& out,
                      std::vector<std::size_t>& others) const override {
        return ahead_ != nullptr && ahead_->take(c, start, end, out, others);
    }

private:
    Cell error_cell(std::size_t r, std::size_t c) const {
        Cell e;
        const auto it = sheet_->errors.find({r, c});
        if (it == sheet_->errors.end()) return e;
        e.kind = Cell::Kind::error;
        e.text = it->second;
        return e;
    }

    const AnyRows& rows_;
    std::size_t keep_;
    const SheetRange* sheet_;
    ReadAhead* ahead_;
    std::size_t cols_ = 0;
};

// Rows kept of sheet ranges that must line up row by row (as kept_rows).
std::vector<std::size_t> kept_sheet_rows(const std::vector<const SheetRange*>& ranges) {
    bool same = true;
    std::size_t keep = 0;
    for (const SheetRange* r : ranges) {
        if (r->given_rows != ranges.front()->given_rows) same = false;
        keep = std::max(keep, used_rows(r->rows));
    }
    std::vector<std::size_t> out;
    for (const SheetRange* r : ranges) out.push_back(same ? keep : used_rows(r->rows));
    return out;
}

// Sheet ranges as plain tables (the helper functions), keeping place and errors.
std::vector<Table> sheet_tables(const std::vector<const SheetRange*>& ranges) {
    const std::vector<std::size_t> keep = kept_sheet_rows(ranges);
    std::vector<Table> out;
    for (std::size_t i = 0; i < ranges.size(); ++i) {
        const SheetRange& s = *ranges[i];
        const AnyGrid grid(s.rows, keep[i], &s);
        Table t;
        t.rows = keep[i];
        t.cols = s.cols;
        t.given_rows = s.given_rows;
        t.placed = true;
        t.where = s.place;
        t.cells.reserve(t.rows * t.cols);
        for (std::size_t r = 0; r < t.rows; ++r)
            for (std::size_t c = 0; c < t.cols; ++c) t.cells.push_back(grid.cell(r, c));
        out.push_back(std::move(t));
    }
    CallTrace::mark("convert");
    return out;
}

// ------------------------------------------------------------ the cells key

// Kinds of a passed cell, as hashed: every kind the office could pass is kept
// apart, even where reading treats two alike (void and an empty text are both
// blank), so equal keys mean equal cells, never merely equal readings.
enum class CellTag : std::uint64_t {
    empty_text = 1, text, number, other_number, boolean, none, other
};

CellTag cell_tag(const Any& a) {
    switch (a.getValueTypeClass()) {
    case css::uno::TypeClass_DOUBLE:
        return CellTag::number;
    case css::uno::TypeClass_STRING:
        return static_cast<const OUString*>(a.getValue())->isEmpty() ? CellTag::empty_text
                                                                     : CellTag::text;
    case css::uno::TypeClass_BOOLEAN:
        return CellTag::boolean;
    case css::uno::TypeClass_VOID:
        return CellTag::none;
    default:
        return other_number_class(a.getValueTypeClass()) ? CellTag::other_number : CellTag::other;
    }
}

// The words after a cell's tag; how many follows from the tag (and a text's length).
void hash_payload(Hasher& h, const Any& a, CellTag tag) {
    switch (tag) {
    case CellTag::number:
        h.add_double(*static_cast<const double*>(a.getValue()));
        break;
    case CellTag::text: {
        const rtl_uString* s = static_cast<const OUString*>(a.getValue())->pData;
        h.add_u64(static_cast<std::uint64_t>(s->length));
        h.add_bytes(reinterpret_cast<const char*>(s->buffer),
                    static_cast<std::size_t>(s->length) * sizeof(sal_Unicode));
        break;
    }
    case CellTag::boolean:
        h.add_u64(*static_cast<const sal_Bool*>(a.getValue()) ? 1 : 0);
        break;
    case CellTag::other_number: {
        // Not seen from cells; hashed as its type and converted value.
        double v = 0.0;
        const bool ok = (a >>= v);
        h.add_u64(static_cast<std::uint64_t>(a.getValueTypeClass()));
        h.add_u64(ok ? 1 : 0);
        h.add_double(v);
        break;
    }
    case CellTag::other:  // read as blank; kept apart by its type class
        h.add_u64(static_cast<std::uint64_t>(a.getValueTypeClass()));
        break;
    default:  // empty text, void: the tag says it all
        break;
    }
}

// Every cell of a range as passed: the row count, then the rows up to the last
// non-blank one (each with its length and its cells), so a blank tail counts by
// its length only, as the conversion sees it. The tags of up to 16 cells share
// one word that comes before their values, so the words still decode to exactly
// one sequence of cells (equal keys mean equal cells) at about one word per number.
// One row: its length, then per group of up to 16 cells a word of their tags and
// their values. saw_void, when given, is set when a cell is void (an error value, as
// read_sheet_range leaves it before its errors are named).
void hash_row(Hasher& h, const Sequence<Any>& row, bool* saw_void) {
    constexpr sal_Int32 group = 16;  // 4 bits per tag
    CellTag tags[group];
    const sal_Int32 n = row.getLength();
    h.add_u64(static_cast<std::uint64_t>(n));
    const Any* cells = row.getConstArray();
    for (sal_Int32 g = 0; g < n; g += group) {
        const sal_Int32 m = std::min(group, n - g);
        std::uint64_t word = 0;
        for (sal_Int32 i = 0; i < m; ++i) {
            tags[i] = cell_tag(cells[g + i]);
            word |= static_cast<std::uint64_t>(tags[i]) << (4 * i);
            if (tags[i] == CellTag::none && saw_void != nullptr) *saw_void = true;
        }
        h.add_u64(word);
        for (sal_Int32 i = 0; i < m; ++i) hash_payload(h, cells[g + i], tags[i]);
    }
}

void hash_range(Hasher& h, const AnyRows& rows, bool* saw_void = nullptr) {
    h.add_u64(static_cast<std::uint64_t>(rows.getLength()));
    const std::size_t keep = used_rows(rows);
    h.add_u64(keep);
    if (rows.getLength() > 0) h.add_u64(static_cast<std::uint64_t>(rows[0].getLength()));
    for (std::size_t r = 0; r < keep; ++r) hash_row(h, rows[static_cast<sal_Int32>(r)], saw_void);
}

// The same cells keyed through the numbers read ahead, in one pass over the cells:
// the row count, the rows kept, the width and ahead.start; the rows above start as in
// hash_range; then per column the cells left for cell() (count, then row, tag and
// value of each) and every value read (0 where a cell was left), so the words still
// decode to exactly one sequence of cells. Rows of another width than the first
// (not seen from getDataArray) are keyed by hash_range instead, and nothing is read.
void hash_range_ahead(Hasher& h, const AnyRows& rows, ReadAhead& ahead, bool* saw_void) {
    const std::size_t keep = used_rows(rows);
    const std::size_t width = rows.getLength() > 0 ? static_cast<std::size_t>(rows[0].getLength()) : 0;
    const Sequence<Any>* row = rows.getConstArray();
    Hasher local;
    local.add_u64(static_cast<std::uint64_t>(rows.getLength()));
    local.add_u64(keep);
    local.add_u64(width);
    local.add_u64(ahead.start);
    ahead.prepare(keep, width);
    bool regular = true;
    for (std::size_t r = 0; r < keep && regular; ++r) {
        regular = static_cast<std::size_t>(row[r].getLength()) == width;
        if (r < ahead.start) hash_row(local, row[r], saw_void);
        else if (regular) ahead.note_row(r, row[r].getConstArray(), width);
    }
    if (!regular) {
        ahead = ReadAhead{};  // nothing read: take_numbers declines
        hash_range(h, rows, saw_void);
        return;
    }
    for (std::size_t c = 0; c < ahead.columns.size(); ++c) {
        local.add_u64(ahead.others[c].size());
        for (const std::size_t i : ahead.others[c]) {
            const Any& a = row[ahead.start + i].getConstArray()[c];
            const CellTag tag = cell_tag(a);
            if (tag == CellTag::none && saw_void != nullptr) *saw_void = true;
            local.add_u64(i);
            local.add_u64(static_cast<std::uint64_t>(tag));
            hash_payload(local, a, tag);
        }
        local.add_doubles(ahead.columns[c].values.data(), ahead.columns[c].values.size());
    }
    const Hash128 d = local.digest();
    h.add_u64(d.a);
    h.add_u64(d.b);
}

// The four model ranges as the office passed them: keyed at once (one pass over
// the cells), converted to tables only when the cache cannot answer.
class UnoPanelSource : public PanelSource {
public:
    UnoPanelSource(const AnyRows& y, const AnyRows& x, const AnyRows& u, const AnyRows& t)
        : y_(y), x_(x), u_(u), t_(t) {
        Hasher h;
        h.add_u64(1);  // kept apart from SheetPanelSource's keys
        for (const AnyRows* r : {&y, &x, &u, &t}) hash_range(h, *r);
        key_ = h.digest();
        CallTrace::mark("key");
    }
    const Hash128* cells_key() const override { return &key_; }
    PanelRanges ranges() const override {
        if (grids_.empty()) {
            const auto start = std::chrono::steady_clock::now();
            const std::vector<std::size_t> keep = kept_rows({&y_, &x_, &u_, &t_});
            grids_.reserve(4);  // the references handed out must stay valid
            grids_.emplace_back(y_, keep[0]);
            grids_.emplace_back(x_, keep[1]);
            grids_.emplace_back(u_, keep[2]);
            grids_.emplace_back(t_, keep[3]);
            CallTrace::mark("trim");
            log_convert(start, y_, keep[0]);
        }
        return {grids_[0], grids_[1], grids_[2], grids_[3]};
    }

private:
    const AnyRows &y_, &x_, &u_, &t_;
    Hash128 key_;
    mutable std::vector<AnyGrid> grids_;
};

// The four model ranges passed as the cells themselves: read at once, keyed by
// their cells, places and error values, converted only when the cache cannot answer.
class SheetPanelSource : public PanelSource {
public:
    using RangeRef = css::uno::Reference<css::table::XCellRange>;
    SheetPanelSource(const RangeRef& y, const RangeRef& x, const RangeRef& u, const RangeRef& t,
                     const char* x_name = "regressors")
        : y_(read_sheet_range(y, "outcome", true)), x_(read_sheet_range(x, x_name, true)),
          u_(read_sheet_range(u, "units", true)), t_(read_sheet_range(t, "periods", true)) {
        CallTrace::mark("sheet");
        // Error values are named only when the pass over the cells meets one (a void
        // cell); then the key is made again over the marked cells (the numbers read
        // ahead stay right: a void cell is left for cell(), which sees it marked).
        const Any* first = y_.rows.getLength() > 0 && y_.rows[0].getLength() > 0 ? y_.rows[0].getConstArray()
                                                                                 : nullptr;
        const std::size_t start = first != nullptr && is_text_value(*first) ? 1 : 0;  // read_panel's header
        for (ReadAhead& a : ahead_) a.start = start;
        if (!make_key(true)) {
            for (SheetRange* r : {&y_, &x_, &u_, &t_}) mark_error_cells(*r);
            make_key(false);
        }
        CallTrace::mark("key");
    }
    // The key of every cell, place and error value (a tag first keeps it apart from
    // UnoPanelSource's keys); false when check_voids and a cell is void.
    bool make_key(bool check_voids) {
        bool saw_void = false;
        Hasher h;
        h.add_u64(check_voids ? 2 : 3);  // two layouts of the words, kept apart
        const SheetRange* const ranges[4] = {&y_, &x_, &u_, &t_};
        for (std::size_t k = 0; k < 4; ++k) {
            const SheetRange* r = ranges[k];
            h.add_u64(r->given_rows);
            h.add_u64(r->cols);
            if (check_voids)
                hash_range_ahead(h, r->rows, ahead_[k], &saw_void);
            else
                hash_range(h, r->rows);
            h.add_string(r->place.sheet);
            h.add_u64(r->place.row);
            h.add_u64(r->place.col);
            h.add_u64(r->place.hidden_rows);
            h.add_u64(r->place.first_hidden);
            h.add_u64(r->errors.size());
            for (const auto& e : r->errors) {
                h.add_u64(e.first.first);
                h.add_u64(e.first.second);
                h.add_string(e.second);
            }
        }
        key_ = h.digest();
        return !saw_void;
    }
    // Freeing the office's converted values (one any per cell) is the office's
    // conversion undone, traced apart from the add-in's own work.
    ~SheetPanelSource() override {
        CallTrace::mark("compute");
        for (SheetRange* r : {&y_, &x_, &u_, &t_}) r->rows = css::uno::Sequence<Sequence<Any>>();
        CallTrace::mark("release");
    }
    const Hash128* cells_key() const override { return &key_; }
    PanelRanges ranges() const override {
        if (grids_.empty()) {
            const std::vector<std::size_t> keep = kept_sheet_rows({&y_, &x_, &u_, &t_});
            grids_.reserve(4);  // the references handed out must stay valid
            grids_.emplace_back(y_.rows, keep[0], &y_, &ahead_[0]);
            grids_.emplace_back(x_.rows, keep[1], &x_, &ahead_[1]);
            grids_.emplace_back(u_.rows, keep[2], &u_, &ahead_[2]);
            grids_.emplace_back(t_.rows, keep[3], &t_, &ahead_[3]);
            CallTrace::mark("trim");
        }
        return {grids_[0], grids_[1], grids_[2], grids_[3]};
    }

private:
    SheetRange y_, x_, u_, t_;  // in this order: ahead_[k] belongs to the k-th
    mutable ReadAhead ahead_[4];  // handed over once by the grids
    Hash128 key_;
    mutable std::vector<AnyGrid> grids_;
};

Arg to_arg(const Any& a) {
    Arg arg;
    if (a.getValueTypeClass() == css::uno::TypeClass_VOID) return arg;
    arg.given = true;
    AnyRows rows;
    if (a >>= rows) {
        arg.table = to_table(rows, used_rows(rows));
        if (arg.table.rows == 0) {  // a blank range: same as a blank cell
            arg.table.rows = arg.table.cols = 1;
            arg.table.cells.assign(1, Cell());
        }
    } else {
        arg.table.rows = arg.table.cols = arg.table.given_rows = 1;
        arg.table.cells.push_back(to_cell(a));
    }
    return arg;
}

Any to_any(const OutCell& c) {
    switch (c.kind) {
    case OutCell::Kind::number:
        return Any(c.number);
    case OutCell::Kind::text:
        return Any(to_ou(c.text));
    default:
        return Any(OUString());
    }
}

AnyRows to_rows(const OutTable& t) {
    if (t.rows == 0 || t.cols == 0) return to_rows(message_table(""));
    AnyRows rows(static_cast<sal_Int32>(t.rows));
    Sequence<Any>* out = rows.getArray();
    for (std::size_t r = 0; r < t.rows; ++r) {
        Sequence<Any> row(static_cast<sal_Int32>(t.cols));
        Any* cells = row.getArray();
        for (std::size_t c = 0; c < t.cols; ++c) cells[c] = to_any(t.cells[r * t.cols + c]);
        out[r] = row;
    }
    return rows;
}

// The one catch-all boundary: returns the text for any failure, never throws.
template <class F>
std::string guarded(F&& body) noexcept {
    try {
        body();
        return std::string();
    } catch (const UserError& e) {
        return e.what();
    } catch (const std::bad_alloc&) {
        return "weft: out of memory; use smaller ranges or close other documents";
    } catch (const css::uno::Exception& e) {
        try {
            return "weft: internal error in the add-in (" + to_utf8(e.Message) +
                   "); please report it with the workbook";
        } catch (...) {
            return "weft: internal error in the add-in; please report it with the workbook";
        }
    } catch (const std::exception& e) {
        try {
            return std::string("weft: internal error in the add-in (") + e.what() +
                   "); please report it with the workbook";
        } catch (...) {
            return "weft: internal error in the add-in; please report it with the workbook";
        }
    } catch (...) {
        return "weft: internal error in the add-in; please report it with the workbook";
    }
}

// Runs a table-valued function; a failure becomes a one-cell text result.
template <class F>
AnyRows table_result(F&& compute) {
    AnyRows result;
    const std::string error = guarded([&] {
        OutTable out = compute();
        CallTrace::mark("compute");
        note_result_shape(out.rows, out.cols, "");
        result = to_rows(out);
        CallTrace::mark("out");
    });
    if (!error.empty()) {
        try {
            note_result_shape(1, 1, error);
            return to_rows(error_table(error));
        } catch (...) {
            return AnyRows();
        }
    }
    return result;
}

// Runs a one-cell function; a failure becomes the text of that cell.
template <class F>
Any cell_result(F&& compute) {
    Any result;
    const std::string error = guarded([&] {
        result = to_any(compute());
        CallTrace::mark("out");
        note_result_shape(1, 1, "");
    });
    if (!error.empty()) {
        try {
            note_result_shape(1, 1, error);
            return Any(to_ou(error));
        } catch (...) {
            return Any();
        }
    }
    return result;
}

// A wizard text, or an empty one if anything at all goes wrong.
template <class F>
OUString safe_text(F&& make) noexcept {
    try {
        return make();
    } catch (...) {
        return OUString();
    }
}

class CalcFunctions
    : public cppu::WeakImplHelper4<org::weft::XCalcFunctions, css::sheet::XAddIn,
                                   css::lang::XServiceName, css::lang::XServiceInfo> {
public:
    CalcFunctions() = default;

    // ---- XCalcFunctions ------------------------------------------------------
    AnyRows SAL_CALL estimates(const AnyRows& y, const AnyRows& x, const AnyRows& u,
                               const AnyRows& t, const Any& model) override {
        CallTrace trace("estimates");
        return table_result([&] {
            const UnoPanelSource r(y, x, u, t);
            return fn_estimates(r, to_arg(model));
        });
    }
    AnyRows SAL_CALL summary(const AnyRows& y, const AnyRows& x, const AnyRows& u,
                             const AnyRows& t, const Any& model) override {
        CallTrace trace("summary");
        return table_result([&] {
            const UnoPanelSource r(y, x, u, t);
            return fn_summary(r, to_arg(model));
        });
    }
    Any SAL_CALL value(const AnyRows& y, const AnyRows& x, const AnyRows& u, const AnyRows& t,
                       const Any& model, const Any& what, const Any& term) override {
        CallTrace trace("value");
        return cell_result([&] {
            const UnoPanelSource r(y, x, u, t);
            return fn_value(r, to_arg(model), to_arg(what), to_arg(term));
        });
    }
    AnyRows SAL_CALL residuals(const AnyRows& y, const AnyRows& x, const AnyRows& u,
                               const AnyRows& t, const Any& model) override {
        CallTrace trace("residuals");
        return table_result([&] {
            const UnoPanelSource r(y, x, u, t);
            return fn_residuals(r, to_arg(model));
        });
    }
    AnyRows SAL_CALL fitted(const AnyRows& y, const AnyRows& x, const AnyRows& u,
                            const AnyRows& t, const Any& model) override {
        CallTrace trace("fitted");
        return table_result([&] {
            const UnoPanelSource r(y, x, u, t);
            return fn_fitted(r, to_arg(model));
        });
    }
    AnyRows SAL_CALL joint(const AnyRows& y, const AnyRows& x, const AnyRows& u,
                           const AnyRows& t, const Any& model, const Any& terms) override {
        CallTrace trace("joint");
        return table_result([&] {
            const UnoPanelSource r(y, x, u, t);
            return fn_joint(r, to_arg(model), to_arg(terms));
        });
    }
    AnyRows SAL_CALL hetero(const AnyRows& y, const AnyRows& x, const AnyRows& u,
                            const AnyRows& t, const Any& model, const Any& form) override {
        CallTrace trace("hetero");
        return table_result([&] {
            const UnoPanelSource r(y, x, u, t);
            return fn_hetero(r, to_arg(model), to_arg(form));
        });
    }
    AnyRows SAL_CALL serial(const AnyRows& y, const AnyRows& x, const AnyRows& u,
                            const AnyRows& t, const Any& model) override {
        CallTrace trace("serial");
        return table_result([&] {
            const UnoPanelSource r(y, x, u, t);
            return fn_serial(r, to_arg(model));
        });
    }
    AnyRows SAL_CALL hausman(const AnyRows& y, const AnyRows& x, const AnyRows& u,
                             const AnyRows& t, const Any& model) override {
        CallTrace trace("hausman");
        return table_result([&] {
            const UnoPanelSource r(y, x, u, t);
            return fn_hausman(r, to_arg(model));
        });
    }
    AnyRows SAL_CALL effects(const AnyRows& y, const AnyRows& x, const AnyRows& u,
                             const AnyRows& t, const Any& model) override {
        CallTrace trace("effects");
        return table_result([&] {
            const UnoPanelSource r(y, x, u, t);
            return fn_effects(r, to_arg(model));
        });
    }
    AnyRows SAL_CALL diff(const AnyRows& v, const AnyRows& u, const AnyRows& t,
                          const Any& k) override {
        CallTrace trace("diff");
        return table_result([&] {
            const std::vector<Table> r = to_tables({&v, &u, &t});
            return fn_diff(r[0], r[1], r[2], to_arg(k));
        });
    }
    AnyRows SAL_CALL lag(const AnyRows& v, const AnyRows& u, const AnyRows& t,
                         const Any& k) override {
        CallTrace trace("lag");
        return table_result([&] {
            const std::vector<Table> r = to_tables({&v, &u, &t});
            return fn_lag(r[0], r[1], r[2], to_arg(k));
        });
    }
    AnyRows SAL_CALL demean(const AnyRows& v, const AnyRows& u) override {
        CallTrace trace("demean");
        return table_result([&] {
            const std::vector<Table> r = to_tables({&v, &u});
            return fn_demean(r[0], r[1]);
        });
    }
    AnyRows SAL_CALL dummies(const AnyRows& t, const Any& omit_first) override {
        CallTrace trace("dummies");
        return table_result([&] {
            const std::vector<Table> r = to_tables({&t});
            return fn_dummies(r[0], to_arg(omit_first));
        });
    }
    AnyRows SAL_CALL panel(const AnyRows& u, const AnyRows& t) override {
        CallTrace trace("panel");
        return table_result([&] {
            const std::vector<Table> r = to_tables({&u, &t});
            return fn_panel(r[0], r[1]);
        });
    }
    OUString SAL_CALL version() override {
        std::string text;
        const std::string error = guarded([&] { text = fn_version(); });
        try {
            return to_ou(error.empty() ? text : error);
        } catch (...) {
            return OUString();
        }
    }

    // ---- the fit cell and the functions that take it ---------------------------
    Any SAL_CALL fit(const AnyRows& y, const AnyRows& x, const AnyRows& u, const AnyRows& t,
                     const Any& model) override {
        CallTrace trace("fit");
        return cell_result([&] {
            const UnoPanelSource r(y, x, u, t);
            return fn_fit(r, to_arg(model));
        });
    }
    AnyRows SAL_CALL fitEstimates(const Any& fit) override {
        CallTrace trace("fitEstimates");
        return table_result([&] { return fn_fit_estimates(to_arg(fit)); });
    }
    AnyRows SAL_CALL fitSummary(const Any& fit) override {
        CallTrace trace("fitSummary");
        return table_result([&] { return fn_fit_summary(to_arg(fit)); });
    }
    Any SAL_CALL fitValue(const Any& fit, const Any& what, const Any& term) override {
        CallTrace trace("fitValue");
        return cell_result([&] { return fn_fit_value(to_arg(fit), to_arg(what), to_arg(term)); });
    }
    AnyRows SAL_CALL fitResiduals(const Any& fit) override {
        CallTrace trace("fitResiduals");
        return table_result([&] { return fn_fit_residuals(to_arg(fit)); });
    }
    AnyRows SAL_CALL fitFitted(const Any& fit) override {
        CallTrace trace("fitFitted");
        return table_result([&] { return fn_fit_fitted(to_arg(fit)); });
    }
    AnyRows SAL_CALL fitJoint(const Any& fit, const Any& terms) override {
        CallTrace trace("fitJoint");
        return table_result([&] { return fn_fit_joint(to_arg(fit), to_arg(terms)); });
    }
    AnyRows SAL_CALL fitHetero(const Any& fit, const Any& form) override {
        CallTrace trace("fitHetero");
        return table_result([&] { return fn_fit_hetero(to_arg(fit), to_arg(form)); });
    }
    AnyRows SAL_CALL fitSerial(const Any& fit) override {
        CallTrace trace("fitSerial");
        return table_result([&] { return fn_fit_serial(to_arg(fit)); });
    }
    AnyRows SAL_CALL fitHausman(const Any& fit) override {
        CallTrace trace("fitHausman");
        return table_result([&] { return fn_fit_hausman(to_arg(fit)); });
    }
    AnyRows SAL_CALL fitEffects(const Any& fit) override {
        CallTrace trace("fitEffects");
        return table_result([&] { return fn_fit_effects(to_arg(fit)); });
    }
    AnyRows SAL_CALL bootstrap(const AnyRows& y, const AnyRows& x, const AnyRows& u, const AnyRows& t,
                               const Any& model, const Any& term, const Any& settings) override {
        CallTrace trace("bootstrap");
        return table_result([&] {
            const UnoPanelSource r(y, x, u, t);
            return fn_bootstrap(r, to_arg(model), to_arg(term), to_arg(settings));
        });
    }
    AnyRows SAL_CALL fitBootstrap(const Any& fit, const Any& term, const Any& settings) override {
        CallTrace trace("fitBootstrap");
        return table_result([&] { return fn_fit_bootstrap(to_arg(fit), to_arg(term), to_arg(settings)); });
    }
    AnyRows SAL_CALL event(const AnyRows& y, const AnyRows& d, const AnyRows& u, const AnyRows& t,
                           const Any& controls, const Any& design) override {
        CallTrace trace("event");
        return table_result([&] {
            const UnoPanelSource r(y, d, u, t);  // treatment in the regressors' place
            const PanelRanges p = r.ranges();
            return fn_event({p.outcome, p.regressors, p.units, p.periods}, to_arg(controls), to_arg(design));
        });
    }
    AnyRows SAL_CALL did(const AnyRows& y, const AnyRows& d, const AnyRows& u, const AnyRows& t,
                         const Any& controls, const Any& design) override {
        CallTrace trace("did");
        return table_result([&] {
            const UnoPanelSource r(y, d, u, t);
            const PanelRanges p = r.ranges();
            return fn_did({p.outcome, p.regressors, p.units, p.periods}, to_arg(controls), to_arg(design));
        });
    }

    // ---- the cell-range twins: the same functions, with the ranges' places -------
    using Range = css::uno::Reference<css::table::XCellRange>;
    AnyRows SAL_CALL sheetEstimates(const Range& y, const Range& x, const Range& u, const Range& t,
                                    const Any& model) override {
        CallTrace trace("sheetEstimates");
        return table_result([&] { return fn_estimates(SheetPanelSource(y, x, u, t), to_arg(model)); });
    }
    AnyRows SAL_CALL sheetSummary(const Range& y, const Range& x, const Range& u, const Range& t,
                                  const Any& model) override {
        CallTrace trace("sheetSummary");
        return table_result([&] { return fn_summary(SheetPanelSource(y, x, u, t), to_arg(model)); });
    }
    Any SAL_CALL sheetValue(const Range& y, const Range& x, const Range& u, const Range& t,
                            const Any& model, const Any& what, const Any& term) override {
        CallTrace trace("sheetValue");
        return cell_result([&] {
            return fn_value(SheetPanelSource(y, x, u, t), to_arg(model), to_arg(what), to_arg(term));
        });
    }
    AnyRows SAL_CALL sheetResiduals(const Range& y, const Range& x, const Range& u, const Range& t,
                                    const Any& model) override {
        CallTrace trace("sheetResiduals");
        return table_result([&] { return fn_residuals(SheetPanelSource(y, x, u, t), to_arg(model)); });
    }
    AnyRows SAL_CALL sheetFitted(const Range& y, const Range& x, const Range& u, const Range& t,
                                 const Any& model) override {
        CallTrace trace("sheetFitted");
        return table_result([&] { return fn_fitted(SheetPanelSource(y, x, u, t), to_arg(model)); });
    }
    AnyRows SAL_CALL sheetJoint(const Range& y, const Range& x, const Range& u, const Range& t,
                                const Any& model, const Any& terms) override {
        CallTrace trace("sheetJoint");
        return table_result([&] { return fn_joint(SheetPanelSource(y, x, u, t), to_arg(model), to_arg(terms)); });
    }
    AnyRows SAL_CALL sheetHetero(const Range& y, const Range& x, const Range& u, const Range& t,
                                 const Any& model, const Any& form) override {
        CallTrace trace("sheetHetero");
        return table_result([&] { return fn_hetero(SheetPanelSource(y, x, u, t), to_arg(model), to_arg(form)); });
    }
    AnyRows SAL_CALL sheetSerial(const Range& y, const Range& x, const Range& u, const Range& t,
                                 const Any& model) override {
        CallTrace trace("sheetSerial");
        return table_result([&] { return fn_serial(SheetPanelSource(y, x, u, t), to_arg(model)); });
    }
    AnyRows SAL_CALL sheetHausman(const Range& y, const Range& x, const Range& u, const Range& t,
                                  const Any& model) override {
        CallTrace trace("sheetHausman");
        return table_result([&] { return fn_hausman(SheetPanelSource(y, x, u, t), to_arg(model)); });
    }
    AnyRows SAL_CALL sheetEffects(const Range& y, const Range& x, const Range& u, const Range& t,
                                  const Any& model) override {
        CallTrace trace("sheetEffects");
        return table_result([&] { return fn_effects(SheetPanelSource(y, x, u, t), to_arg(model)); });
    }
    Any SAL_CALL sheetFit(const Range& y, const Range& x, const Range& u, const Range& t,
                          const Any& model) override {
        CallTrace trace("sheetFit");
        return cell_result([&] { return fn_fit(SheetPanelSource(y, x, u, t), to_arg(model)); });
    }
    AnyRows SAL_CALL sheetBootstrap(const Range& y, const Range& x, const Range& u, const Range& t,
                                    const Any& model, const Any& term, const Any& settings) override {
        CallTrace trace("sheetBootstrap");
        return table_result([&] {
            return fn_bootstrap(SheetPanelSource(y, x, u, t), to_arg(model), to_arg(term), to_arg(settings));
        });
    }
    AnyRows SAL_CALL sheetEvent(const Range& y, const Range& d, const Range& u, const Range& t,
                                const Any& controls, const Any& design) override {
        CallTrace trace("sheetEvent");
        return table_result([&] {
            const SheetPanelSource r(y, d, u, t, "treatment");
            const PanelRanges p = r.ranges();
            return fn_event({p.outcome, p.regressors, p.units, p.periods}, to_arg(controls), to_arg(design));
        });
    }
    AnyRows SAL_CALL sheetDid(const Range& y, const Range& d, const Range& u, const Range& t,
                              const Any& controls, const Any& design) override {
        CallTrace trace("sheetDid");
        return table_result([&] {
            const SheetPanelSource r(y, d, u, t, "treatment");
            const PanelRanges p = r.ranges();
            return fn_did({p.outcome, p.regressors, p.units, p.periods}, to_arg(controls), to_arg(design));
        });
    }
    AnyRows SAL_CALL sheetDiff(const Range& v, const Range& u, const Range& t, const Any& k) override {
        CallTrace trace("sheetDiff");
        return table_result([&] {
            const SheetRange a = read_sheet_range(v, "values"), b = read_sheet_range(u, "units"),
                             c = read_sheet_range(t, "periods");
            const std::vector<Table> r = sheet_tables({&a, &b, &c});
            return fn_diff(r[0], r[1], r[2], to_arg(k));
        });
    }
    AnyRows SAL_CALL sheetLag(const Range& v, const Range& u, const Range& t, const Any& k) override {
        CallTrace trace("sheetLag");
        return table_result([&] {
            const SheetRange a = read_sheet_range(v, "values"), b = read_sheet_range(u, "units"),
                             c = read_sheet_range(t, "periods");
            const std::vector<Table> r = sheet_tables({&a, &b, &c});
            return fn_lag(r[0], r[1], r[2], to_arg(k));
        });
    }
    AnyRows SAL_CALL sheetDemean(const Range& v, const Range& u) override {
        CallTrace trace("sheetDemean");
        return table_result([&] {
            const SheetRange a = read_sheet_range(v, "values"), b = read_sheet_range(u, "units");
            const std::vector<Table> r = sheet_tables({&a, &b});
            return fn_demean(r[0], r[1]);
        });
    }
    AnyRows SAL_CALL sheetDummies(const Range& t, const Any& omit_first) override {
        CallTrace trace("sheetDummies");
        return table_result([&] {
            const SheetRange a = read_sheet_range(t, "periods");
            const std::vector<Table> r = sheet_tables({&a});
            return fn_dummies(r[0], to_arg(omit_first));
        });
    }
    AnyRows SAL_CALL sheetPanel(const Range& u, const Range& t) override {
        CallTrace trace("sheetPanel");
        return table_result([&] {
            const SheetRange a = read_sheet_range(u, "units"), b = read_sheet_range(t, "periods");
            const std::vector<Table> r = sheet_tables({&a, &b});
            return fn_panel(r[0], r[1]);
        });
    }

    // ---- XAddIn ----------------------------------------------------------------
    // (The misspelling is the interface's own.) Nothing may escape here either.
    OUString SAL_CALL getProgrammaticFuntionName(const OUString& display) override {
        return safe_text([&] {
            const FunctionText* f = find_by_display(to_utf8(display));
            return f ? to_ou(f->method) : OUString();
        });
    }
    OUString SAL_CALL getDisplayFunctionName(const OUString& method) override {
        return safe_text([&] {
            const FunctionText* f = find_by_method(to_utf8(method));
            return f ? to_ou(f->display) : OUString();
        });
    }
    OUString SAL_CALL getFunctionDescription(const OUString& method) override {
        return safe_text([&] {
            const std::string name = to_utf8(method);
            const FunctionText* f = find_by_method(name);
            if (f == nullptr) return OUString();
            // The wizard lists a value-array method beside its cell-range twin under
            // one name; say which is which (a typed name always gets the twin).
            if (has_twin(name))
                return to_ou("(As stored by weft 0.3 workbooks: reads values only, cannot name "
                             "cells. Typed formulas use the other " + std::string(f->display) +
                             ".) " + f->description);
            return to_ou(f->description);
        });
    }
    OUString SAL_CALL getDisplayArgumentName(const OUString& method, sal_Int32 index) override {
        return safe_text([&] {
            const ArgumentText* a = argument(method, index);
            return a ? to_ou(a->name) : OUString();
        });
    }
    OUString SAL_CALL getArgumentDescription(const OUString& method, sal_Int32 index) override {
        return safe_text([&] {
            const ArgumentText* a = argument(method, index);
            return a ? to_ou(a->description) : OUString();
        });
    }
    OUString SAL_CALL getProgrammaticCategoryName(const OUString&) override {
        return safe_text([] { return to_ou(programmatic_category); });
    }
    OUString SAL_CALL getDisplayCategoryName(const OUString&) override {
        return safe_text([] { return to_ou(display_category); });
    }

    // ---- XLocalizable (through XAddIn): the texts are English only ------------
    void SAL_CALL setLocale(const css::lang::Locale& locale) override { locale_ = locale; }
    css::lang::Locale SAL_CALL getLocale() override { return locale_; }

    // ---- XServiceName, XServiceInfo ------------------------------------------
    OUString SAL_CALL getServiceName() override { return to_ou(service_name); }
    OUString SAL_CALL getImplementationName() override { return to_ou(implementation_name); }
    sal_Bool SAL_CALL supportsService(const OUString& name) override {
        return cppu::supportsService(this, name);
    }
    Sequence<OUString> SAL_CALL getSupportedServiceNames() override {
        Sequence<OUString> names(2);
        names.getArray()[0] = to_ou(service_name);
        names.getArray()[1] = to_ou(addin_service);
        return names;
    }

private:
    // A value-array method with a cell-range twin (sheetEstimates for estimates).
    static bool has_twin(const std::string& method) {
        static const char* const twinned[] = {
            "estimates", "summary", "value", "residuals", "fitted", "joint", "hetero", "serial",
            "hausman", "effects", "fit", "bootstrap", "event", "did", "diff", "lag", "demean",
            "dummies", "panel"};
        for (const char* t : twinned)
            if (method == t) return true;
        return false;
    }

    static const ArgumentText* argument(const OUString& method, sal_Int32 index) {
        const FunctionText* f = find_by_method(to_utf8(method));
        if (f == nullptr || index < 0 || static_cast<std::size_t>(index) >= f->arguments.size())
            return nullptr;
        return &f->arguments[static_cast<std::size_t>(index)];
    }

    css::lang::Locale locale_;
};

}  // namespace
}  // namespace weft_addin

// Constructor named in weft.components; the office calls it to make the add-in.
extern "C" SAL_DLLPUBLIC_EXPORT css::uno::XInterface* org_weft_CalcFunctions_get_implementation(
    css::uno::XComponentContext*, const css::uno::Sequence<css::uno::Any>&) {
    try {
        return cppu::acquire(new weft_addin::CalcFunctions());
    } catch (...) {
        return nullptr;
    }
}
