#include "warnings_view.hpp"

#include <utility>

namespace weft_addin {

namespace {

bool is_warning_row(const OutTable& t, std::size_t r) {
    const OutCell& c = t.cells[r * t.cols];
    if (c.kind != OutCell::Kind::text) return false;
    if (t.cols == 1) return c.text.rfind("warning: ", 0) == 0;
    return c.text == "warning" || c.text == "warnings";
}

}  // namespace

OutTable in_view(OutTable t, const std::vector<std::string>& warnings) {
    if (t.rows == 0 || t.cols == 0) return t;
    for (const std::string& w : warnings) {
        t.cells.resize(t.cells.size() + t.cols);
        ++t.rows;
        if (t.cols == 1) {
            t.set(t.rows - 1, 0, "warning: " + w);
        } else {
            t.set(t.rows - 1, 0, std::string("warning"));
            t.set(t.rows - 1, 1, w);
        }
    }
    std::size_t first = 0, last = 0;
    for (std::size_t r = 1; r < t.rows; ++r)
        if (is_warning_row(t, r)) {
            if (first == 0) first = r;
            last = r;
        }
    OutCell& corner = t.cells[0];
    if (first == 0 || corner.kind != OutCell::Kind::text) return t;
    corner.text += first == last ? " [warning in row " + std::to_string(first + 1) + "]"
                                 : " [warnings in rows " + std::to_string(first + 1) + "-" +
                                       std::to_string(last + 1) + "]";
    return t;
}

OutTable error_table(const std::string& text) {
    OutTable t(kErrorRows, kErrorCols);
    t.set(0, 0, text);
    return t;
}

}  // namespace weft_addin
