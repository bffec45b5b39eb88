// fd_phases: where a first-difference fit with cluster-by-unit SEs spends its time,
// phase by phase, on the core library directly (not through the C interface), next
// to the floor on the same data. For the core engineer: the numbers behind
// the benchmark notes come from this program.
//   fd_phases [UNITSxPERIODSxK] [reps]     default 50000x20x20, 5 reps
#include <weft/core.hpp>

#include <Eigen/Dense>

#include <cstdio>
#include <string>
#include <vector>

#include "bench_support.hpp"
#include "synthetic_panel.hpp"

using namespace weft_bench;

namespace {

weft::PanelData to_core(const SyntheticPanel& s) {
  weft::PanelData data;
  data.outcome.name = "y";
  data.outcome.values.assign(s.outcome(), s.outcome() + s.rows);
  for (std::size_t k = 0; k < s.regressors; ++k) {
    weft::Column x;
    x.name = "x" + std::to_string(k + 1);
    x.values.assign(s.regressor(k), s.regressor(k) + s.rows);
    data.regressors.push_back(std::move(x));
  }
  data.units.numbers = s.unit;
  data.periods.values = s.period;
  return data;
}

// The fd equation as core's builder makes it for a balanced panel sorted by unit
// then period: [1, dX] and dy over adjacent rows of a unit.
weft::EquationInput fd_equation(const SyntheticPanel& s) {
  std::vector<std::size_t> later;
  for (std::size_t r = 1; r < s.rows; ++r)
    if (s.unit[r] == s.unit[r - 1] && s.period[r] == s.period[r - 1] + 1) later.push_back(r);
  weft::EquationInput in;
  const auto N = static_cast<Eigen::Index>(later.size());
  const auto K = static_cast<Eigen::Index>(s.regressors + 1);
  in.X.resize(N, K);
  in.y.resize(N);
  in.X.col(0).setOnes();
  in.intercept_column = 0;
  in.terms.push_back("intercept");
  for (std::size_t k = 0; k < s.regressors; ++k) {
    const double* x = s.regressor(k);
    for (Eigen::Index i = 0; i < N; ++i) {
      const std::size_t r = later[static_cast<std::size_t>(i)];
      in.X(i, static_cast<Eigen::Index>(k + 1)) = x[r] - x[r - 1];
    }
    in.terms.push_back("x" + std::to_string(k + 1));
  }
  for (Eigen::Index i = 0; i < N; ++i) {
    const std::size_t r = later[static_cast<std::size_t>(i)];
    in.y[i] = s.outcome()[r] - s.outcome()[r - 1];
    in.input_row.push_back(r);
    in.unit.push_back(static_cast<std::int32_t>(s.unit[r]) - 1);
    in.period.push_back(static_cast<std::int32_t>(s.period[r] - 2001.0));
  }
  return in;
}

}  // namespace

int main(int argc, char** argv) {
  PanelShape shape{50000, 20, 20, Layout::balanced, 20261202};
  if (argc > 1 && std::sscanf(argv[1], "%zux%zux%zu", &shape.units, &shape.periods, &shape.regressors) != 3) {
    std::fprintf(stderr, "usage: fd_phases [UNITSxPERIODSxK] [reps]\n");
    return 2;
  }
  const int reps = argc > 2 ? std::stoi(argv[2]) : 5;
  const SyntheticPanel s = make_panel(shape);
  const weft::PanelData data = to_core(s);
  weft::ModelSpec spec;
  spec.estimator = weft::Estimator::fd;
  spec.covariance = weft::Covariance::cluster;

  const auto columns = static_cast<Eigen::Index>(s.regressors + 1);
  Eigen::Map<const Eigen::MatrixXd> Z(s.block.data(), static_cast<Eigen::Index>(s.rows), columns);
  const Timing floor = time_median(reps, [&] {
    Eigen::MatrixXd gram = Eigen::MatrixXd::Zero(columns, columns);
    gram.selfadjointView<Eigen::Lower>().rankUpdate(Z.transpose());
  });
  const Timing copy_in = time_median(reps, [&] { weft::PanelData copy = to_core(s); });
  const Timing index = time_median(reps, [&] { weft::build_index(data.units, data.periods, 1); });
  const Timing lean = time_median(reps, [&] { weft::fit_model_lean(data, spec); });
  weft::PanelData borrowed;
  borrowed.outcome = weft::Column::borrow("y", s.outcome(), nullptr, s.rows);
  for (std::size_t k = 0; k < s.regressors; ++k)
    borrowed.regressors.push_back(weft::Column::borrow("x" + std::to_string(k + 1), s.regressor(k), nullptr, s.rows));
  borrowed.units.numbers = s.unit;
  borrowed.periods = weft::Column::borrow("t", s.period.data(), nullptr, s.rows);
  const Timing lean_borrowed = time_median(reps, [&] { weft::fit_model_lean(borrowed, spec); });
  const Timing fit = time_median(reps, [&] { weft::fit_model(data, spec); });
  const Timing fd_design = time_median(reps, [&] { weft::EquationInput in = fd_equation(s); });
  weft::EquationInput prepared = fd_equation(s);
  const Timing solve = time_median(reps, [&] { weft::solve_equation(prepared); });
  const weft::Equation eq = weft::solve_equation(prepared);
  const Timing covariance = time_median(reps, [&] { weft::compute_covariance(eq, weft::Covariance::cluster); });
  const Timing classical = time_median(reps, [&] { weft::compute_covariance(eq, weft::Covariance::classical); });
  const Timing qr_only = time_median(reps, [&] {
    // Eigen's Householder QR of the whole fd design, once, for scale.
    Eigen::HouseholderQR<Eigen::MatrixXd> qr(prepared.X);
  });

  std::printf("fd + cluster, %zu rows (%zu units x %zu periods, K=%zu), median of %d; x_floor from CPU time\n", s.rows, shape.units,
              shape.periods, shape.regressors, reps);
  std::printf("  %-54s %9s %9s %9s\n", "phase", "wall_s", "cpu_s", "x_floor");
  auto line = [&](const char* what, Timing t) {
    std::printf("  %-54s %9.4f %9.4f %9.1f\n", what, t.wall, t.cpu, t.cpu / floor.cpu);
  };
  line("floor: Z'Z, one pass (Eigen rank update)", floor);
  line("copying the columns (what weft_panel_set_* does)", copy_in);
  line("fit_model_lean total (the route weft_model_new takes)", lean);
  line("  of which build_index (sort rows by unit, period)", index);
  line("fit_model_lean on the host's block, borrowed in place", lean_borrowed);
  line("fit_model total (the full route, for comparison)", fit);
  line("  of which build_index (sort rows by unit, period)", index);
  line("  of which the fd design (bench's own loop, same shape)", fd_design);
  line("  of which solve_equation on that design", solve);
  line("  of which compute_covariance cluster", covariance);
  line("  the rest (listwise, inference, Series, copies)",
       {fit.wall - index.wall - fd_design.wall - solve.wall - covariance.wall,
        fit.cpu - index.cpu - fd_design.cpu - solve.cpu - covariance.cpu});
  line("for scale: compute_covariance classical", classical);
  line("for scale: one Eigen HouseholderQR of the design", qr_only);
  return 0;
}
