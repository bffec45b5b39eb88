// Prototype: Gram-of-centred-columns + Cholesky with one refinement step, taken only
// when a condition estimate of the scaled R is small; otherwise the current TSQR.
#include <weft/core.hpp>
#include <Eigen/Dense>
#include <cmath>
#include <cstdio>
#include <fstream>
#include <sstream>
#include <nlohmann/json.hpp>
#include "synthetic_panel.hpp"
#include "bench_support.hpp"
using namespace weft_bench;
using Eigen::Index; using Eigen::MatrixXd; using Eigen::VectorXd;
constexpr Index B = 2048;

struct Fast { bool used=false; VectorXd coef; double cond=0; };

// X has a column of ones at 0.
Fast fast_solve(const MatrixXd& X, const VectorXd& y, double cond_limit) {
  const Index N = X.rows(), K = X.cols();
  Fast out;
  // pass 1: means (block sums in double, blocks added in long double)
  std::vector<long double> sum(K + 1, 0.0L);
  for (Index r0 = 0; r0 < N; r0 += B) {
    const Index b = std::min(B, N - r0);
    const Eigen::RowVectorXd s = X.middleRows(r0, b).colwise().sum();
    for (Index j = 0; j < K; ++j) sum[j] += s[j];
    sum[K] += y.segment(r0, b).sum();
  }
  VectorXd mean(K + 1);
  for (Index j = 0; j <= K; ++j) mean[j] = static_cast<double>(sum[j] / N);
  mean[0] = 0;  // the intercept column is not centred
  // pass 2: Gram of [Z y] with Z the centred columns
  MatrixXd G = MatrixXd::Zero(K + 1, K + 1);
  MatrixXd A(B, K + 1);
  for (Index r0 = 0; r0 < N; r0 += B) {
    const Index b = std::min(B, N - r0);
    A.topRows(b).leftCols(K) = X.middleRows(r0, b).rowwise() - mean.head(K).transpose();
    A.topRows(b).col(K) = y.segment(r0, b).array() - mean[K];
    G.selfadjointView<Eigen::Lower>().rankUpdate(A.topRows(b).transpose());
  }
  G = G.selfadjointView<Eigen::Lower>();
  VectorXd d = G.diagonal().cwiseSqrt();
  for (Index j = 0; j <= K; ++j) if (d[j] == 0) return out;
  MatrixXd Gs = d.cwiseInverse().asDiagonal() * G * d.cwiseInverse().asDiagonal();
  Eigen::LLT<MatrixXd> llt(Gs.topLeftCorner(K, K));
  if (llt.info() != Eigen::Success) return out;
  MatrixXd R = llt.matrixU();
  MatrixXd Rinv = R.triangularView<Eigen::Upper>().solve(MatrixXd::Identity(K, K));
  out.cond = R.cwiseAbs().colwise().sum().maxCoeff() * Rinv.cwiseAbs().colwise().sum().maxCoeff();
  if (!(out.cond <= cond_limit)) return out;
  // working solution c for Zs = Z D^-1, ys = yc / d_y (kept unscaled for y)
  VectorXd zty = Gs.col(K).head(K) * d[K];   // Zs' yc
  VectorXd c = llt.solve(zty);
  // one refinement step: r = yc - Zs c; c += (Zs'Zs)^-1 Zs' r
  VectorXd scale_inv = d.head(K).cwiseInverse();
  for (int step = 0; step < 1; ++step) {
    VectorXd g = VectorXd::Zero(K);
    for (Index r0 = 0; r0 < N; r0 += B) {
      const Index b = std::min(B, N - r0);
      A.topRows(b).leftCols(K) = (X.middleRows(r0, b).rowwise() - mean.head(K).transpose()) * scale_inv.asDiagonal();
      VectorXd r = (y.segment(r0, b).array() - mean[K]).matrix() - A.topRows(b).leftCols(K) * c;
      g.noalias() += A.topRows(b).leftCols(K).transpose() * r;
    }
    c += llt.solve(g);
  }
  VectorXd b = c.cwiseProduct(scale_inv);
  double correction = 0;
  for (Index j = 1; j < K; ++j) correction += b[j] * mean[j];
  b[0] = mean[K] + b[0] - correction;
  out.coef = b;
  out.used = true;
  return out;
}

