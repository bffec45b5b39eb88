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

// Two independent word-wise mixing lanes: not cryptographic, but a chance
// collision of two different inputs is about 2^-128, and a collision would show
// another model's numbers, so one 64-bit lane is not enough.
class Hasher {
public:
    void add_u64(std::uint64_t w);
    void add_double(double v) {
        std::uint64_t w;
        std::memcpy(&w, &v, sizeof w);
        add_u64(w);
    }
    void add_bytes(const char* data, std::size_t n);
    void add_string(const std::string& s) {
        add_u64(s.size());
        add_bytes(s.data(), s.size());
    }
    Hash128 digest() const;

private:
    std::uint64_t a_ = 0x9e3779b97f4a7c15ull;
    std::uint64_t b_ = 0xc2b2ae3d27d4eb4full;
    std::uint64_t count_ = 0;
};

template <class Value>
class LruCache {
public:
    explicit LruCache(std::size_t capacity) : capacity_(capacity) {}

    // The cached value, now the most recently used; nullptr when absent.
    std::shared_ptr<Value> find(const Hash128& key) {
        for (auto it = items_.begin(); it != items_.end(); ++it) {
            if (it->first == key) {
                items_.splice(items_.begin(), items_, it);
                return items_.front().second;
            }
        }
        return nullptr;
    }

    void put(const Hash128& key, std::shared_ptr<Value> value) {
        items_.emplace_front(key, std::move(value));
        while (items_.size() > capacity_) items_.pop_back();
    }

    void clear() { items_.clear(); }

private:
    std::size_t capacity_;
    std::list<std::pair<Hash128, std::shared_ptr<Value>>> items_;
};

}  // namespace weft_addin
