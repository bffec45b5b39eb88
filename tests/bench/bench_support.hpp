// Clock, medians and peak-memory probes for the benchmark programs.
#pragma once

#include <algorithm>
#include <chrono>
#include <cstddef>
#include <cstdio>
#include <cstring>
#include <fstream>
#include <functional>
#include <string>
#include <vector>

#include <sys/types.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

namespace weft_bench {

using Clock = std::chrono::steady_clock;

inline double seconds_since(Clock::time_point start) {
  return std::chrono::duration<double>(Clock::now() - start).count();
}

// CPU seconds of the whole process (all threads). On a shared machine the wall clock
// also counts time spent waiting for a core; CPU time does not, so both are reported.
inline double cpu_seconds() {
  timespec ts{};
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &ts);
  return static_cast<double>(ts.tv_sec) + 1e-9 * static_cast<double>(ts.tv_nsec);
}

// Wall and CPU time of one call.
struct Timing {
  double wall = 0, cpu = 0;
};

template <class F>
Timing time_once(F&& f) {
  const double cpu_start = cpu_seconds();
  const auto start = Clock::now();
  f();
  return {seconds_since(start), cpu_seconds() - cpu_start};
}

inline double median(std::vector<double> values) {
  if (values.empty()) return 0.0;
  std::sort(values.begin(), values.end());
  const std::size_t mid = values.size() / 2;
  return values.size() % 2 ? values[mid] : 0.5 * (values[mid - 1] + values[mid]);
}

// Medians of wall and CPU time over `reps` calls after one uncounted warm-up call.
template <class F>
Timing time_median(int reps, F&& f) {
  std::vector<double> wall, cpu;
  for (int r = 0; r < reps + 1; ++r) {
    const Timing t = time_once(f);
    if (r == 0) continue;
    wall.push_back(t.wall);
    cpu.push_back(t.cpu);
  }
  return {median(wall), median(cpu)};
}

// Two calls timed in turn, A B A B ..., `reps` pairs after one uncounted pair: the
// medians of each, and the median of the pairs' CPU ratios A/B, which holds when a
// shared machine's speed drifts between the two (each pair sees nearly one speed).
struct PairedTiming {
  Timing a, b;
  double cpu_ratio = 0;
};

template <class FA, class FB>
PairedTiming time_paired(int reps, FA&& fa, FB&& fb) {
  std::vector<double> wall_a, cpu_a, wall_b, cpu_b, ratio;
  for (int r = 0; r < reps + 1; ++r) {
    const Timing ta = time_once(fa);
    const Timing tb = time_once(fb);
    if (r == 0) continue;
    wall_a.push_back(ta.wall);
    cpu_a.push_back(ta.cpu);
    wall_b.push_back(tb.wall);
    cpu_b.push_back(tb.cpu);
    ratio.push_back(tb.cpu > 0 ? ta.cpu / tb.cpu : 0.0);
  }
  return {{median(wall_a), median(cpu_a)}, {median(wall_b), median(cpu_b)}, median(ratio)};
}

// One line of /proc/self/status, e.g. "VmHWM", in bytes; -1 when unavailable.
inline double status_bytes(const char* key) {
  std::ifstream status("/proc/self/status");
  std::string line;
  const std::size_t key_length = std::strlen(key);
  while (std::getline(status, line)) {
    if (line.compare(0, key_length, key) == 0 && line.size() > key_length && line[key_length] == ':')
      return 1024.0 * std::stod(line.substr(key_length + 1));  // reported in kB
  }
  return -1.0;
}

struct MemoryProbe {
  double resident_before = -1.0;  // bytes resident when the work started (input included)
  double peak = -1.0;             // high-water resident bytes during the work
  bool ok() const { return resident_before > 0 && peak > 0; }
};

// Runs `work` in a forked child whose resident high-water mark is first reset to its
// current size (Linux: "5" into /proc/self/clear_refs), so the peak belongs to this
// work alone and not to earlier runs, dataset generation or freed heap of the parent.
inline MemoryProbe probe_peak_memory(const std::function<void()>& work) {
  MemoryProbe probe;
  int fds[2];
  if (pipe(fds) != 0) return probe;
  std::fflush(nullptr);
  const pid_t child = fork();
  if (child < 0) {
    close(fds[0]);
    close(fds[1]);
    return probe;
  }
  if (child == 0) {
    close(fds[0]);
    MemoryProbe mine;
    {
      std::ofstream clear("/proc/self/clear_refs");
      clear << "5";
    }
    mine.resident_before = status_bytes("VmRSS");
    const double hwm_after_reset = status_bytes("VmHWM");
    // Reading /proc itself touches a few pages, hence the small allowance.
    const bool reset_worked =
        hwm_after_reset > 0 && hwm_after_reset <= mine.resident_before * 1.01 + 4.0 * 1048576.0;
    try {
      work();
    } catch (...) {
      _exit(1);  // never let the child run on into the parent's code
    }
    mine.peak = reset_worked ? status_bytes("VmHWM") : -1.0;
    const ssize_t written = write(fds[1], &mine, sizeof mine);
    _exit(written == static_cast<ssize_t>(sizeof mine) ? 0 : 1);
  }
  close(fds[1]);
  const ssize_t got = read(fds[0], &probe, sizeof probe);
  close(fds[0]);
  int status = 0;
  waitpid(child, &status, 0);
  if (got != static_cast<ssize_t>(sizeof probe) || !WIFEXITED(status) || WEXITSTATUS(status) != 0)
    return MemoryProbe{};
  return probe;
}

}  // namespace weft_bench
