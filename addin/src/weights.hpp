// The model word weights=NAME in the add-in (FUNCTIONS.md "The model text"; the
// statistics are the core's, CONVENTIONS.md "Observation weights").
#pragma once

#include <cstddef>
#include <string>
#include <vector>

namespace weft_addin {

// A model text taken apart: the weights word (its NAME, empty when there is none) and
// the other words. weft_options has no field for the weights (weft.h), so the add-in
// canonicalises the other words and appends " weights=NAME" itself. Two different
// weights words are a UserError.
struct ModelWords {
    std::string rest;
    std::string weights;
};
ModelWords split_weights_word(const std::string& text);

// The regressor the weights name, by the core's rule (the header exactly, else
// ignoring case, else x<k>); names[k] empty means no header. npos when none matches
// (the core then words the error).
std::size_t weight_column(const std::vector<std::string>& names, const std::string& name);

}  // namespace weft_addin
