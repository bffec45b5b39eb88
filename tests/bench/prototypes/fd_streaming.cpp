// Prototype for the core engineer (bench engineer, issue 7): fd + cluster-by-unit
// (CR1) in three streaming passes over the caller's columns, no N x K design held.
// Fast path only: rows sorted by unit then period (checked in O(N)); anything else
// would take the general path. Compared with weft's own result through weft.h.
#include <weft.h>
#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <stdexcept>
#include <unordered_map>
#include <string>
#include <vector>
#include "synthetic_panel.hpp"
#include "bench_support.hpp"
using namespace weft_bench;
using Eigen::Index; using Eigen::MatrixXd; using Eigen::VectorXd;
constexpr Index kBlock = 2048;

struct Result { VectorXd coef, se; Index n = 0; Index clusters = 0; };

// columns: K+1 pointers, y first then x1..xK.
Result fd_cluster_stream(std::size_t rows, const std::vector<const double*>& col, const double* unit,
                         const double* period) {
  const Index K1 = static_cast<Index>(col.size());  // y + K regressors
  const Index K = K1 - 1;                           // regressors
  const Index P = K + 1;                            // terms: intercept + K
  // --- index: the period grid (few distinct values: binary search, rare inserts),
  // sortedness check, and the runs of consecutive rows whose difference exists.
  std::vector<double> grid;
  for (std::size_t r = 0; r < rows; ++r) {
    if (r > 0 && period[r] == period[r - 1] + 1.0 && std::binary_search(grid.begin(), grid.end(), period[r])) continue;
    auto it = std::lower_bound(grid.begin(), grid.end(), period[r]);
    if (it == grid.end() || *it != period[r]) grid.insert(it, period[r]);
  }
  struct Run { std::size_t start, length; double unit; };  // rows start..start+length-1 are "later" rows
  std::vector<Run> runs;
  {
    int prev_pos = -1;
    for (std::size_t r = 0; r < rows; ++r) {
      const int p = static_cast<int>(std::lower_bound(grid.begin(), grid.end(), period[r]) - grid.begin());
      if (r > 0 && (unit[r] < unit[r - 1] || (unit[r] == unit[r - 1] && p <= prev_pos)))
        throw std::runtime_error("not sorted: general path needed");
      if (r > 0 && unit[r] == unit[r - 1] && p == prev_pos + 1) {
        if (!runs.empty() && runs.back().start + runs.back().length == r) ++runs.back().length;
        else runs.push_back({r, 1, unit[r]});
      }
      prev_pos = p;
    }
  }
  // Blocks of whole runs (a run longer than a block is split).
  MatrixXd D(kBlock, K1);
  struct Piece { std::size_t start, length; Index at; double unit; };
  std::vector<Piece> pieces;
  std::size_t next_run = 0, run_offset = 0;
  auto fill = [&]() -> Index {
    pieces.clear();
    Index b = 0;
    while (next_run < runs.size() && b < kBlock) {
      const Run& run = runs[next_run];
      const std::size_t take = std::min<std::size_t>(run.length - run_offset, static_cast<std::size_t>(kBlock - b));
      pieces.push_back({run.start + run_offset, take, b, run.unit});
      b += static_cast<Index>(take);
      run_offset += take;
      if (run_offset == run.length) { ++next_run; run_offset = 0; }
    }
    for (Index c = 0; c < K1; ++c)
      for (const Piece& q : pieces) {
        const auto len = static_cast<Index>(q.length);
        D.col(c).segment(q.at, len) = Eigen::Map<const VectorXd>(col[c] + q.start, len) -
                                      Eigen::Map<const VectorXd>(col[c] + q.start - 1, len);
      }
    return b;
  };
  auto restart = [&] { next_run = 0; run_offset = 0; };
  // --- pass 1: means of the differences
  VectorXd sum = VectorXd::Zero(K1);
  Index n = 0;
  restart();
  while (Index b = fill()) {
    sum += D.topRows(b).colwise().sum().transpose();
    n += b;
  }
  const VectorXd mean = sum / static_cast<double>(n);
  // --- pass 2: Gram of centred [dy dX]
  MatrixXd G = MatrixXd::Zero(K1, K1);
  restart();
  while (Index b = fill()) {
    D.topRows(b).rowwise() -= mean.transpose();
    G.selfadjointView<Eigen::Lower>().rankUpdate(D.topRows(b).transpose());
  }
  G = G.selfadjointView<Eigen::Lower>();
  const VectorXd d = G.diagonal().cwiseSqrt();
  const MatrixXd Gx = d.tail(K).cwiseInverse().asDiagonal() * G.bottomRightCorner(K, K) * d.tail(K).cwiseInverse().asDiagonal();
  Eigen::LLT<MatrixXd> llt(Gx);
  if (llt.info() != Eigen::Success) throw std::runtime_error("not positive definite: general path");
  VectorXd slope = llt.solve(d.tail(K).cwiseInverse().asDiagonal() * G.bottomLeftCorner(K, 1));
  slope = slope.cwiseQuotient(d.tail(K));
  // (no refinement step in this prototype; see bench-fast-solve-prototype.cpp)
  const double intercept = mean[0] - mean.tail(K).dot(slope);
  // --- pass 3: residuals (one GEMV per block) and per-unit score sums over runs
  MatrixXd S = MatrixXd::Zero(P, P);
  VectorXd s_g = VectorXd::Zero(P);
  double current_unit = std::nan("");
  Index clusters = 0;
  VectorXd u(kBlock);
  restart();
  while (Index b = fill()) {
    D.topRows(b).rowwise() -= mean.transpose();
    u.head(b) = D.col(0).head(b) - D.topRightCorner(b, K) * slope;
    D.topRightCorner(b, K).array().colwise() *= u.head(b).array();
    for (const Piece& q : pieces) {
      if (q.unit != current_unit) {
        if (clusters > 0) S.selfadjointView<Eigen::Lower>().rankUpdate(s_g);
        s_g.setZero();
        current_unit = q.unit;
        ++clusters;
      }
      const auto len = static_cast<Index>(q.length);
      s_g[0] += u.segment(q.at, len).sum();
      s_g.tail(K) += D.block(q.at, 1, len, K).colwise().sum().transpose();
    }
  }
  S.selfadjointView<Eigen::Lower>().rankUpdate(s_g);
  S = S.selfadjointView<Eigen::Lower>();
  // bread in the centred basis: diag(1/n, Gxx^-1); back to [1, dX]: b0 = a0 - m'b
  MatrixXd bread = MatrixXd::Zero(P, P);
  bread(0, 0) = 1.0 / static_cast<double>(n);
  const MatrixXd Gxx_inv = d.tail(K).cwiseInverse().asDiagonal() * llt.solve(MatrixXd::Identity(K, K)) * d.tail(K).cwiseInverse().asDiagonal();
  bread.bottomRightCorner(K, K) = Gxx_inv;
  MatrixXd M = MatrixXd::Identity(P, P);  // original = M * centred
  M.block(0, 1, 1, K) = -mean.tail(K).transpose();
  const double Gd = static_cast<double>(clusters), Nd = static_cast<double>(n), Pd = static_cast<double>(P);
  const double factor = Gd / (Gd - 1) * (Nd - 1) / (Nd - Pd);
  const MatrixXd V = factor * M * bread * S * bread * M.transpose();
  Result out;
  out.coef.resize(P);
  out.coef[0] = intercept;
  out.coef.tail(K) = slope;
  out.se = V.diagonal().cwiseSqrt();
  out.n = n;
  out.clusters = clusters;
  return out;
}

