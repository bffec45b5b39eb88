// Reading a range argument that the office passed as the cells themselves
// (com.sun.star.table.XCellRange, the sheet* methods of XCalcFunctions): its values
// in one call (XCellRangeData.getDataArray), where it is (sheet, first row, first
// column), which rows the sheet hides, and the name of every error value in it.
// UNO glue: compiled into the component only.
#pragma once

#include "cells.hpp"

#include <com/sun/star/table/XCellRange.hpp>
#include <com/sun/star/uno/Sequence.hxx>

#include <cstddef>
#include <map>
#include <string>
#include <utility>

namespace weft_addin {

struct SheetRange {
    // Values of the rows up to the sheet's last used row (a whole-column reference
    // is not read below it): numbers as double, text as string, blank as an empty
    // string, an error value as a Type any (never blank), named in `errors`.
    com::sun::star::uno::Sequence<com::sun::star::uno::Sequence<com::sun::star::uno::Any>> rows;
    std::size_t given_rows = 0;  // rows of the range as referenced
    std::size_t cols = 0;
    Place place;
    std::map<std::pair<std::size_t, std::size_t>, std::string> errors;  // (row, col) -> "#DIV/0!"
    // The rows read, for naming the error values later (mark_error_cells).
    com::sun::star::uno::Reference<com::sun::star::table::XCellRange> kept;
};

// `name` is the argument's name for the message when the office passed no range.
// The office hands an error value as an empty (void) any; only a range holding one is
// asked which cells hold errors, since asking costs more than reading the cells.
// With defer_errors, the caller does that itself (mark_error_cells) when it finds a
// void any while passing over the cells anyway.
SheetRange read_sheet_range(const com::sun::star::uno::Reference<com::sun::star::table::XCellRange>& range,
                            const char* name, bool defer_errors = false);

// Names every error value of `range` (see SheetRange::rows and errors).
void mark_error_cells(SheetRange& range);

}  // namespace weft_addin
