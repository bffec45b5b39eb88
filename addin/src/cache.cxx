#include "cache.hpp"

#include <cstdio>

namespace weft_addin {

namespace {

// The finaliser of splitmix64: every input bit affects every output bit.
std::uint64_t mix(std::uint64_t z) {
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ull;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebull;
    return z ^ (z >> 31);
}

}  // namespace

void Hasher::add_bytes(const char* data, std::size_t n) {
    std::size_t i = 0;
    for (; i + 8 <= n; i += 8) {
        std::uint64_t w;
        std::memcpy(&w, data + i, 8);
        add_u64(w);
    }
    std::uint64_t tail = 0;
    for (std::size_t j = 0; i < n; ++i, ++j)
        tail |= static_cast<std::uint64_t>(static_cast<unsigned char>(data[i])) << (8 * j);
    add_u64(tail);
}

// Each output word takes every lane, through a different combination, and the count.
Hash128 Hasher::digest() const {
    const std::uint64_t l0 = mix(lanes_[0]), l1 = mix(lanes_[1]), l2 = mix(lanes_[2]), l3 = mix(lanes_[3]);
    Hash128 h;
    h.a = mix(l0 ^ rotl(l1, 16) ^ rotl(l2, 32) ^ rotl(l3, 48) ^ count_);
    h.b = mix(l3 + rotl(l2, 21) + rotl(l1, 42) + (l0 ^ rotl(count_, 17)) + h.a);
    return h;
}

std::string Hash128::hex() const {
    char buf[40];
    std::snprintf(buf, sizeof buf, "%016llx%016llx", static_cast<unsigned long long>(a),
                  static_cast<unsigned long long>(b));
    return buf;
}

}  // namespace weft_addin
