#include "cells.hpp"

#include "suggest.hpp"

#include <cctype>
#include <cmath>
#include <cstdlib>
#include <iterator>
#include <map>
#include <mutex>
#include <new>
#include <utility>

namespace weft_addin {

namespace {

// Freed blocks by size; at most kKeptBytes in all. Never destroyed: cached columns
// may be freed while the library unloads, after other static objects are gone.
constexpr std::size_t kKeptBytes = std::size_t{256} << 20;
struct FreeBlocks {
    std::mutex mutex;
    std::multimap<std::size_t, void*> by_size;
    std::size_t bytes = 0;
};
FreeBlocks& free_blocks() {
    static FreeBlocks* const blocks = new FreeBlocks;
    return *blocks;
}

}  // namespace

void* take_block(std::size_t bytes) {
    FreeBlocks& f = free_blocks();
    {
        const std::lock_guard<std::mutex> lock(f.mutex);
        const auto it = f.by_size.find(bytes);
        if (it != f.by_size.end()) {
            void* p = it->second;
            f.by_size.erase(it);
            f.bytes -= bytes;
            return p;
        }
    }
    void* p = std::malloc(bytes);
    if (p == nullptr) throw std::bad_alloc();
    return p;
}

void give_block(void* p, std::size_t bytes) noexcept {
    if (p == nullptr) return;
    FreeBlocks& f = free_blocks();
    try {
        const std::lock_guard<std::mutex> lock(f.mutex);
        if (bytes <= kKeptBytes) {
            // Make room by freeing the largest kept blocks first.
            while (f.bytes + bytes > kKeptBytes && !f.by_size.empty()) {
                const auto last = std::prev(f.by_size.end());
                f.bytes -= last->first;
                std::free(last->second);
                f.by_size.erase(last);
            }
            f.by_size.emplace(bytes, p);
            f.bytes += bytes;
            return;
        }
    } catch (...) {
    }
    std::free(p);
}

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

// weft's own messages gain "did you mean ...?" for a mistyped word (suggest.hpp).
UserError::UserError(FullText, const std::string& full_text)
    : std::runtime_error(with_suggestion(full_text)) {}

namespace {

std::string column_letters(std::size_t col) {
    std::string name;
    for (std::size_t n = col + 1; n > 0; n = (n - 1) / 26)
        name.insert(name.begin(), static_cast<char>('A' + (n - 1) % 26));
    return name;
}

std::string sheet_prefix(const std::string& sheet) {
    bool plain = !sheet.empty();
    for (unsigned char ch : sheet)
        if (!(std::isalnum(ch) || ch == '_' || ch >= 0x80)) plain = false;
    if (plain) return sheet + "!";
    std::string quoted = "'";
    for (char ch : sheet) quoted += ch == '\'' ? std::string("''") : std::string(1, ch);
    return quoted + "'!";
}

std::string local_cell(std::size_t row, std::size_t col) {
    return column_letters(col) + std::to_string(row + 1);
}

}  // namespace

std::string cell_address(const Place& p, std::size_t r, std::size_t c) {
    return sheet_prefix(p.sheet) + local_cell(p.row + r, p.col + c);
}

std::string range_address(const Place& p, std::size_t rows, std::size_t cols) {
    const std::size_t last_r = rows == 0 ? 0 : rows - 1, last_c = cols == 0 ? 0 : cols - 1;
    return sheet_prefix(p.sheet) + local_cell(p.row, p.col) + ":" +
           local_cell(p.row + last_r, p.col + last_c);
}

OutTable message_table(const std::string& text) {
    OutTable t(1, 1);
    t.set(0, 0, text);
    return t;
}

}  // namespace weft_addin
