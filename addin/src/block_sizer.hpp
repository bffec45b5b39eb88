// The block-sizing menu command (block_sizer.cxx) and what it learns from the cell
// functions: the shape of the last result they returned.
#pragma once

#include <cstddef>
#include <string>

namespace weft_addin {

struct ResultShape {
    bool known = false;
    std::size_t rows = 0;
    std::size_t cols = 0;
    std::string error;  // the weft: text when the result was a message
};

// Called by every cell function with the shape of the result it returns.
void note_result_shape(std::size_t rows, std::size_t cols, const std::string& error);

}  // namespace weft_addin