double lre(double got, double want) {
  if (got == want) return 15;
  double e = want != 0 ? std::fabs(got - want) / std::fabs(want) : std::fabs(got);
  return std::min(15.0, -std::log10(e));
}

int main() {
  // 1. Speed and agreement on the 1M x 20 fd design
  auto s = make_panel({50000, 20, 20, Layout::balanced, 20261202});
  std::vector<std::size_t> later;
  for (std::size_t r = 1; r < s.rows; ++r) if (s.unit[r] == s.unit[r - 1]) later.push_back(r);
  weft::EquationInput in; const Index N = (Index)later.size(), K = 21;
  in.X.resize(N, K); in.y.resize(N); in.X.col(0).setOnes(); in.intercept_column = 0;
  for (Index k = 1; k < K; ++k) { const double* x = s.regressor(k - 1); for (Index i = 0; i < N; ++i) in.X(i, k) = x[later[i]] - x[later[i] - 1]; }
  for (Index i = 0; i < N; ++i) in.y[i] = s.outcome()[later[i]] - s.outcome()[later[i] - 1];
  Fast f;
  const Timing tf = time_median(5, [&] { f = fast_solve(in.X, in.y, 1e4); });
  weft::Equation eq;
  const Timing tq = time_median(5, [&] { weft::EquationInput copy = in; const double c0 = cpu_seconds(); eq = weft::solve_equation(std::move(copy)); (void)c0; });
  const Timing tcopy = time_median(5, [&] { weft::EquationInput copy = in; });
  double worst = 0; for (Index j = 0; j < K; ++j) worst = std::max(worst, std::fabs(f.coef[j] - eq.coef[j]) / std::max(1e-300, std::fabs(eq.coef[j])));
  std::printf("1M fd design: prototype used=%d cond1=%.3g cpu %.4f s; solve_equation cpu %.4f s (minus input copy %.4f = %.4f); worst rel diff %.2e\n",
              f.used, f.cond, tf.cpu, tq.cpu, tcopy.cpu, tq.cpu - tcopy.cpu, worst);
  // 2. NIST: which take the fast path, and their digits
  for (const char* name : {"Norris", "Pontius", "Longley", "Filip", "Wampler1", "Wampler2", "Wampler3", "Wampler4", "Wampler5"}) {
    std::ifstream js(std::string("/work/main/tests/data/nist/") + name + ".json");
    nlohmann::json j; js >> j;
    std::ifstream csv(std::string("/work/main/tests/data/nist/") + name + ".csv");
    std::string line; std::getline(csv, line);
    std::vector<std::vector<double>> rows;
    while (std::getline(csv, line)) { std::stringstream ss(line); std::string v; std::vector<double> r; while (std::getline(ss, v, ',')) r.push_back(std::stod(v)); rows.push_back(r); }
    auto cols = j["model"]["design_columns"];
    Index n = (Index)rows.size(), k = (Index)cols.size();
    MatrixXd X(n, k); VectorXd y(n);
    for (Index i = 0; i < n; ++i) {
      y[i] = rows[i][0];
      for (Index c = 0; c < k; ++c) {
        std::string col = cols[c];
        if (col == "1") X(i, c) = 1;
        else if (col.rfind("x^", 0) == 0) X(i, c) = std::pow(rows[i][1], std::stoi(col.substr(2)));
        else if (col == "x") X(i, c) = rows[i][1];
        else { int idx = std::stoi(col.substr(1)); X(i, c) = rows[i][idx]; }
      }
    }
    Fast r = fast_solve(X, y, 1e4);
    double min_lre = 15;
    if (r.used) {
      int c = 0;
      for (auto& [param, value] : j["certified"]["coef"].items()) { min_lre = std::min(min_lre, lre(r.coef[c], value.get<double>())); ++c; }
    }
    std::printf("  %-9s cond1(scaled, centred R) %.3g -> %s", name, r.cond, r.used ? "fast path" : "TSQR (fallback)");
    if (r.used) std::printf(", min LRE of coefficients %.1f", min_lre);
    std::printf("\n");
  }
}