int main(int argc, char** argv) {
  const Layout layout = (argc > 1 && std::string(argv[1]) == "unbalanced") ? Layout::unbalanced : Layout::balanced;
  const SyntheticPanel s = make_panel({50000, 20, 20, layout, 20261202});
  std::vector<const double*> cols;
  for (std::size_t c = 0; c <= s.regressors; ++c) cols.push_back(s.block.data() + c * s.rows);
  Result res;
  const Timing t = time_median(5, [&] { res = fd_cluster_stream(s.rows, cols, s.unit.data(), s.period.data()); });
  const Index columns = static_cast<Index>(s.regressors + 1);
  Eigen::Map<const MatrixXd> Z(s.block.data(), static_cast<Index>(s.rows), columns);
  const Timing floor = time_median(5, [&] {
    MatrixXd gram = MatrixXd::Zero(columns, columns);
    gram.selfadjointView<Eigen::Lower>().rankUpdate(Z.transpose());
  });
  // weft's answer through the C interface
  weft_panel* p = nullptr;
  weft_panel_new(&p, s.rows, 1);
  weft_panel_set_units_number(p, s.unit.data(), nullptr);
  weft_panel_set_periods(p, s.period.data(), nullptr);
  weft_panel_set_outcome(p, "y", s.outcome(), nullptr);
  for (std::size_t k = 0; k < s.regressors; ++k) weft_panel_add_regressor(p, nullptr, s.regressor(k), nullptr);
  weft_model* m = nullptr;
  if (weft_model_new_text(&m, p, "fd cluster") != WEFT_OK) { std::puts(weft_last_error()); return 1; }
  std::vector<double> table(static_cast<std::size_t>(columns) * WEFT_COEF_COLUMNS);
  weft_model_coefficients(m, table.data(), table.size(), nullptr);
  double worst_b = 0, worst_se = 0;
  for (Index j = 0; j < columns; ++j) {
    const double b = table[static_cast<std::size_t>(j) * WEFT_COEF_COLUMNS], se = table[static_cast<std::size_t>(j) * WEFT_COEF_COLUMNS + 1];
    worst_b = std::max(worst_b, std::fabs(res.coef[j] - b) / std::max(std::fabs(b), 1e-3));
    worst_se = std::max(worst_se, std::fabs(res.se[j] - se) / se);
  }
  const MemoryProbe mem = probe_peak_memory([&] { fd_cluster_stream(s.rows, cols, s.unit.data(), s.period.data()); });
  std::printf("streaming fd+cluster: cpu %.4f s (wall %.4f), floor cpu %.4f s -> %.2fx floor; N=%ld G=%ld\n", t.cpu, t.wall,
              floor.cpu, t.cpu / floor.cpu, static_cast<long>(res.n), static_cast<long>(res.clusters));
  std::printf("agreement with weft: estimates %.2e, SEs %.2e (relative, worst term)\n", worst_b, worst_se);
  std::printf("extra memory during the fit: %.1f MiB for %.0f MiB input\n", (mem.peak - mem.resident_before) / 1048576.0,
              static_cast<double>(s.input_bytes()) / 1048576.0);
  weft_model_free(m);
  weft_panel_free(p);
}
