#include "reference_ols.hpp"

#include <cmath>
#include <map>
#include <set>
#include <stdexcept>

#include <Eigen/Dense>

namespace weft_bench {
namespace {

using LMatrix = Eigen::Matrix<long double, Eigen::Dynamic, Eigen::Dynamic>;
using LVector = Eigen::Matrix<long double, Eigen::Dynamic, 1>;

struct Equation {
  LMatrix X;
  LVector y;
  std::vector<double> cluster;  // unit of each row of the equation
  long double absorbed = 0;     // unit effects absorbed (within)
};

Equation transform(const SyntheticPanel& panel, const std::string& estimator) {
  const std::size_t N = panel.rows;
  const std::size_t K = panel.regressors;
  auto value = [&](std::size_t column, std::size_t row) -> long double {
    return panel.block[column * N + row];
  };
  std::set<double> grid_values(panel.period.begin(), panel.period.end());
  std::map<double, long> grid_index;
  long position = 0;
  for (double p : grid_values) grid_index[p] = position++;

  Equation eq;
  if (estimator == "pooled") {
    eq.X.resize(static_cast<Eigen::Index>(N), static_cast<Eigen::Index>(K + 1));
    eq.y.resize(static_cast<Eigen::Index>(N));
    for (std::size_t r = 0; r < N; ++r) {
      const auto i = static_cast<Eigen::Index>(r);
      eq.X(i, 0) = 1;
      for (std::size_t k = 0; k < K; ++k) eq.X(i, static_cast<Eigen::Index>(k + 1)) = value(k + 1, r);
      eq.y(i) = value(0, r);
      eq.cluster.push_back(panel.unit[r]);
    }
  } else if (estimator == "fd") {
    std::vector<std::size_t> later;
    for (std::size_t r = 1; r < N; ++r)
      if (panel.unit[r] == panel.unit[r - 1] &&
          grid_index[panel.period[r]] == grid_index[panel.period[r - 1]] + 1)
        later.push_back(r);
    eq.X.resize(static_cast<Eigen::Index>(later.size()), static_cast<Eigen::Index>(K + 1));
    eq.y.resize(static_cast<Eigen::Index>(later.size()));
    for (std::size_t d = 0; d < later.size(); ++d) {
      const auto i = static_cast<Eigen::Index>(d);
      const std::size_t r = later[d];
      eq.X(i, 0) = 1;
      for (std::size_t k = 0; k < K; ++k)
        eq.X(i, static_cast<Eigen::Index>(k + 1)) = value(k + 1, r) - value(k + 1, r - 1);
      eq.y(i) = value(0, r) - value(0, r - 1);
      eq.cluster.push_back(panel.unit[r]);
    }
  } else if (estimator == "within") {
    eq.X.resize(static_cast<Eigen::Index>(N), static_cast<Eigen::Index>(K));
    eq.y.resize(static_cast<Eigen::Index>(N));
    std::size_t start = 0;
    while (start < N) {
      std::size_t end = start;
      while (end < N && panel.unit[end] == panel.unit[start]) ++end;
      const long double count = static_cast<long double>(end - start);
      for (std::size_t c = 0; c <= K; ++c) {
        long double sum = 0;
        for (std::size_t r = start; r < end; ++r) sum += value(c, r);
        const long double mean = sum / count;
        for (std::size_t r = start; r < end; ++r) {
          const auto i = static_cast<Eigen::Index>(r);
          if (c == 0) eq.y(i) = value(0, r) - mean;
          else eq.X(i, static_cast<Eigen::Index>(c - 1)) = value(c, r) - mean;
        }
      }
      for (std::size_t r = start; r < end; ++r) eq.cluster.push_back(panel.unit[r]);
      eq.absorbed += 1;
      start = end;
    }
  } else {
    throw std::invalid_argument("reference_fit: unknown estimator " + estimator);
  }
  return eq;
}

}  // namespace

ReferenceFit reference_fit(const SyntheticPanel& panel, const std::string& estimator,
                           const std::string& se) {
  const Equation eq = transform(panel, estimator);
  const long double N = static_cast<long double>(eq.X.rows());
  const long double K = static_cast<long double>(eq.X.cols());
  const LMatrix xtx = eq.X.transpose() * eq.X;
  const LMatrix bread = xtx.ldlt().solve(LMatrix::Identity(eq.X.cols(), eq.X.cols()));
  const LVector b = bread * (eq.X.transpose() * eq.y);
  const LVector u = eq.y - eq.X * b;

  LMatrix V;
  if (se == "classical") {
    V = bread * (u.squaredNorm() / (N - eq.absorbed - K));
  } else if (se == "hc1") {
    LMatrix meat = LMatrix::Zero(eq.X.cols(), eq.X.cols());
    for (Eigen::Index i = 0; i < eq.X.rows(); ++i)
      meat += (u(i) * u(i)) * eq.X.row(i).transpose() * eq.X.row(i);
    V = bread * meat * bread * (N / (N - eq.absorbed - K));
  } else if (se == "cluster") {
    std::map<double, LVector> score_sum_g;
    for (Eigen::Index i = 0; i < eq.X.rows(); ++i) {
      auto it = score_sum_g.find(eq.cluster[static_cast<std::size_t>(i)]);
      if (it == score_sum_g.end())
        it = score_sum_g.emplace(eq.cluster[static_cast<std::size_t>(i)], LVector::Zero(eq.X.cols())).first;
      it->second += u(i) * eq.X.row(i).transpose();
    }
    LMatrix meat = LMatrix::Zero(eq.X.cols(), eq.X.cols());
    for (const auto& [unit, s] : score_sum_g) meat += s * s.transpose();
    const long double G = static_cast<long double>(score_sum_g.size());
    V = bread * meat * bread * (G / (G - 1) * (N - 1) / (N - K));
  } else {
    throw std::invalid_argument("reference_fit: unknown standard errors " + se);
  }
  ReferenceFit fit;
  for (Eigen::Index j = 0; j < b.size(); ++j) {
    fit.estimate.push_back(static_cast<double>(b(j)));
    fit.se.push_back(static_cast<double>(std::sqrt(V(j, j))));
  }
  return fit;
}

}  // namespace weft_bench
