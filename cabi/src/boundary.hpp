// boundary.hpp -- the one place where C++ meets C: the last-error text and the
// catch-all wrapper that every weft_* entry point runs its body in.
//
// Why one wrapper: an exception that crosses a C frame is undefined behaviour, and a
// host like the office suite would crash. Every entry point therefore does
//     return weft_cabi::guarded(WEFT_EDATA, [&] { ...; return WEFT_OK; });
// where the first argument is the status that a weft::Error (invalid input found by
// core) maps to at this entry point. Core raises one exception type; which status it
// means depends on what the caller asked for, and only the entry point knows that.
#pragma once

#include "weft.h"

#include <weft/error.hpp>

#include <cstddef>
#include <exception>
#include <limits>
#include <new>
#include <string>

namespace weft_cabi {

inline constexpr double nan_value = std::numeric_limits<double>::quiet_NaN();

// Set this thread's last-error text to "weft: " + message. Never throws.
void set_error(const char* message) noexcept;
void set_error(const std::string& message) noexcept;

// Misuse found by cabi itself (NULL argument, bad enum, small buffer): carries the
// status to return. Thrown only inside guarded().
struct Failure {
    int status;
    std::string message;
};

[[noreturn]] inline void fail(int status, std::string message) {
    throw Failure{status, std::move(message)};
}

// Argument checks whose message names the argument, so misuse is easy to find.
inline void require(const void* pointer, const char* function, const char* argument) {
    if (pointer == nullptr)
        fail(WEFT_EINVAL, std::string(function) + ": " + argument + " is NULL");
}

// Apply the buffer convention of weft.h: report the size, accept a size query,
// refuse a buffer that is too small. Returns true when the caller should write.
inline bool buffer_ready(const char* function, const void* buf, std::size_t capacity,
                         std::size_t* needed, std::size_t size) {
    if (needed != nullptr) *needed = size;
    if (buf == nullptr && capacity == 0) return false;
    if (buf == nullptr) fail(WEFT_EINVAL, std::string(function) + ": buf is NULL but capacity is " +
                                              std::to_string(capacity));
    if (capacity < size)
        fail(WEFT_EBUFFER, std::string(function) + ": the buffer holds " + std::to_string(capacity) +
                               " elements but the result has " + std::to_string(size) +
                               "; pass a buffer of at least " + std::to_string(size) +
                               " (a call with buf NULL and capacity 0 asks for the size)");
    return true;
}

template <class Body>
int guarded(int core_error_status, Body&& body) noexcept {
    try {
        return body();
    } catch (const Failure& f) {
        set_error(f.message);
        return f.status;
    } catch (const weft::Error& e) {
        set_error(e.what());
        return core_error_status;
    } catch (const std::bad_alloc&) {
        set_error("out of memory");
        return WEFT_ENOMEM;
    } catch (const std::exception& e) {
        set_error(std::string("internal error: ") + e.what() + " (please report this)");
        return WEFT_EINTERNAL;
    } catch (...) {
        set_error("internal error: unknown exception (please report this)");
        return WEFT_EINTERNAL;
    }
}

}  // namespace weft_cabi
