// Seeded synthetic panels for the benchmarks: the same seed gives the same numbers
// on every machine (own normal generator, no std:: distributions whose output
// differs between standard libraries).
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <vector>

namespace weft_bench {

enum class Layout { balanced, unbalanced };

struct PanelShape {
  std::size_t units = 0;
  std::size_t periods = 0;
  std::size_t regressors = 0;
  Layout layout = Layout::balanced;
  std::uint64_t seed = 20261202;
};

// Column-major data as a host would hand it over: one contiguous block holding the
// outcome then the regressors (so the floor pass reads exactly the same memory),
// plus unit and period columns. Rows are sorted by unit then period, as a sheet
// usually is; shuffle_rows() gives the same panel in another order.
struct SyntheticPanel {
  std::size_t rows = 0;
  std::size_t regressors = 0;
  std::vector<double> block;  // rows x (1 + regressors), column-major: y, x1..xK
  std::vector<double> unit;   // unit id per row (1..units)
  std::vector<double> period; // period per row (a year, 2001..)
  // Unit ids as text (unit_text of unit), when the benchmark hands text ids over;
  // empty: the numbers in unit are handed over.
  std::vector<std::string> unit_names;
  // Missing flags (1 = a blank cell); empty means none is missing. regressor_missing
  // applies to x1 only.
  std::vector<unsigned char> outcome_missing;
  std::vector<unsigned char> regressor_missing;

  const double* outcome() const { return block.data(); }
  const double* regressor(std::size_t k) const { return block.data() + (k + 1) * rows; }
  // Bytes of the input a host holds: the block plus the two index columns.
  std::size_t input_bytes() const {
    return (block.size() + unit.size() + period.size()) * sizeof(double) + unit_names.size() * sizeof(std::string);
  }
};

std::string layout_name(Layout layout);

// Balanced: every unit in every period. Unbalanced: each unit-period is absent with
// probability 0.15 (so units have interior gaps) and a fifth of the units join late,
// which is the shape that makes differencing and demeaning gap-aware.
SyntheticPanel make_panel(const PanelShape& shape);

// Which unit-periods exist, unit-major (i * periods + t): all ones when balanced.
// make_panel of the unbalanced shape equals make_panel of the balanced shape with
// the rows where this is 0 removed.
std::vector<unsigned char> presence(const PanelShape& shape);

// Same rows in a seeded random order.
SyntheticPanel shuffle_rows(const SyntheticPanel& panel, std::uint64_t seed);

// Same rows sorted by period, then unit (a sheet laid out one period after another).
SyntheticPanel period_major(const SyntheticPanel& panel);

// The text form of unit id u as a sheet might hold it ("Branch 00017"): ids in text
// order sort as the numbers do.
std::string unit_text(double u);

// The balanced panel with the rows absent from the unbalanced layout kept but their
// outcome marked missing: a conforming library must fit it exactly as the
// unbalanced panel (`present` from presence() of the unbalanced shape).
SyntheticPanel mark_absent_as_missing(const SyntheticPanel& balanced,
                                      const std::vector<unsigned char>& present);

// Same panel with `extra` rows appended whose outcome or x1 is missing and whose
// unit/period pairs are new, so a conforming library drops them and the used rows
// are unchanged.
SyntheticPanel pad_with_unusable_rows(const SyntheticPanel& panel, std::size_t extra);

// CSV with header unit,period,y,x1..xK; full precision (17 significant digits).
void write_csv(const SyntheticPanel& panel, const std::string& path);
SyntheticPanel read_csv(const std::string& path);

}  // namespace weft_bench
