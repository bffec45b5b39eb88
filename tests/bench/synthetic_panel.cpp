#include "synthetic_panel.hpp"

#include <cmath>
#include <cstdio>
#include <algorithm>
#include <fstream>
#include <numeric>
#include <sstream>
#include <stdexcept>

namespace weft_bench {
namespace {

// splitmix64 seeds xoshiro256**; both are public-domain generators with fixed output.
std::uint64_t splitmix64(std::uint64_t& state) {
  std::uint64_t z = (state += 0x9E3779B97F4A7C15ULL);
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
  return z ^ (z >> 31);
}

class Random {
 public:
  explicit Random(std::uint64_t seed) {
    for (auto& word : state_) word = splitmix64(seed);
  }
  std::uint64_t next() {
    const std::uint64_t result = rotl(state_[1] * 5, 7) * 9;
    const std::uint64_t t = state_[1] << 17;
    state_[2] ^= state_[0];
    state_[3] ^= state_[1];
    state_[1] ^= state_[2];
    state_[0] ^= state_[3];
    state_[2] ^= t;
    state_[3] = rotl(state_[3], 45);
    return result;
  }
  // Uniform on (0, 1): 53 random bits, never exactly 0.
  double uniform() { return (static_cast<double>(next() >> 11) + 0.5) * 0x1.0p-53; }
  // Standard normal by Box-Muller, the spare value kept for the next call.
  double normal() {
    if (has_spare_) {
      has_spare_ = false;
      return spare_;
    }
    const double radius = std::sqrt(-2.0 * std::log(uniform()));
    const double angle = 6.283185307179586 * uniform();
    spare_ = radius * std::sin(angle);
    has_spare_ = true;
    return radius * std::cos(angle);
  }
  std::size_t below(std::size_t bound) {
    return static_cast<std::size_t>(uniform() * static_cast<double>(bound));
  }

