// An off-by-default timing trace of every cell-function call: with the
// environment variable WEFT_ADDIN_TRACE=<file> set for the office, each call
// appends one line "<function> <phase>=<ms> ... total=<ms> <phase>.cpu=<ms> ...
// total.cpu=<ms>" to that file (wall time, then the calling thread's CPU time), so
// the time the add-in spends can be told apart from the office's own conversion:
// the phase `cells` is the office converting a range passed as cells into values
// (XCellRangeData.getDataArray), and the office's part of a value-array call is what
// a recalculation takes beyond the traced totals. A phase marked twice is summed.
// Without the variable every call costs one branch on a cached flag.
#pragma once

#include <chrono>
#include <string>

namespace weft_addin {

class CallTrace {
public:
    explicit CallTrace(const char* function);
    ~CallTrace();  // writes the line (never throws)
    CallTrace(const CallTrace&) = delete;
    CallTrace& operator=(const CallTrace&) = delete;

    // Ends the phase running since the last mark (or the start) under this name.
    static void mark(const char* phase);
    // Adds a note to the line, e.g. "hit" or "fit".
    static void note(const std::string& word);

private:
    bool on_;
};

}  // namespace weft_addin
