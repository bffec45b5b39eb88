// weft/transforms.hpp -- one-pass panel transforms, aligned to the input rows.
//
// Contract:
// - Every function returns a Series with one entry per input row, in input order.
//   Series::defined[i] == 0 means "undefined" (blank in the sheet); value[i] is then 0
//   and must not be read as a number. A row is undefined when its own value is missing,
//   its unit/period is missing, or the transform needs a row that is absent.
// - Gap rule (CONVENTIONS.md): lag/difference step along the panel's time grid. The
//   lag of order k at (unit i, grid position p) is the value of unit i at grid position
//   p - k if that row exists and its value is present, otherwise undefined; k < 0 is a
//   lead. difference(k) = value - lag(k) (x_t - x_{t-k}, k grid steps apart, as a
//   seasonal difference; k = 1 is the first difference). Never "the previous row".
// - demean / unit_means use the rows of the unit whose value is present.
// - quasi_demean: value - theta[u] * unit mean (random effects), theta per unit number.
// - Errors (weft::Error): length mismatch, NaN/Inf not marked missing, repeated (unit,
//   period) (via build_index), k == 0 for lag/difference.
// The overloads taking a PanelIndex let a caller index once and transform many columns.
#pragma once

#include <string>
#include <vector>

#include "weft/panel.hpp"

namespace weft {

struct Series {
    std::vector<double> value;
    std::vector<std::uint8_t> defined;  // 1 = value is a number, 0 = undefined (blank)

    std::size_t size() const { return value.size(); }
    bool is_defined(std::size_t row) const { return defined[row] != 0; }
};

Series lag(const Column& values, const PanelIndex& index, int k = 1);
Series difference(const Column& values, const PanelIndex& index, int k = 1);
Series demean(const Column& values, const PanelIndex& index);
Series unit_means(const Column& values, const PanelIndex& index);
Series quasi_demean(const Column& values, const PanelIndex& index,
                    const std::vector<double>& theta_by_unit);

// Convenience forms for the cell functions (index built inside).
Series lag(const Column& values, const UnitColumn& units, const Column& periods, int k = 1,
           std::size_t first_row_number = 1);
Series difference(const Column& values, const UnitColumn& units, const Column& periods,
                  int k = 1, std::size_t first_row_number = 1);
Series demean(const Column& values, const UnitColumn& units, std::size_t first_row_number = 1);
Series unit_means(const Column& values, const UnitColumn& units,
                  std::size_t first_row_number = 1);

// WEFT.DUMMIES: one 0/1 column per distinct period (sorted), labels "period <value>".
// omit_first drops the first period's column. Rows with a missing period are undefined.
struct PeriodIndicators {
    std::vector<double> periods;       // the period value of each column
    std::vector<std::string> labels;   // "period 1936", ...
    std::vector<Series> columns;
};
PeriodIndicators period_indicators(const Column& periods, bool omit_first,
                                   std::size_t first_row_number = 1);

}  // namespace weft
