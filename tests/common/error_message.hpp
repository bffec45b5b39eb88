// Shared by the core and spec tests: the message of the weft::Error that a call throws.
#pragma once

#include <string>

#include <weft/error.hpp>

namespace weft_test {

template <class F>
std::string message_of(F&& f) {
    try {
        f();
    } catch (const weft::Error& e) {
        return e.what();
    }
    return "(no weft::Error thrown)";
}

}  // namespace weft_test
