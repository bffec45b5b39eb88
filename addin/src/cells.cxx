#include "cells.hpp"

#include <cmath>
#include <utility>

namespace weft_addin {

const Cell& Arg::scalar() const {
    static const Cell blank;
    if (!given || table.cells.empty()) return blank;
    return table.cells.front();
}

void OutTable::set(std::size_t r, std::size_t c, double v) {
    OutCell& cell = cells[r * cols + c];
    cell.kind = OutCell::Kind::number;
    cell.number = v;
}

void OutTable::set(std::size_t r, std::size_t c, std::string v) {
    OutCell& cell = cells[r * cols + c];
    cell.kind = OutCell::Kind::text;
    cell.text = std::move(v);
}

void OutTable::set_number_or_blank(std::size_t r, std::size_t c, double v) {
    if (std::isfinite(v)) set(r, c, v);
}

UserError::UserError(const std::string& message_after_prefix)
    : std::runtime_error("weft: " + message_after_prefix) {}

UserError::UserError(FullText, const std::string& full_text) : std::runtime_error(full_text) {}

OutTable message_table(const std::string& text) {
    OutTable t(1, 1);
    t.set(0, 0, text);
    return t;
}

}  // namespace weft_addin
