// Warnings in view: the one rule every WEFT.* result follows (README "Warnings").
// A result with warnings lists them in rows of its own at its end (label "warning"
// and the text; in a one-column result the text starts "warning: "), and its first
// cell, a header or label in every layout, says in which rows they are, e.g.
// "term [warnings in rows 5-6]", so a block entered at its documented size shows
// that there is more to read. An error fills the first cell only and leaves the rest
// of the block blank.
#pragma once

#include "cells.hpp"

#include <string>
#include <vector>

namespace weft_addin {

// Appends `warnings` as rows, then marks the first cell for every warning row
// (those added and the "warning"/"warnings" rows the layout already had).
OutTable in_view(OutTable t, const std::vector<std::string>& warnings);

// The rows and columns an error result fills with blanks after its first cell.
constexpr std::size_t kErrorRows = 64;
constexpr std::size_t kErrorCols = 16;
// An error text in the first cell, blanks in the rest of kErrorRows x kErrorCols.
OutTable error_table(const std::string& text);

}  // namespace weft_addin
