#include "trace.hpp"

#include <cstdio>
#include <cstdlib>

namespace weft_addin {

namespace {

using Clock = std::chrono::steady_clock;

const char* trace_path() {
    static const char* const path = [] {
        const char* p = std::getenv("WEFT_ADDIN_TRACE");
        return (p != nullptr && *p != '\0') ? p : nullptr;
    }();
    return path;
}

// Calc calls add-ins from one thread at a time; the current call's state.
struct State {
    bool active = false;
    Clock::time_point start, last;
    std::string line;
};
thread_local State state;

double ms_between(Clock::time_point a, Clock::time_point b) {
    return std::chrono::duration<double, std::milli>(b - a).count();
}

}  // namespace

CallTrace::CallTrace(const char* function) : on_(trace_path() != nullptr && !state.active) {
    if (!on_) return;
    try {
        state.active = true;
        state.start = state.last = Clock::now();
        state.line = function;
    } catch (...) {
        on_ = false;
        state.active = false;
    }
}

CallTrace::~CallTrace() {
    if (!on_) return;
    try {
        char buf[48];
        std::snprintf(buf, sizeof buf, " total=%.1f\n", ms_between(state.start, Clock::now()));
        state.line += buf;
        if (std::FILE* f = std::fopen(trace_path(), "a")) {
            std::fputs(state.line.c_str(), f);
            std::fclose(f);
        }
    } catch (...) {
    }
    state.active = false;
}

void CallTrace::mark(const char* phase) {
    if (!state.active) return;
    try {
        const Clock::time_point now = Clock::now();
        char buf[64];
        std::snprintf(buf, sizeof buf, " %s=%.1f", phase, ms_between(state.last, now));
        state.line += buf;
        state.last = now;
    } catch (...) {
    }
}

void CallTrace::note(const std::string& word) {
    if (!state.active) return;
    try {
        state.line += " " + word;
    } catch (...) {
    }
}

}  // namespace weft_addin
