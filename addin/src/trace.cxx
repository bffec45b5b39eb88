#include "trace.hpp"

#include <cstdio>
#include <cstdlib>
#include <ctime>

namespace weft_addin {

namespace {

using Clock = std::chrono::steady_clock;

// The calling thread's CPU time in ms: on a shared machine the wall clock also
// counts waiting for a core, so each phase is given in both.
double thread_cpu_ms() {
    timespec t{};
    if (clock_gettime(CLOCK_THREAD_CPUTIME_ID, &t) != 0) return 0.0;
    return static_cast<double>(t.tv_sec) * 1e3 + static_cast<double>(t.tv_nsec) * 1e-6;
}

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
    double start_cpu = 0.0, last_cpu = 0.0;
    std::string line;
    std::string cpu_line;
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
        state.start_cpu = state.last_cpu = thread_cpu_ms();
        state.line = function;
        state.cpu_line.clear();
    } catch (...) {
        on_ = false;
        state.active = false;
    }
}

CallTrace::~CallTrace() {
    if (!on_) return;
    try {
        char buf[80];
        std::snprintf(buf, sizeof buf, " total=%.1f", ms_between(state.start, Clock::now()));
        state.line += buf;
        std::snprintf(buf, sizeof buf, " total.cpu=%.1f\n", thread_cpu_ms() - state.start_cpu);
        state.line += state.cpu_line + buf;
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
        const double cpu = thread_cpu_ms();
        char buf[64];
        std::snprintf(buf, sizeof buf, " %s=%.1f", phase, ms_between(state.last, now));
        state.line += buf;
        std::snprintf(buf, sizeof buf, " %s.cpu=%.1f", phase, cpu - state.last_cpu);
        state.cpu_line += buf;
        state.last = now;
        state.last_cpu = cpu;
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
