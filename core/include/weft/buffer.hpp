// weft/buffer.hpp -- large arrays with fewer page faults.
//
// Filling a fresh array of hundreds of megabytes costs more in page faults (one per
// 4 KiB page) than in copying. reserve_large() reserves a vector's capacity and, for
// arrays of 4 MiB or more, asks the kernel to back it with transparent huge pages
// before the first write (Linux madvise MADV_HUGEPAGE; elsewhere, or when the kernel
// declines, it is an ordinary reserve). Contents and behaviour do not change.
#pragma once

#include <cstddef>
#include <vector>

namespace weft {

// Advise huge pages for the whole 2 MiB-aligned pages inside [data, data + bytes).
void advise_huge_pages(void* data, std::size_t bytes);

template <class T>
void reserve_large(std::vector<T>& v, std::size_t n) {
    if (v.capacity() >= n) return;
    v.reserve(n);
    if (n * sizeof(T) >= (std::size_t{4} << 20)) advise_huge_pages(v.data(), n * sizeof(T));
}

// v = n copies of value, in a huge-page reservation when large.
template <class T>
void assign_large(std::vector<T>& v, std::size_t n, const T& value) {
    std::vector<T>().swap(v);
    reserve_large(v, n);
    v.assign(n, value);
}

}  // namespace weft
