// convert.hpp -- copying between the C caller's arrays and core's value types.
// Pure glue: no statistics here.
#pragma once

#include "weft.h"

#include <weft/buffer.hpp>
#include <weft/options.hpp>
#include <weft/panel.hpp>
#include <weft/transforms.hpp>

#include <cstddef>
#include <cstdint>
#include <limits>
#include <string>
#include <vector>

namespace weft_cabi {

weft::ModelSpec to_spec(const weft_options& options);
weft_options from_spec(const weft::ModelSpec& spec);
// Read a caller's options (NULL: defaults), honouring its size and version.
weft::ModelSpec read_options(const weft_options* options, const char* function);

inline std::vector<std::uint8_t> copy_mask(const unsigned char* missing, std::size_t n) {
    if (missing == nullptr) return {};
    return std::vector<std::uint8_t>(missing, missing + n);
}

inline weft::Column copy_column(const char* name, const double* values,
                                const unsigned char* missing, std::size_t n) {
    weft::Column column;
    if (name != nullptr) column.name = name;
    weft::reserve_large(column.values, n);
    column.values.assign(values, values + n);
    column.missing = copy_mask(missing, n);
    return column;
}

// Write a core Series into the caller's (out, out_missing): NaN and 1 where undefined.
inline void write_series(const weft::Series& series, double* out, unsigned char* out_missing) {
    for (std::size_t i = 0; i < series.size(); ++i) {
        const bool defined = series.is_defined(i);
        out[i] = defined ? series.value[i] : std::numeric_limits<double>::quiet_NaN();
        if (out_missing != nullptr) out_missing[i] = defined ? 0 : 1;
    }
}

}  // namespace weft_cabi
