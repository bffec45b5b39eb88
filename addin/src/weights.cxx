#include "weights.hpp"

#include <cctype>

#include "cells.hpp"

namespace weft_addin {

namespace {

std::string lower_text(std::string s) {
    for (char& c : s) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
    return s;
}

}  // namespace

ModelWords split_weights_word(const std::string& text) {
    ModelWords out;
    std::string word;
    auto flush = [&] {
        if (word.empty()) return;
        if (lower_text(word.substr(0, 8)) == "weights=" && word.size() > 8) {
            const std::string name = word.substr(8);
            if (!out.weights.empty() && out.weights != name)
                throw UserError("model: \"weights=" + out.weights + "\" and \"weights=" + name +
                                "\" conflict; give one weight column");
            out.weights = name;
        } else {
            out.rest += (out.rest.empty() ? "" : " ") + word;
        }
        word.clear();
    };
    for (char ch : text) {
        if (ch == ' ' || ch == ',' || ch == ';' || std::isspace(static_cast<unsigned char>(ch)))
            flush();
        else
            word.push_back(ch);
    }
    flush();
    return out;
}

std::size_t weight_column(const std::vector<std::string>& names, const std::string& name) {
    for (std::size_t k = 0; k < names.size(); ++k)
        if (names[k] == name) return k;
    for (std::size_t k = 0; k < names.size(); ++k)
        if (lower_text(names[k]) == lower_text(name)) return k;
    for (std::size_t k = 0; k < names.size(); ++k)
        if (names[k].empty() && lower_text(name) == "x" + std::to_string(k + 1)) return k;
    return std::string::npos;
}

}  // namespace weft_addin