 private:
  static std::uint64_t rotl(std::uint64_t x, int k) { return (x << k) | (x >> (64 - k)); }
  std::uint64_t state_[4];
  double spare_ = 0.0;
  bool has_spare_ = false;
};

constexpr double first_year = 2001.0;

}  // namespace

std::string layout_name(Layout layout) {
  return layout == Layout::balanced ? "balanced" : "unbalanced";
}

std::vector<unsigned char> presence(const PanelShape& shape) {
  const std::size_t T = shape.periods;
  std::vector<unsigned char> present(shape.units * T, 1);
  if (shape.layout == Layout::balanced) return present;
  Random random(shape.seed ^ 0x5DEECE66DULL);
  for (std::size_t i = 0; i < shape.units; ++i) {
    const std::size_t join = (random.uniform() < 0.2) ? 1 + random.below(T / 2) : 0;
    for (std::size_t t = 0; t < T; ++t)
      present[i * T + t] = (t >= join && random.uniform() >= 0.15) ? 1 : 0;
  }
  return present;
}

SyntheticPanel make_panel(const PanelShape& shape) {
  if (shape.units < 2 || shape.periods < 2 || shape.regressors < 1)
    throw std::invalid_argument("synthetic panel needs >= 2 units, >= 2 periods, >= 1 regressor");
  // Two streams: presence decisions and values. The values of a unit-period do not
  // depend on the layout, so an unbalanced panel is exactly its balanced panel with
  // the absent rows removed (the bench's balanced/unbalanced check relies on that).
  Random random(shape.seed);
  const std::size_t K = shape.regressors;
  const std::size_t T = shape.periods;

  // Decide which unit-periods exist first, so the block can be sized exactly.
  const std::vector<unsigned char> present = presence(shape);
  const std::size_t rows = static_cast<std::size_t>(std::accumulate(present.begin(), present.end(), std::size_t{0}));

  SyntheticPanel panel;
  panel.rows = rows;
  panel.regressors = K;
  panel.block.assign(rows * (K + 1), 0.0);
  panel.unit.resize(rows);
  panel.period.resize(rows);

  // Slopes alternate in sign and shrink, so every coefficient is identified and
  // none is trivially zero.
  std::vector<double> slope(K);
  for (std::size_t k = 0; k < K; ++k)
    slope[k] = (k % 2 == 0 ? 1.0 : -1.0) / static_cast<double>(k + 1);

  // Regressors: correlated with the unit effect (so pooled and within differ), AR(1)
  // over periods with coefficient 0.5; errors heteroskedastic in x1 and serially
  // correlated within the unit (so robust and classical SEs differ).
  std::vector<double> x_prev(K);
  std::size_t row = 0;
  for (std::size_t i = 0; i < shape.units; ++i) {
    const double unit_effect = random.normal();
    for (std::size_t k = 0; k < K; ++k) x_prev[k] = random.normal();
    double error_prev = random.normal();
    for (std::size_t t = 0; t < T; ++t) {
      double y = 1.0 + unit_effect;
      for (std::size_t k = 0; k < K; ++k) {
        x_prev[k] = 0.5 * x_prev[k] + 0.5 * unit_effect + random.normal();
      }
      error_prev = 0.3 * error_prev + random.normal() * (1.0 + 0.5 * std::fabs(x_prev[0]));
      if (!present[i * T + t]) continue;
      for (std::size_t k = 0; k < K; ++k) {
        panel.block[(k + 1) * rows + row] = x_prev[k];
        y += slope[k] * x_prev[k];
      }
      panel.block[row] = y + error_prev;
      panel.unit[row] = static_cast<double>(i + 1);
      panel.period[row] = first_year + static_cast<double>(t);
      ++row;
    }
  }
  return panel;
}

SyntheticPanel shuffle_rows(const SyntheticPanel& panel, std::uint64_t seed) {
  Random random(seed);
  std::vector<std::size_t> order(panel.rows);
  std::iota(order.begin(), order.end(), std::size_t{0});
  for (std::size_t r = panel.rows; r > 1; --r) std::swap(order[r - 1], order[random.below(r)]);
  SyntheticPanel out = panel;
  const std::size_t columns = panel.regressors + 1;
  for (std::size_t r = 0; r < panel.rows; ++r) {
    for (std::size_t c = 0; c < columns; ++c)
      out.block[c * panel.rows + r] = panel.block[c * panel.rows + order[r]];
    out.unit[r] = panel.unit[order[r]];
    if (!panel.outcome_missing.empty()) out.outcome_missing[r] = panel.outcome_missing[order[r]];
    if (!panel.regressor_missing.empty()) out.regressor_missing[r] = panel.regressor_missing[order[r]];
    out.period[r] = panel.period[order[r]];
  }
  return out;
}

namespace {

SyntheticPanel reorder(const SyntheticPanel& panel, const std::vector<std::size_t>& order) {
  SyntheticPanel out = panel;
  const std::size_t columns = panel.regressors + 1;
  for (std::size_t r = 0; r < panel.rows; ++r) {
    for (std::size_t c = 0; c < columns; ++c)
      out.block[c * panel.rows + r] = panel.block[c * panel.rows + order[r]];
    out.unit[r] = panel.unit[order[r]];
    if (!panel.outcome_missing.empty()) out.outcome_missing[r] = panel.outcome_missing[order[r]];
    if (!panel.regressor_missing.empty()) out.regressor_missing[r] = panel.regressor_missing[order[r]];
    out.period[r] = panel.period[order[r]];
  }
  return out;
}

}  // namespace

SyntheticPanel period_major(const SyntheticPanel& panel) {
  std::vector<std::size_t> order(panel.rows);
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
    if (panel.period[a] != panel.period[b]) return panel.period[a] < panel.period[b];
    return panel.unit[a] < panel.unit[b];
  });
  return reorder(panel, order);
}

std::string unit_text(double u) {
  char buffer[40];
  std::snprintf(buffer, sizeof buffer, "Branch %05.0f", u);
  return buffer;
}

