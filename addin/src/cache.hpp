// A small least-recently-used cache of fitted weft handles, keyed by a 128-bit
// hash of the input cells and the model text. Several cells that ask about one
// model (WEFT.ESTIMATES, WEFT.SUMMARY, a dozen WEFT.VALUE) then fit it once per
// recalculation, and memory stays bounded by the number of entries.
#pragma once

#include <cstddef>
#include <cstdint>
#include <cstring>
#include <list>
#include <memory>
#include <string>
#include <utility>

namespace weft_addin {

struct Hash128 {
    std::uint64_t a = 0;
    std::uint64_t b = 0;
    bool operator==(const Hash128& o) const { return a == o.a && b == o.b; }
    std::string hex() const;
};

// Four independent word-wise mixing lanes (word i goes to lane i mod 4), so that
// a long input is hashed at the speed of the multiplier rather than of one chain of
// them, folded into two 64-bit words at the end: not cryptographic, but a chance
// collision of two different inputs is about 2^-128, and a collision would show
// another model's numbers, so one 64-bit word is not enough.
class Hasher {
public:
    void add_u64(std::uint64_t w) {
        std::uint64_t& lane = lanes_[count_ & 3];
        lane = rotl(lane + w * 0xc2b2ae3d27d4eb4full, 31) * 0x9e3779b97f4a7c15ull;
        ++count_;
    }
    void add_double(double v) {
        std::uint64_t w;
        std::memcpy(&w, &v, sizeof w);
        add_u64(w);
    }
    // The same as add_double for each value in turn, with the lanes kept in registers.
    void add_doubles(const double* v, std::size_t n) {
        std::size_t i = 0;
        for (; i < n && (count_ & 3) != 0; ++i) add_double(v[i]);
        std::uint64_t l0 = lanes_[0], l1 = lanes_[1], l2 = lanes_[2], l3 = lanes_[3];
        for (; i + 4 <= n; i += 4) {
            std::uint64_t w[4];
            std::memcpy(w, v + i, sizeof w);
            l0 = rotl(l0 + w[0] * 0xc2b2ae3d27d4eb4full, 31) * 0x9e3779b97f4a7c15ull;
            l1 = rotl(l1 + w[1] * 0xc2b2ae3d27d4eb4full, 31) * 0x9e3779b97f4a7c15ull;
            l2 = rotl(l2 + w[2] * 0xc2b2ae3d27d4eb4full, 31) * 0x9e3779b97f4a7c15ull;
            l3 = rotl(l3 + w[3] * 0xc2b2ae3d27d4eb4full, 31) * 0x9e3779b97f4a7c15ull;
            count_ += 4;
        }
        lanes_[0] = l0;
        lanes_[1] = l1;
        lanes_[2] = l2;
        lanes_[3] = l3;
        for (; i < n; ++i) add_double(v[i]);
    }
    void add_bytes(const char* data, std::size_t n);
    void add_string(const std::string& s) {
        add_u64(s.size());
        add_bytes(s.data(), s.size());
    }
    Hash128 digest() const;

private:
    static std::uint64_t rotl(std::uint64_t x, int r) { return (x << r) | (x >> (64 - r)); }
    std::uint64_t lanes_[4] = {0x9e3779b97f4a7c15ull, 0xc2b2ae3d27d4eb4full, 0x165667b19e3779f9ull,
                               0x85ebca77c2b2ae63ull};
    std::uint64_t count_ = 0;
};

// At most `capacity` entries and, when entries are put with a cost, at most
// `max_cost` in all (the newest entry is kept whatever its cost).
template <class Value>
class LruCache {
public:
    explicit LruCache(std::size_t capacity, std::size_t max_cost = SIZE_MAX)
        : capacity_(capacity), max_cost_(max_cost) {}

    // The cached value, now the most recently used; nullptr when absent.
    std::shared_ptr<Value> find(const Hash128& key) {
        for (auto it = items_.begin(); it != items_.end(); ++it) {
            if (it->key == key) {
                items_.splice(items_.begin(), items_, it);
                return items_.front().value;
            }
        }
        return nullptr;
    }

    void put(const Hash128& key, std::shared_ptr<Value> value, std::size_t cost = 0) {
        items_.push_front(Item{key, std::move(value), cost});
        total_cost_ += cost;
        while (items_.size() > capacity_ || (items_.size() > 1 && total_cost_ > max_cost_)) {
            total_cost_ -= items_.back().cost;
            items_.pop_back();
        }
    }

    std::size_t size() const { return items_.size(); }

    void clear() {
        items_.clear();
        total_cost_ = 0;
    }

private:
    struct Item {
        Hash128 key;
        std::shared_ptr<Value> value;
        std::size_t cost;
    };
    std::size_t capacity_;
    std::size_t max_cost_;
    std::size_t total_cost_ = 0;
    std::list<Item> items_;
};

}  // namespace weft_addin
