#include "sheet_ranges.hpp"

#include "trace.hpp"

#include <com/sun/star/container/XNamed.hpp>
#include <com/sun/star/sheet/FormulaResult.hpp>
#include <com/sun/star/sheet/XCellRangeData.hpp>
#include <com/sun/star/sheet/XCellRangesQuery.hpp>
#include <com/sun/star/sheet/XSheetCellCursor.hpp>
#include <com/sun/star/sheet/XSheetCellRange.hpp>
#include <com/sun/star/sheet/XSheetCellRanges.hpp>
#include <com/sun/star/sheet/XSpreadsheet.hpp>
#include <com/sun/star/sheet/XUsedAreaCursor.hpp>
#include <com/sun/star/table/CellRangeAddress.hpp>
#include <com/sun/star/table/XCell.hpp>
#include <com/sun/star/table/XCellRange.hpp>
#include <com/sun/star/sheet/XCellRangeAddressable.hpp>
#include <cppu/unotype.hxx>
#include <rtl/ustring.hxx>

#include <algorithm>
#include <vector>

namespace weft_addin {

namespace css = com::sun::star;
using css::uno::Any;
using css::uno::Reference;
using css::uno::Sequence;
using css::uno::UNO_QUERY;

namespace {

std::string utf8(const rtl::OUString& s) {
    const rtl::OString o = rtl::OUStringToOString(s, RTL_TEXTENCODING_UTF8);
    return std::string(o.getStr(), static_cast<std::size_t>(o.getLength()));
}

// The sheet's last used row (zero-based), or -1 for an empty sheet.
sal_Int32 last_used_row(const Reference<css::sheet::XSpreadsheet>& sheet) {
    Reference<css::sheet::XSheetCellCursor> cursor = sheet->createCursor();
    Reference<css::sheet::XUsedAreaCursor> used(cursor, UNO_QUERY);
    Reference<css::sheet::XCellRangeAddressable> where(cursor, UNO_QUERY);
    if (!used.is() || !where.is()) return SAL_MAX_INT32;
    used->gotoEndOfUsedArea(false);
    return where->getRangeAddress().EndRow;
}

// Rows of `kept` (zero-based within the range at `first_row`) that the sheet
// does not show: the complement of its visible cells.
void find_hidden(const Reference<css::table::XCellRange>& kept, sal_Int32 first_row, std::size_t rows,
                 Place& place) {
    Reference<css::sheet::XCellRangesQuery> query(kept, UNO_QUERY);
    if (!query.is() || rows == 0) return;
    const Sequence<css::table::CellRangeAddress> visible =
        query->queryVisibleCells()->getRangeAddresses();
    std::vector<std::pair<std::size_t, std::size_t>> spans;  // [from, to] within the range
    for (const css::table::CellRangeAddress& a : visible)
        spans.emplace_back(static_cast<std::size_t>(a.StartRow - first_row),
                           static_cast<std::size_t>(a.EndRow - first_row));
    std::sort(spans.begin(), spans.end());
    std::size_t next = 0, shown = 0;  // first row not yet covered
    bool first_found = false;
    for (const auto& s : spans) {
        if (s.second < next) continue;
        if (s.first > next && !first_found) {
            place.first_hidden = next;
            first_found = true;
        }
        shown += s.second + 1 - std::max(s.first, next);
        next = s.second + 1;
    }
    if (!first_found && next < rows) place.first_hidden = next;
    place.hidden_rows = rows > shown ? rows - shown : 0;
}

// The office's name of an error value (FormulaError codes of LibreOffice's
// formula/errorcodes.hxx, as getError() gives them).
std::string error_name(sal_Int32 code) {
    switch (code) {
    case 503: return "#NUM!";
    case 519: return "#VALUE!";
    case 521: return "#NULL!";
    case 524: return "#REF!";
    case 525: return "#NAME?";
    case 532: return "#DIV/0!";
    case 32767: return "#N/A";
    default: return "Err:" + std::to_string(code);
    }
}

// getDataArray leaves the value of an error cell empty (void); nothing else is void.
bool has_void_cell(const Sequence<Sequence<Any>>& rows) {
    for (const Sequence<Any>& row : rows)
        for (const Any& a : row)
            if (a.getValueTypeClass() == css::uno::TypeClass_VOID) return true;
    return false;
}

}  // namespace

// Every formula cell of the rows read whose result is an error: its value in
// out.rows becomes a Type any (never read as blank) and its name goes to out.errors.
void mark_error_cells(SheetRange& out) {
    Reference<css::sheet::XCellRangesQuery> query(out.kept, UNO_QUERY);
    if (!query.is()) return;
    const Sequence<css::table::CellRangeAddress> blocks =
        query->queryFormulaCells(css::sheet::FormulaResult::ERROR)->getRangeAddresses();
    const Any error_mark(cppu::UnoType<void>::get());
    Sequence<Any>* rows = out.rows.getArray();
    const sal_Int32 first_row = static_cast<sal_Int32>(out.place.row),
                    first_col = static_cast<sal_Int32>(out.place.col);
    for (const css::table::CellRangeAddress& b : blocks)
        for (sal_Int32 r = b.StartRow; r <= b.EndRow; ++r)
            for (sal_Int32 c = b.StartColumn; c <= b.EndColumn; ++c) {
                const sal_Int32 rr = r - first_row, cc = c - first_col;
                if (rr >= out.rows.getLength() || cc >= rows[rr].getLength()) continue;
                const sal_Int32 code = out.kept->getCellByPosition(cc, rr)->getError();
                out.errors[{static_cast<std::size_t>(rr), static_cast<std::size_t>(cc)}] = error_name(code);
                rows[rr].getArray()[cc] = error_mark;
            }
}

SheetRange read_sheet_range(const Reference<css::table::XCellRange>& range, const char* name,
                            bool defer_errors) {
    Reference<css::sheet::XCellRangeAddressable> addressable(range, UNO_QUERY);
    Reference<css::sheet::XSheetCellRange> sheet_range(range, UNO_QUERY);
    if (!addressable.is() || !sheet_range.is())
        throw UserError(std::string(name) +
                        " is not a range of cells; select the cells (a computed array such as "
                        "LN(C2:C9) cannot be given: put it in a column of its own)");
    const css::table::CellRangeAddress a = addressable->getRangeAddress();
    const Reference<css::sheet::XSpreadsheet> sheet = sheet_range->getSpreadsheet();
    SheetRange out;
    Reference<css::container::XNamed> named(sheet, UNO_QUERY);
    if (named.is()) out.place.sheet = utf8(named->getName());
    out.place.row = static_cast<std::size_t>(a.StartRow);
    out.place.col = static_cast<std::size_t>(a.StartColumn);
    out.given_rows = static_cast<std::size_t>(a.EndRow - a.StartRow + 1);
    out.cols = static_cast<std::size_t>(a.EndColumn - a.StartColumn + 1);

    const sal_Int32 end_row = std::min(a.EndRow, last_used_row(sheet));
    if (end_row < a.StartRow) return out;  // nothing used: every row blank
    const sal_Int32 rows = end_row - a.StartRow + 1;
    Reference<css::table::XCellRange> kept =
        range->getCellRangeByPosition(0, 0, a.EndColumn - a.StartColumn, rows - 1);
    Reference<css::sheet::XCellRangeData> data(kept, UNO_QUERY);
    CallTrace::mark("sheet");
    out.rows = data->getDataArray();
    // The office's own conversion of the cells, apart from the add-in's share.
    CallTrace::mark("cells");
    find_hidden(kept, a.StartRow, static_cast<std::size_t>(rows), out.place);
    CallTrace::mark("hidden");

    out.kept = kept;
    if (!defer_errors && has_void_cell(out.rows)) mark_error_cells(out);
    CallTrace::mark("errors");
    return out;
}

}  // namespace weft_addin