SyntheticPanel pad_with_unusable_rows(const SyntheticPanel& panel, std::size_t extra) {
  SyntheticPanel out;
  out.rows = panel.rows + extra;
  out.regressors = panel.regressors;
  const std::size_t columns = panel.regressors + 1;
  out.block.assign(out.rows * columns, 1.0);
  for (std::size_t c = 0; c < columns; ++c)
    for (std::size_t r = 0; r < panel.rows; ++r)
      out.block[c * out.rows + r] = panel.block[c * panel.rows + r];
  out.unit = panel.unit;
  out.period = panel.period;
  double max_unit = 0.0;
  for (double u : panel.unit) max_unit = std::max(max_unit, u);
  out.outcome_missing.assign(out.rows, 0);
  out.regressor_missing.assign(out.rows, 0);
  if (!panel.outcome_missing.empty())
    std::copy(panel.outcome_missing.begin(), panel.outcome_missing.end(), out.outcome_missing.begin());
  if (!panel.regressor_missing.empty())
    std::copy(panel.regressor_missing.begin(), panel.regressor_missing.end(), out.regressor_missing.begin());
  for (std::size_t e = 0; e < extra; ++e) {
    const std::size_t r = panel.rows + e;
    // Alternate a missing outcome and a missing regressor; periods are ones the
    // panel already has, so the period grid is unchanged.
    if (e % 2 == 0) out.outcome_missing[r] = 1;
    else out.regressor_missing[r] = 1;
    out.unit.push_back(max_unit + 1.0 + static_cast<double>(e / 3));
    out.period.push_back(panel.period[e % panel.rows]);
  }
  return out;
}

SyntheticPanel mark_absent_as_missing(const SyntheticPanel& balanced,
                                      const std::vector<unsigned char>& present) {
  if (present.size() != balanced.rows)
    throw std::invalid_argument("presence mask does not match the balanced panel");
  SyntheticPanel out = balanced;
  out.outcome_missing.assign(balanced.rows, 0);
  for (std::size_t r = 0; r < balanced.rows; ++r) out.outcome_missing[r] = present[r] ? 0 : 1;
  return out;
}

void write_csv(const SyntheticPanel& panel, const std::string& path) {
  std::FILE* file = std::fopen(path.c_str(), "w");
  if (!file) throw std::runtime_error("cannot write " + path);
  std::fputs("unit,period,y", file);
  for (std::size_t k = 0; k < panel.regressors; ++k) std::fprintf(file, ",x%zu", k + 1);
  std::fputc('\n', file);
  for (std::size_t r = 0; r < panel.rows; ++r) {
    std::fprintf(file, "%.0f,%.0f", panel.unit[r], panel.period[r]);
    for (std::size_t c = 0; c <= panel.regressors; ++c)
    {
      const bool missing = (c == 0) ? (!panel.outcome_missing.empty() && panel.outcome_missing[r])
                                    : (!panel.regressor_missing.empty() && panel.regressor_missing[r]);
      if (missing) std::fputc(',', file);
      else std::fprintf(file, ",%.17g", panel.block[c * panel.rows + r]);
    }
    std::fputc('\n', file);
  }
  if (std::fclose(file) != 0) throw std::runtime_error("error writing " + path);
}

SyntheticPanel read_csv(const std::string& path) {
  std::ifstream in(path);
  if (!in) throw std::runtime_error("cannot read " + path);
  std::string line;
  std::getline(in, line);
  std::size_t columns = 1;
  for (char ch : line) columns += (ch == ',');
  if (columns < 4) throw std::runtime_error(path + ": expected unit,period,y,x1..");
  const std::size_t K = columns - 3;
  std::vector<std::vector<double>> cols(columns);
  while (std::getline(in, line)) {
    if (line.empty()) continue;
    const char* p = line.c_str();
    for (std::size_t c = 0; c < columns; ++c) {
      char* end = nullptr;
      cols[c].push_back(std::strtod(p, &end));
      p = (*end == ',') ? end + 1 : end;
    }
  }
  SyntheticPanel panel;
  panel.rows = cols[0].size();
  panel.regressors = K;
  panel.unit = std::move(cols[0]);
  panel.period = std::move(cols[1]);
  panel.block.reserve(panel.rows * (K + 1));
  for (std::size_t c = 2; c < columns; ++c)
    panel.block.insert(panel.block.end(), cols[c].begin(), cols[c].end());
  return panel;
}

}  // namespace weft_bench
