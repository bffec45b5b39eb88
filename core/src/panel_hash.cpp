// Grouping rows by unit without comparing ids row against row: each id is hashed once
// (open addressing, linear probing), only the distinct ids are sorted (units are
// numbered in sorted order, CONVENTIONS.md "Panel index"), and the rows are placed by
// a counting sort on the unit number, which keeps input order within a unit; a unit's
// few rows are then put in period order. O(N) for any row order and either id type,
// where a comparison sort of the rows costs O(N log N) string or number comparisons.
#include <algorithm>
#include <cstdint>
#include <cstring>
#include <string>
#include <string_view>
#include <vector>

#include "weft/buffer.hpp"
#include "internal.hpp"

namespace weft::detail {

namespace {

// 64-bit FNV-1a (Fowler, Noll, Vo): a few operations a byte, good spread on short ids.
std::uint64_t hash_bytes(std::string_view text) {
    std::uint64_t h = 1469598103934665603ull;
    for (const char c : text) {
        h ^= static_cast<unsigned char>(c);
        h *= 1099511628211ull;
    }
    return h;
}

// The finaliser of splitmix64 (Steele, Lea, Flood 2014) over a double's bits; -0 and
// 0 are one id (they compare equal).
std::uint64_t hash_number(double value) {
    if (value == 0) value = 0;
    std::uint64_t z;
    std::memcpy(&z, &value, sizeof z);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ull;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebull;
    return z ^ (z >> 31);
}

// Distinct keys numbered 0, 1, ... in order of first appearance. A slot holds the
// key's number + 1 (0 = empty); same(a, row) says whether row holds key a's value.
class FirstSeen {
public:
    explicit FirstSeen(std::size_t expected) {
        std::size_t capacity = 1024;
        while (capacity < 2 * expected && capacity < (std::size_t{1} << 30)) capacity <<= 1;
        slots_.assign(capacity, 0);
        hashes_.reserve(expected);
    }

    template <class Same>
    std::int32_t find_or_add(std::uint64_t hash, std::size_t row, Same same) {
        std::size_t mask = slots_.size() - 1;
        for (std::size_t at = hash & mask;; at = (at + 1) & mask) {
            const std::uint32_t slot = slots_[at];
            if (slot == 0) {
                first_row.push_back(row);
                hashes_.push_back(hash);
                slots_[at] = static_cast<std::uint32_t>(first_row.size());
                if (2 * first_row.size() > slots_.size()) grow();
                return static_cast<std::int32_t>(first_row.size() - 1);
            }
            const std::size_t key = slot - 1;
            if (hashes_[key] == hash && same(first_row[key], row)) return static_cast<std::int32_t>(key);
        }
    }

    std::vector<std::size_t> first_row;   // per key: the first row holding it

private:
    void grow() {
        std::vector<std::uint32_t> bigger(slots_.size() * 2, 0);
        const std::size_t mask = bigger.size() - 1;
        for (std::size_t key = 0; key < hashes_.size(); ++key) {
            std::size_t at = hashes_[key] & mask;
            while (bigger[at] != 0) at = (at + 1) & mask;
            bigger[at] = static_cast<std::uint32_t>(key + 1);
        }
        slots_.swap(bigger);
    }

    std::vector<std::uint32_t> slots_;
    std::vector<std::uint64_t> hashes_;
};

}  // namespace

std::vector<std::size_t> group_rows_hashed(const UnitColumn& units, const Column* periods,
                                           const std::vector<std::size_t>& valid, PanelIndex& index) {
    const std::size_t n = units.size();
    const bool text = units.is_text();
    // 1. the key of every valid row, by first appearance
    std::vector<std::int32_t> key_of_row;
    assign_large(key_of_row, n, std::int32_t{-1});
    FirstSeen keys(std::min<std::size_t>(valid.size(), 1u << 16));
    if (text) {
        auto same = [&](std::size_t a, std::size_t b) { return units.id_text(a) == units.id_text(b); };
        for (const std::size_t r : valid) key_of_row[r] = keys.find_or_add(hash_bytes(units.id_text(r)), r, same);
    } else {
        const double* u = units.number_data();
        auto same = [&](std::size_t a, std::size_t b) { return u[a] == u[b]; };
        for (const std::size_t r : valid) key_of_row[r] = keys.find_or_add(hash_number(u[r]), r, same);
    }
    // 2. the distinct ids in sorted order: unit numbers and labels
    const std::size_t n_units = keys.first_row.size();
    std::vector<std::int32_t> by_value(n_units);
    for (std::size_t k = 0; k < n_units; ++k) by_value[k] = static_cast<std::int32_t>(k);
    if (text) {
        std::sort(by_value.begin(), by_value.end(), [&](std::int32_t a, std::int32_t b) {
            return units.id_text(keys.first_row[static_cast<std::size_t>(a)])
                       .compare(units.id_text(keys.first_row[static_cast<std::size_t>(b)])) < 0;
        });
    } else {
        std::sort(by_value.begin(), by_value.end(), [&](std::int32_t a, std::int32_t b) {
            return units.number_data()[keys.first_row[static_cast<std::size_t>(a)]] <
                   units.number_data()[keys.first_row[static_cast<std::size_t>(b)]];
        });
    }
    std::vector<std::int32_t> unit_of_key(n_units);
    index.unit_labels.clear();
    index.unit_labels.reserve(n_units);
    for (std::size_t v = 0; v < n_units; ++v) {
        const std::size_t key = static_cast<std::size_t>(by_value[v]);
        unit_of_key[key] = static_cast<std::int32_t>(v);
        const std::size_t first = keys.first_row[key];
        index.unit_labels.push_back(text ? std::string(units.id_text(first)) : format_number(units.number_data()[first]));
    }
    // 3. counting sort of the rows by unit (input order kept within a unit)
    assign_large(index.unit_of_row, n, std::int32_t{-1});
    assign_large(index.period_of_row, n, std::int32_t{-1});
    index.unit_start.assign(n_units + 1, 0);
    for (const std::size_t r : valid) {
        const std::int32_t unit = unit_of_key[static_cast<std::size_t>(key_of_row[r])];
        index.unit_of_row[r] = unit;
        ++index.unit_start[static_cast<std::size_t>(unit) + 1];
    }
    std::vector<std::int32_t>().swap(key_of_row);
    for (std::size_t v = 0; v < n_units; ++v) index.unit_start[v + 1] += index.unit_start[v];
    std::vector<std::size_t> rows;
    assign_large(rows, valid.size(), std::size_t{0});
    {
        std::vector<std::size_t> next(index.unit_start.begin(), index.unit_start.end() - 1);
        for (const std::size_t r : valid) rows[next[static_cast<std::size_t>(index.unit_of_row[r])]++] = r;
    }
    // 4. each unit's rows by period (ties by row): usually in order already
    if (periods != nullptr) {
        auto earlier = [&](std::size_t a, std::size_t b) {
            const double pa = periods->value(a), pb = periods->value(b);
            if (pa != pb) return pa < pb;
            return a < b;
        };
        for (std::size_t v = 0; v < n_units; ++v) {
            const auto begin = rows.begin() + static_cast<std::ptrdiff_t>(index.unit_start[v]);
            const auto end = rows.begin() + static_cast<std::ptrdiff_t>(index.unit_start[v + 1]);
            if (!std::is_sorted(begin, end, earlier)) std::sort(begin, end, earlier);
        }
    }
    return rows;
}

}  // namespace weft::detail
