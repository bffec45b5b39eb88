// Internal helpers of weft_core shared between its source files (not installed).
#pragma once

#include <cstddef>
#include <string>

#include "weft/panel.hpp"

namespace weft::detail {

// "\"name\"" or the fallback text when the column has no name.
std::string column_label(const std::string& name, const char* fallback);

// Error "<what> has <got> rows but <expected_what> has <expected>" unless equal.
void check_length(std::size_t expected, const char* expected_what, std::size_t got,
                  const std::string& what);

// Length and mask size, and no NaN/Inf outside the missing mask.
void check_column(const Column& column, std::size_t n_rows, const char* expected_what,
                  const std::string& what, std::size_t first_row_number);

PanelIndex make_index(const UnitColumn& units, const Column& periods, std::size_t first_row_number,
                      bool reject_duplicates, std::size_t* duplicate_count);

}  // namespace weft::detail

#include <Eigen/Core>

namespace weft { struct Equation; }

namespace weft::detail {

// Rows [first, first + count) of the working design Z of an equation (see
// Equation::shift/scale), written into out (count x K).
void working_block(const Equation& eq, Eigen::Index first, Eigen::Index count, Eigen::MatrixXd& out);

// M^-1 where X = Z M (maps working-basis coefficients to the original basis).
Eigen::MatrixXd working_to_original(const Equation& eq);

// R^-1 of the equation's upper-triangular factor.
Eigen::MatrixXd r_inverse(const Equation& eq);

// Rows per block in the tall-skinny QR and in the blockwise score passes.
inline constexpr Eigen::Index kBlockRows = 2048;
// Rows per block of the tall-skinny QR (sized so a block stays in the L1/L2 cache).
inline constexpr Eigen::Index kTsqrBlockRows = 256;
// Largest cond(Z) (Frobenius estimate from R) for which the solver takes the Gram
// route; above it (or when any term is near collinear) the tall-skinny QR decides.
// At 1e2, cond^2 eps ~ 1e-12. Measured on NIST: Longley (cond between 1e2 and 1e3)
// keeps SE LRE 15.0 on the QR but 12.6 on the Gram route, Wampler3-5 (about 1e4) drop
// from 13.7 to 10.3, so the limit sits below both.
inline constexpr double kGramConditionLimit = 1e2;

}  // namespace weft::detail
