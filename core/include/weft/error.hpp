// weft/error.hpp -- the one exception type of weft's core.
//
// Contract: every invalid input (length mismatch, NaN/Inf in a cell not marked missing,
// repeated (unit, period), unknown model word, no usable rows, too few rows or clusters,
// ...) raises weft::Error. Its what() is a sentence a spreadsheet user can act on: it
// says what is wrong and names the row / unit / period / word. It does NOT carry the
// "weft: " prefix; the C layer adds that. Numerical outcomes (rank deficiency, dropped
// terms, a covariance that needed clipping) are never exceptions: they are reported in
// the result (Fit::dropped, Fit::warnings).
#pragma once

#include <stdexcept>
#include <string>

namespace weft {

class Error : public std::runtime_error {
public:
    explicit Error(const std::string& message) : std::runtime_error(message) {}
};

}  // namespace weft
