#include "sheet_checks.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <regex>

namespace weft_addin {

namespace {

[[noreturn]] void fail(const std::string& message_after_prefix) { throw UserError(message_after_prefix); }

std::string trimmed(const std::string& s) {
    std::size_t b = 0, e = s.size();
    while (b < e && std::isspace(static_cast<unsigned char>(s[b]))) ++b;
    while (e > b && std::isspace(static_cast<unsigned char>(s[e - 1]))) --e;
    return s.substr(b, e - b);
}

std::string shown_text(const std::string& s) {
    const std::string t = s.size() > 40 ? s.substr(0, 40) + "..." : s;
    return "\"" + t + "\"";
}

std::string shown_number(double v) {
    char buf[64];
    std::snprintf(buf, sizeof buf, "%.15g", v);
    return buf;
}

// The range to give instead of `g`: its columns over `rows` rows from sheet row `row`.
std::string moved_range(const CellGrid& g, std::size_t row, std::size_t rows) {
    Place moved = *g.place();
    moved.row = row;
    return range_address(moved, rows, g.col_count() == 0 ? 1 : g.col_count());
}

}  // namespace

std::string cell_name(const NamedGrid& g, std::size_t r, std::size_t c) {
    if (const Place* p = g.grid->place()) return cell_address(*p, r, c);
    std::string s = "row " + std::to_string(r + 1);
    if (g.grid->col_count() > 1) s += ", column " + std::to_string(c + 1);
    return s + " of " + g.name;
}

std::string located(const NamedGrid& g, std::size_t r, std::size_t c) {
    if (g.grid->place() != nullptr) return cell_name(g, r, c) + " (in " + g.name + ")";
    return cell_name(g, r, c);
}

void require_same_start(std::initializer_list<NamedGrid> ranges) {
    const NamedGrid* lead = nullptr;
    for (const NamedGrid& g : ranges) {
        const Place* p = g.grid->place();
        if (p == nullptr) continue;
        if (lead == nullptr) {
            lead = &g;
            continue;
        }
        const Place& l = *lead->grid->place();
        if (p->row == l.row) continue;
        const std::size_t gap = p->row > l.row ? p->row - l.row : l.row - p->row;
        fail(std::string(lead->name) + " starts at " + cell_address(l, 0, 0) + " but " + g.name +
             " starts at " + cell_address(*p, 0, 0) + ", " + std::to_string(gap) +
             (gap == 1 ? " row " : " rows ") + (p->row > l.row ? "lower" : "higher") +
             "; rows are paired by sheet row, so give every range the same first and last row, "
             "e.g. " + g.name + " " +  moved_range(*g.grid, l.row, lead->grid->given_row_count()) + " beside " + lead->name + " " +
             range_address(l, lead->grid->given_row_count(), 1));
    }
}

void require_consistent_headers(const NamedGrid& lead, bool header,
                                std::initializer_list<NamedGrid> numeric) {
    if (lead.grid->row_count() == 0) return;
    const Cell first = lead.grid->cell(0, 0);
    for (const NamedGrid& g : numeric) {
        if (g.grid->row_count() == 0) continue;
        for (std::size_t c = 0; c < g.grid->col_count(); ++c) {
            const Cell cell = g.grid->cell(0, c);
            if (header && cell.is_number())
                fail(std::string(lead.name) + " starts with the header " + shown_text(trimmed(first.text)) +
                     " (" + cell_name(lead, 0, 0) + ") but " + g.name + " starts with the number " +
                     shown_number(cell.number) + " (" + cell_name(g, 0, c) +
                     "); the first row of every range must be the header row: start " + g.name +
                     " on the header row too, or give every range without its header");
            if (!header && cell.is_text())
                fail(std::string(g.name) + " starts with the header " + shown_text(trimmed(cell.text)) + " (" +
                     cell_name(g, 0, c) + ") but " + lead.name + " starts with " +
                     (first.is_number() ? "the number " + shown_number(first.number)
                                        : std::string("a blank cell")) +
                     " (" + cell_name(lead, 0, 0) + "); include " + lead.name +
                     "'s header cell in its range, or give every range without its header");
        }
    }
}

bool reads_as_number(const std::string& text) {
    static const std::regex plain(R"([+-]?(\d+([.,]\d*)?|[.,]\d+)([eE][+-]?\d+)?%?)");
    static const std::regex grouped(R"([+-]?\d{1,3}([ .,'\xC2\xA0]{1,2}\d{3})+([.,]\d+)?%?)");
    const std::string t = trimmed(text);
    if (t.empty() || t.size() > 64) return false;
    return std::regex_match(t, plain) || std::regex_match(t, grouped);
}

bool reads_as_date(const std::string& text) {
    static const std::regex iso(R"(\d{4}-\d{1,2}-\d{1,2}([ T]\d{1,2}:\d{2}(:\d{2})?)?)");
    static const std::regex dmy(R"(\d{1,2}[/.-]\d{1,2}[/.-]\d{2,4})");
    const std::string t = trimmed(text);
    if (t.empty() || t.size() > 32) return false;
    return std::regex_match(t, iso) || std::regex_match(t, dmy);
}

void TextCells::note_error(const NamedGrid& g, std::size_t r, std::size_t c, const Cell& cell) {
    if (!cell.is_error()) return;
    fail(located(g, r, c) + " holds the error value " + cell.text +
         "; correct the formula in that cell, or leave its row out of the ranges");
}

void TextCells::note(const NamedGrid& g, std::size_t r, std::size_t c, const Cell& cell) {
    note_error(g, r, c, cell);
    if (!cell.is_text()) return;
    if (reads_as_date(cell.text))
        fail(located(g, r, c) + " holds " + shown_text(cell.text) +
             ", a date stored as text; enter it as a date or a number (retype it, or convert the "
             "column with Data > Text to Columns)");
    if (reads_as_number(cell.text))
        fail(located(g, r, c) + " holds " + shown_text(cell.text) +
             ", a number stored as text; enter it as a number (retype it, or convert the column "
             "with Data > Text to Columns and the file's decimal separator)");
    for (Seen& s : seen_)
        if (s.range == g.name) {
            ++s.count;
            return;
        }
    seen_.push_back({g.name, 1, cell_name(g, r, c) + " " + shown_text(cell.text)});
}

std::vector<std::string> TextCells::warnings() const {
    std::vector<std::string> out;
    for (const Seen& s : seen_)
        out.push_back(std::to_string(s.count) + (s.count == 1 ? " cell of " : " cells of ") + s.range +
                      (s.count == 1 ? " holds" : " hold") + " text, read as missing (first: " + s.first +
                      "); their rows are dropped: enter numbers there or leave those rows out");
    return out;
}

std::vector<std::string> hidden_row_warnings(std::initializer_list<NamedGrid> ranges,
                                             std::size_t start, std::size_t end) {
    for (const NamedGrid& g : ranges) {
        const Place* p = g.grid->place();
        if (p == nullptr || p->hidden_rows == 0 || p->first_hidden >= end) continue;
        const std::size_t first = std::max(p->first_hidden, start);
        return {std::to_string(p->hidden_rows) + (p->hidden_rows == 1 ? " row" : " rows") +
                " of the ranges " + (p->hidden_rows == 1 ? "is" : "are") +
                " hidden or filtered out (first: " + cell_address(*p, first, 0) +
                "); weft uses them like every other row: to leave rows out, delete them or give "
                "ranges without them"};
    }
    return {};
}

}  // namespace weft_addin
