#include "cache.hpp"

#include <cstdio>

namespace weft_addin {

namespace {

std::uint64_t rotl(std::uint64_t x, int r) { return (x << r) | (x >> (64 - r)); }

// The finaliser of splitmix64: every input bit affects every output bit.
std::uint64_t mix(std::uint64_t z) {
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ull;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebull;
    return z ^ (z >> 31);
}

}  // namespace

void Hasher::add_u64(std::uint64_t w) {
    a_ = rotl(a_ ^ (w * 0x87c37b91114253d5ull), 31) * 0x4cf5ad432745937full;
    b_ = rotl(b_ + (w ^ 0x52dce729da3ed7b5ull), 27) * 0xff51afd7ed558ccdull + a_;
    ++count_;
}

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

Hash128 Hasher::digest() const {
    Hash128 h;
    h.a = mix(a_ ^ count_);
    h.b = mix(b_ ^ rotl(count_, 17) ^ h.a);
    return h;
}

std::string Hash128::hex() const {
    char buf[40];
    std::snprintf(buf, sizeof buf, "%016llx%016llx", static_cast<unsigned long long>(a),
                  static_cast<unsigned long long>(b));
    return buf;
}

}  // namespace weft_addin
