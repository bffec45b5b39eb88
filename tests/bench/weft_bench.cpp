// weft_bench: times weft's C interface on seeded synthetic panels against the floor
// (one pass forming X'X and X'y over the same memory), reports medians over repeated
// runs and peak memory, and checks that weft agrees with itself and with a small
// independent OLS. See tests/bench/README.md for what each column means.
#include <weft.h>

#include <Eigen/Dense>

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <fstream>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

#include "bench_support.hpp"
#include "reference_ols.hpp"
#include "synthetic_panel.hpp"

namespace weft_bench {
namespace {

struct Size {
  std::string name;
  std::size_t units, periods, regressors;
};

const Size size_smoke{"smoke", 60, 6, 3};
const Size size_small{"100k", 10000, 10, 5};
const Size size_large{"1M", 50000, 20, 20};
// The 100k shape ten times over: with K fixed, CPU per million rows must match 100k's.
const Size size_large_k5{"1Mk5", 100000, 10, 5};

struct WeftFit {
  std::vector<std::string> terms;
  std::vector<double> table;  // terms x WEFT_COEF_COLUMNS, row-major
  double panel_seconds = 0;   // copying the columns into a weft_panel
  double fit_seconds = 0;     // weft_model_new + reading the coefficient table
  double fit_cpu = 0;         // the same in process CPU seconds
  double estimate(std::size_t t) const { return table[t * WEFT_COEF_COLUMNS + WEFT_COEF_ESTIMATE]; }
  double se(std::size_t t) const { return table[t * WEFT_COEF_COLUMNS + WEFT_COEF_SE]; }
};

[[noreturn]] void fail_weft(const char* what, int status) {
  throw std::runtime_error(std::string(what) + " failed (" + weft_status_text(status) +
                           "): " + weft_last_error());
}

void check(int status, const char* what) {
  if (status != WEFT_OK) fail_weft(what, status);
}

const unsigned char* mask_or_null(const std::vector<unsigned char>& mask) {
  return mask.empty() ? nullptr : mask.data();
}

// Whether the columns are copied into the panel (weft_panel_set_* / add_regressor) or
// borrowed in place (weft_panel_borrow_*, the default: a host that keeps its arrays).
bool g_copy_columns = false;

// The whole path a host takes on a recalculation: columns in, model fitted,
// coefficient table out.
WeftFit run_weft(const SyntheticPanel& data, const std::string& model_text, bool copy = g_copy_columns,
                 const std::vector<double>* weights = nullptr) {
  WeftFit fit;
  const auto start = Clock::now();
  weft_panel* panel = nullptr;
  check(weft_panel_new(&panel, data.rows, 1), "weft_panel_new");
  struct PanelGuard {
    weft_panel* p;
    ~PanelGuard() { weft_panel_free(p); }
  } panel_guard{panel};
  if (data.unit_names.empty()) {
    check(weft_panel_set_units_number(panel, data.unit.data(), nullptr), "weft_panel_set_units_number");
  } else {
    std::vector<const char*> ids(data.rows);
    for (std::size_t r = 0; r < data.rows; ++r) ids[r] = data.unit_names[r].c_str();
    check(weft_panel_set_units_text(panel, ids.data(), nullptr), "weft_panel_set_units_text");
  }
  check((copy ? weft_panel_set_periods : weft_panel_borrow_periods)(panel, data.period.data(), nullptr),
        "weft_panel_set_periods");
  check((copy ? weft_panel_set_outcome : weft_panel_borrow_outcome)(panel, "y", data.outcome(),
                                                                   mask_or_null(data.outcome_missing)),
        "weft_panel_set_outcome");
  for (std::size_t k = 0; k < data.regressors; ++k) {
    const std::string name = "x" + std::to_string(k + 1);
    const unsigned char* missing = (k == 0) ? mask_or_null(data.regressor_missing) : nullptr;
    check((copy ? weft_panel_add_regressor : weft_panel_borrow_regressor)(panel, name.c_str(), data.regressor(k),
                                                                          missing),
          "weft_panel_add_regressor");
  }
  if (weights != nullptr)
    check((copy ? weft_panel_set_weights : weft_panel_borrow_weights)(panel, "w", weights->data(), nullptr),
          "weft_panel_set_weights");
  const auto fit_start = Clock::now();
  const double fit_cpu_start = cpu_seconds();
  fit.panel_seconds = std::chrono::duration<double>(fit_start - start).count();

  weft_model* model = nullptr;
  check(weft_model_new_text(&model, panel, model_text.c_str()), "weft_model_new_text");
  struct ModelGuard {
    weft_model* m;
    ~ModelGuard() { weft_model_free(m); }
  } model_guard{model};
  std::size_t n_terms = 0;
  check(weft_model_term_count(model, &n_terms), "weft_model_term_count");
  fit.table.resize(n_terms * WEFT_COEF_COLUMNS);
  check(weft_model_coefficients(model, fit.table.data(), fit.table.size(), nullptr),
        "weft_model_coefficients");
  fit.fit_seconds = seconds_since(fit_start);
  fit.fit_cpu = cpu_seconds() - fit_cpu_start;
  for (std::size_t t = 0; t < n_terms; ++t) {
    const char* name = nullptr;
    check(weft_model_term_name(model, t, &name), "weft_model_term_name");
    fit.terms.emplace_back(name);
  }
  return fit;
}

// The floor: one pass over the outcome and regressors forming Z'Z for Z = [y X]
// (X'X, X'y and y'y in one symmetric rank-k update), single-threaded Eigen.
double floor_pass(const SyntheticPanel& data) {
  const auto columns = static_cast<Eigen::Index>(data.regressors + 1);
  Eigen::Map<const Eigen::MatrixXd> Z(data.block.data(), static_cast<Eigen::Index>(data.rows), columns);
  Eigen::MatrixXd gram = Eigen::MatrixXd::Zero(columns, columns);
  gram.selfadjointView<Eigen::Lower>().rankUpdate(Z.transpose());
  return gram.trace();  // returned so the pass cannot be optimised away
}

struct Options {
  std::vector<Size> sizes{size_small, size_large_k5, size_large};
  std::vector<std::string> estimators{"pooled", "fd", "within"};
  std::vector<std::string> ses{"classical", "hc1", "cluster", "dk"};
  std::vector<Layout> layouts{Layout::balanced, Layout::unbalanced};
  std::vector<std::string> orders{"unit"};    // unit: sorted by unit, then period; period: by period, then unit
  std::vector<std::string> ids{"number"};     // number or text unit ids
  int reps = 0;  // 0: 7 below 500,000 rows, 5 above
  bool memory = true;
  bool smoke = false;
  std::string json_path;
  std::string write_csv_path;
  std::string read_csv_path;
  std::string model_text = "fd cluster";
  bool bootstrap = false;
  bool weighted = false;  // --weighted: each case also with observation weights, row "<se> w"

  std::string bootstrap_settings = "draws=9999";
};

std::vector<std::string> split_list(const std::string& text) {
  std::vector<std::string> out;
  std::stringstream in(text);
  std::string item;
  while (std::getline(in, item, ',')) if (!item.empty()) out.push_back(item);
  return out;
}

Size parse_size(const std::string& word) {
  if (word == "smoke") return size_smoke;
  if (word == "100k" || word == "small") return size_small;
  if (word == "1M" || word == "1m" || word == "large") return size_large;
  if (word == "1Mk5" || word == "1mk5") return size_large_k5;
  // the cr2 cases: 1,000,000 rows, K=5, in 50,000 clusters of 20 rows or 50 of 20,000
  if (word == "1Mg50k" || word == "1mg50k") return Size{"1Mg50k", 50000, 20, 5};
  if (word == "1Mg50" || word == "1mg50") return Size{"1Mg50", 50, 20000, 5};
  // UNITSxPERIODSxK, e.g. 20000x10x5
  Size size{word, 0, 0, 0};
  if (std::sscanf(word.c_str(), "%zux%zux%zu", &size.units, &size.periods, &size.regressors) == 3 &&
      size.units >= 2 && size.periods >= 2 && size.regressors >= 1)
    return size;
  throw std::invalid_argument("unknown size '" + word + "': use smoke, 100k, 1M or UNITSxPERIODSxK");
}

void usage() {
  std::puts(
      "usage: weft_bench [--sizes 100k,1M] [--estimators pooled,fd,within]\n"
      "                  [--se classical,hc1,cluster,dk] [--layouts balanced,unbalanced]\n"
      "                  [--orders unit,period] [--ids number,text]\n"
      "                  [--reps N] [--no-memory] [--copy] [--weighted] [--json FILE]\n"
      "       weft_bench --smoke          checks only (seconds; used by ctest, label bench)\n"
      "       weft_bench --write-csv FILE [--sizes S] [--layouts L]   write one dataset\n"
      "       weft_bench --read-csv FILE [--model \"fd cluster\"] [--reps N] [--json FILE]\n"
      "       weft_bench --bootstrap [--bootstrap-settings \"draws=9999\"] [--reps N]\n"
      "                  wild cluster bootstrap of x1, 1,000,000 rows in 50 clusters, K=3\n"
      "sizes: smoke (60x6, K=3), 100k (10,000 units x 10 periods, K=5),\n"
      "       1M (50,000 x 20, K=20), 1Mk5 (100,000 x 10, K=5: the linear-scaling\n"
      "       partner of 100k), 1Mg50k and 1Mg50 (1,000,000 rows, K=5, in 50,000 or\n"
      "       50 unit clusters: the cr2 cases, --se cluster,cr2), or UNITSxPERIODSxK.\n"
      "       Default: 100k,1Mk5,1M\n"
      "--weighted: run every case also with observation weights (weft_panel_borrow_weights,\n"
      "  or set with --copy), reported in the row below it with se \"<se> w\"\n"
      "--copy: copy the columns into the panel (weft_panel_set_*) instead of borrowing\n"
      "       them in place (weft_panel_borrow_*, the default)\n"
      "--orders: rows sorted by unit, then period (unit, the default) or by period, then\n"
      "       unit (period); --ids: unit ids handed over as numbers (the default) or as\n"
      "       text (\"Branch 00017\")");
}

Options parse_options(int argc, char** argv) {
  Options o;
  for (int i = 1; i < argc; ++i) {
    const std::string arg = argv[i];
    auto value = [&]() -> std::string {
      if (i + 1 >= argc) throw std::invalid_argument(arg + " needs a value");
      return argv[++i];
    };
    if (arg == "--sizes") {
      o.sizes.clear();
      for (const auto& w : split_list(value())) o.sizes.push_back(parse_size(w));
    } else if (arg == "--estimators") o.estimators = split_list(value());
    else if (arg == "--se") o.ses = split_list(value());
    else if (arg == "--layouts") {
      o.layouts.clear();
      for (const auto& w : split_list(value())) {
        if (w == "balanced") o.layouts.push_back(Layout::balanced);
        else if (w == "unbalanced") o.layouts.push_back(Layout::unbalanced);
        else throw std::invalid_argument("unknown layout '" + w + "': use balanced or unbalanced");
      }
    } else if (arg == "--orders") {
      o.orders = split_list(value());
      for (const auto& w : o.orders)
        if (w != "unit" && w != "period") throw std::invalid_argument("unknown order '" + w + "': use unit or period");
    } else if (arg == "--ids") {
      o.ids = split_list(value());
      for (const auto& w : o.ids)
        if (w != "number" && w != "text") throw std::invalid_argument("unknown ids '" + w + "': use number or text");
    } else if (arg == "--reps") o.reps = std::stoi(value());
    else if (arg == "--no-memory") o.memory = false;
    else if (arg == "--copy") g_copy_columns = true;
    else if (arg == "--weighted") o.weighted = true;
    else if (arg == "--json") o.json_path = value();
    else if (arg == "--smoke") o.smoke = true;
    else if (arg == "--write-csv") o.write_csv_path = value();
    else if (arg == "--read-csv") o.read_csv_path = value();
    else if (arg == "--model") o.model_text = value();
    else if (arg == "--bootstrap") {
      o.bootstrap = true;
      o.sizes = {parse_size("50x20000x3")};
    } else if (arg == "--bootstrap-settings") o.bootstrap_settings = value();
    else if (arg == "--help" || arg == "-h") {
      usage();
      std::exit(0);
    } else throw std::invalid_argument("unknown argument '" + arg + "' (see --help)");
  }
  return o;
}

std::string json_number(double x) {
  if (!std::isfinite(x)) return "null";
  char buf[40];
  std::snprintf(buf, sizeof buf, "%.17g", x);
  return buf;
}

// ---------------------------------------------------------------- smoke checks

struct Checker {
  int passed = 0, failed = 0;
  void expect(bool ok, const std::string& what) {
    if (ok) ++passed;
    else {
      ++failed;
      std::printf("FAILED: %s\n", what.c_str());
    }
  }
  // Two weft fits agree term by term, names and numbers, to a relative tolerance.
  void same_fit(const WeftFit& a, const WeftFit& b, double tolerance, const std::string& what) {
    bool ok = a.terms == b.terms && a.table.size() == b.table.size();
    double worst = 0;
    for (std::size_t t = 0; ok && t < a.terms.size(); ++t) {
      for (double pair : {std::fabs(a.estimate(t) - b.estimate(t)) / std::max(1.0, std::fabs(a.estimate(t))),
                          std::fabs(a.se(t) - b.se(t)) / std::fabs(a.se(t))})
        worst = std::max(worst, pair);
    }
    ok = ok && worst <= tolerance;
    char detail[80];
    std::snprintf(detail, sizeof detail, " (worst relative difference %.2e)", worst);
    expect(ok, what + detail);
  }
};

int run_smoke() {
  Checker checker;
  const std::vector<std::string> estimators{"pooled", "fd", "within"};
  const std::vector<std::string> ses{"classical", "hc1", "cluster", "dk", "cr2"};
  const PanelShape balanced_shape{size_smoke.units, size_smoke.periods, size_smoke.regressors,
                                  Layout::balanced, 20261202};
  PanelShape unbalanced_shape = balanced_shape;
  unbalanced_shape.layout = Layout::unbalanced;

  const SyntheticPanel balanced = make_panel(balanced_shape);
  const SyntheticPanel unbalanced = make_panel(unbalanced_shape);
  const SyntheticPanel balanced_with_blanks = mark_absent_as_missing(balanced, presence(unbalanced_shape));
  checker.expect(unbalanced.rows < balanced.rows, "the unbalanced panel has gaps");

  // Order, unusable extra rows and blanks-versus-absent rows must not change a fit:
  // only summation order differs, so 1e-9 relative is generous.
  const double same = 1e-9;
  for (const auto& estimator : estimators) {
    for (const auto& se : ses) {
      const std::string model = estimator + " " + se;
      const WeftFit b = run_weft(balanced, model);
      const WeftFit u = run_weft(unbalanced, model);
      checker.same_fit(b, run_weft(shuffle_rows(balanced, 7), model), same, model + ": balanced vs shuffled");
      checker.same_fit(u, run_weft(shuffle_rows(unbalanced, 8), model), same, model + ": unbalanced vs shuffled");
      checker.same_fit(u, run_weft(balanced_with_blanks, model), same,
                       model + ": unbalanced vs balanced with those rows blank");
      checker.same_fit(u, run_weft(pad_with_unusable_rows(unbalanced, 9), model), same,
                       model + ": unbalanced vs unbalanced plus unusable rows");
      checker.same_fit(u, run_weft(unbalanced, model, !g_copy_columns), 0,
                       model + ": borrowed vs copied columns");
    }
  }

  // Against the bench's own long-double normal equations (reference_ols.cpp), on the
  // sorted unbalanced panel. Tolerance 1e-8: a well-conditioned design of 300 rows.
  const std::vector<std::pair<std::string, std::string>> referenced{
      {"pooled", "classical"}, {"pooled", "hc1"}, {"pooled", "cluster"},
      {"fd", "classical"},     {"fd", "hc1"},     {"fd", "cluster"},
      {"within", "classical"}, {"within", "hc1"}, {"within", "cluster"}};
  for (const auto& [estimator, se] : referenced) {
    for (const SyntheticPanel* data : {&balanced, &unbalanced}) {
      const std::string what = estimator + " " + se + (data == &balanced ? " balanced" : " unbalanced") +
                               ": weft vs bench reference OLS";
      const WeftFit w = run_weft(*data, estimator + " " + se);
      const ReferenceFit r = reference_fit(*data, estimator, se);
      bool ok = w.terms.size() == r.estimate.size();
      double worst = 0;
      for (std::size_t t = 0; ok && t < r.estimate.size(); ++t) {
        worst = std::max(worst, std::fabs(w.estimate(t) - r.estimate[t]) / std::max(1.0, std::fabs(r.estimate[t])));
        worst = std::max(worst, std::fabs(w.se(t) - r.se[t]) / r.se[t]);
      }
      char detail[80];
      std::snprintf(detail, sizeof detail, " (worst relative difference %.2e)", worst);
      checker.expect(ok && worst <= 1e-8, what + detail);
    }
  }

  // The floor pass runs and sees the same numbers: trace of Z'Z is the sum of squares.
  double sum_squares = 0;
  for (double v : balanced.block) sum_squares += v * v;
  checker.expect(std::fabs(floor_pass(balanced) - sum_squares) <= 1e-9 * sum_squares,
                 "floor pass: trace of Z'Z equals the sum of squares");

  std::printf("weft_bench smoke: %d passed, %d failed\n", checker.passed, checker.failed);
  return checker.failed == 0 ? 0 : 1;
}

// ---------------------------------------------------------------- timing runs

struct Row {
  std::string size, layout, estimator, se;
  std::string order = "unit", ids = "number";
  std::size_t rows = 0, units = 0, periods = 0, regressors = 0;
  double input_bytes = 0;
  double floor_seconds = 0, floor_cpu = 0;
  double cpu_seconds = 0;
  double total_seconds = 0, panel_seconds = 0, fit_seconds = 0, fit_cpu = 0;
  double peak_bytes = -1, extra_bytes = -1;
  int reps = 0;
};

void print_header() {
  std::printf("%-6s %-22s %8s %-6s %-9s %8s %8s %8s %7s %7s %8s %7s %7s %8s %7s\n", "size", "layout", "rows",
              "estim", "se", "wall_s", "cpu_s", "cpu/Mrow", "x_floor", "x_fl_cpu", "panel_s", "fit_s", "fit_fl",
              "peak_MiB", "peak/in");
}

void print_row(const Row& r) {
  const double millions = static_cast<double>(r.rows) / 1e6;
  char peak[32] = "n/a", ratio[32] = "n/a";
  if (r.peak_bytes > 0) {
    std::snprintf(peak, sizeof peak, "%.0f", r.peak_bytes / 1048576.0);
    std::snprintf(ratio, sizeof ratio, "%.2f", r.peak_bytes / r.input_bytes);
  }
  const std::string layout = r.layout + "/" + r.order + "/" + r.ids;
  std::printf("%-6s %-22s %8zu %-6s %-9s %8.4f %8.4f %8.4f %7.1f %7.1f %8.4f %7.4f %7.1f %8s %7s\n", r.size.c_str(),
              layout.c_str(), r.rows, r.estimator.c_str(), r.se.c_str(), r.total_seconds, r.cpu_seconds,
              r.cpu_seconds / millions, r.total_seconds / r.floor_seconds, r.cpu_seconds / r.floor_cpu,
              r.panel_seconds, r.fit_seconds, r.fit_cpu / r.floor_cpu, peak, ratio);
  std::fflush(stdout);
}

void write_json(const std::string& path, const std::vector<Row>& rows) {
  std::ofstream out(path);
  out << "{\n  \"weft_version\": \"" << weft_version_text() << "\",\n  \"runs\": [\n";
  for (std::size_t i = 0; i < rows.size(); ++i) {
    const Row& r = rows[i];
    out << "    {\"size\": \"" << r.size << "\", \"layout\": \"" << r.layout << "\", \"order\": \"" << r.order
        << "\", \"ids\": \"" << r.ids << "\", \"estimator\": \""
        << r.estimator << "\", \"se\": \"" << r.se << "\", \"rows\": " << r.rows
        << ", \"units\": " << r.units << ", \"periods\": " << r.periods
        << ", \"regressors\": " << r.regressors << ", \"reps\": " << r.reps
        << ", \"input_bytes\": " << json_number(r.input_bytes)
        << ", \"floor_seconds\": " << json_number(r.floor_seconds)
        << ", \"floor_cpu_seconds\": " << json_number(r.floor_cpu)
        << ", \"cpu_seconds\": " << json_number(r.cpu_seconds)
        << ", \"ratio_to_floor_cpu\": " << json_number(r.cpu_seconds / r.floor_cpu)
        << ", \"cpu_seconds_per_million_rows\": " << json_number(r.cpu_seconds / (static_cast<double>(r.rows) / 1e6))
        << ", \"median_seconds\": " << json_number(r.total_seconds)
        << ", \"panel_seconds\": " << json_number(r.panel_seconds)
        << ", \"fit_seconds\": " << json_number(r.fit_seconds)
        << ", \"fit_cpu_seconds\": " << json_number(r.fit_cpu)
        << ", \"fit_ratio_to_floor_cpu\": " << json_number(r.fit_cpu / r.floor_cpu)
        << ", \"ratio_to_floor\": " << json_number(r.total_seconds / r.floor_seconds)
        << ", \"seconds_per_million_rows\": " << json_number(r.total_seconds / (static_cast<double>(r.rows) / 1e6))
        << ", \"peak_bytes\": " << json_number(r.peak_bytes)
        << ", \"extra_bytes\": " << json_number(r.extra_bytes) << "}"
        << (i + 1 < rows.size() ? "," : "") << "\n";
  }
  out << "  ]\n}\n";
}

int run_timings(const Options& o) {
  std::vector<Row> rows;
  std::printf("weft %s; floor = one single-threaded Eigen pass forming Z'Z, Z = [y X]\n",
              weft_version_text());
  print_header();
  for (const Size& size : o.sizes) {
    for (Layout layout : o.layouts) {
      for (const auto& order : o.orders) {
      for (const auto& ids : o.ids) {
      // one panel held at a time, so that the peak memory counts the input once
      SyntheticPanel data = make_panel({size.units, size.periods, size.regressors, layout, 20261202});
      if (order == "period") data = period_major(data);
      if (ids == "text") {
        data.unit_names.reserve(data.rows);
        for (double u : data.unit) data.unit_names.push_back(unit_text(u));
      }
      const int reps = o.reps > 0 ? o.reps : (data.rows > 500000 ? 5 : 7);
      // --weighted: positive weights between 0.5 and 1.5, fixed by the row number
      std::vector<double> weights;
      if (o.weighted)
        for (std::size_t i = 0; i < data.rows; ++i)
          weights.push_back(0.5 + static_cast<double>((i * 2654435761u) % 1000u) / 1000.0);
      double sink = 0;
      const Timing floor = time_median(reps, [&] { sink += floor_pass(data); });
      std::printf("%-6s %-22s %8zu floor  %-9s %8.4f %8.4f %8.4f %7.1f %7.1f   (checksum %.3g)\n", size.name.c_str(),
                  (layout_name(layout) + "/" + order + "/" + ids).c_str(), data.rows, "", floor.wall, floor.cpu,
                  floor.cpu / (static_cast<double>(data.rows) / 1e6), 1.0, 1.0, sink);
      for (const auto& estimator : o.estimators) {
        for (const auto& se : o.ses)
        for (bool weighted : {false, true}) {
          if (weighted && !o.weighted) continue;
          const std::vector<double>* w_ptr = weighted ? &weights : nullptr;
          Row row{size.name, layout_name(layout), estimator, weighted ? se + " w" : se, order, ids, data.rows,
                  size.units, size.periods, size.regressors, static_cast<double>(data.input_bytes()), floor.wall,
                  floor.cpu};
          const std::string model = estimator + " " + se;
          if (o.memory) {
            const MemoryProbe probe = probe_peak_memory([&] { run_weft(data, model, g_copy_columns, w_ptr); });
            if (probe.ok()) {
              row.peak_bytes = probe.peak;
              row.extra_bytes = probe.peak - probe.resident_before;
            }
          }
          std::vector<double> total, cpu, panel, fit, fit_cpu;
          run_weft(data, model, g_copy_columns, w_ptr);  // warm-up, not counted
          for (int r = 0; r < reps; ++r) {
            WeftFit w;
            const Timing t = time_once([&] { w = run_weft(data, model, g_copy_columns, w_ptr); });
            total.push_back(t.wall);
            cpu.push_back(t.cpu);
            panel.push_back(w.panel_seconds);
            fit.push_back(w.fit_seconds);
            fit_cpu.push_back(w.fit_cpu);
          }
          row.total_seconds = median(total);
          row.cpu_seconds = median(cpu);
          row.panel_seconds = median(panel);
          row.fit_seconds = median(fit);
          row.fit_cpu = median(fit_cpu);
          row.reps = reps;
          print_row(row);
          rows.push_back(row);
        }
      }
      }
      }
    }
  }
  std::printf("wall_s, cpu_s: medians of wall-clock and process CPU seconds (columns in, fit, table out);\n"
              "cpu/Mrow: CPU seconds per million input rows (equal across sizes of one K = linear);\n"
              "x_floor, x_fl_cpu: wall and CPU time over the floor's; panel_s, fit_s: wall split into\n"
              "copying the columns and fitting; fit_fl: the fit's CPU time (weft_model_new and the\n"
              "table, the columns already in a panel) over the floor's; peak/in: process high-water\n"
              "resident bytes during one run (the caller's input arrays included) over the input's\n"
              "bytes (y, X, unit, period as doubles).\n");
  if (!o.json_path.empty()) write_json(o.json_path, rows);
  return 0;
}

// One dataset from a CSV: the weft side of compare.py.
int run_csv(const Options& o) {
  const SyntheticPanel data = read_csv(o.read_csv_path);
  const int reps = o.reps > 0 ? o.reps : 5;
  WeftFit last;
  double sink = 0;
  // weft and the floor in turn, so that their ratio is taken at one machine speed
  const PairedTiming paired = time_paired(
      reps, [&] { last = run_weft(data, o.model_text); }, [&] { sink += floor_pass(data); });
  const Timing& weft_time = paired.a;
  const Timing& floor = paired.b;
  const MemoryProbe probe = probe_peak_memory([&] { run_weft(data, o.model_text); });
  std::ostringstream json;
  json << "{\"library\": \"weft " << weft_version_text() << "\", \"model\": \"" << o.model_text
       << "\", \"rows\": " << data.rows << ", \"reps\": " << reps
       << ", \"median_seconds\": " << json_number(weft_time.wall)
       << ", \"cpu_seconds\": " << json_number(weft_time.cpu)
       << ", \"floor_seconds\": " << json_number(floor.wall)
       << ", \"floor_cpu_seconds\": " << json_number(floor.cpu)
       << ", \"paired_ratio_to_floor_cpu\": " << json_number(paired.cpu_ratio)
       << ", \"input_bytes\": " << json_number(static_cast<double>(data.input_bytes()))
       << ", \"peak_bytes\": " << json_number(probe.ok() ? probe.peak : NAN)
       << ", \"floor_checksum\": " << json_number(sink) << ", \"terms\": [";
  for (std::size_t t = 0; t < last.terms.size(); ++t)
    json << (t ? ", " : "") << "\"" << last.terms[t] << "\"";
  json << "], \"estimate\": [";
  for (std::size_t t = 0; t < last.terms.size(); ++t) json << (t ? ", " : "") << json_number(last.estimate(t));
  json << "], \"se\": [";
  for (std::size_t t = 0; t < last.terms.size(); ++t) json << (t ? ", " : "") << json_number(last.se(t));
  json << "]}\n";
  if (o.json_path.empty()) std::fputs(json.str().c_str(), stdout);
  else std::ofstream(o.json_path) << json.str();
  return 0;
}

// The wild cluster bootstrap (WEFT.BOOTSTRAP) on UNITSxPERIODSxK with the units as
// clusters: fit "pooled cluster" (a lean fit), then weft_test_bootstrap of x1 with
// 9,999 draws. The first call also refits the model in full once (the bootstrap needs
// the equation's rows); later calls are the bootstrap alone: one pass over the rows
// for the per-cluster pieces, then the draws and the interval.
int run_bootstrap(const Options& o) {
  const Size size = o.sizes.front();
  const SyntheticPanel data = make_panel({size.units, size.periods, size.regressors, Layout::balanced, 20261204});
  weft_panel* panel = nullptr;
  check(weft_panel_new(&panel, data.rows, 1), "weft_panel_new");
  check(weft_panel_set_units_number(panel, data.unit.data(), nullptr), "units");
  check(weft_panel_borrow_periods(panel, data.period.data(), nullptr), "periods");
  check(weft_panel_borrow_outcome(panel, "y", data.outcome(), nullptr), "outcome");
  for (std::size_t k = 0; k < data.regressors; ++k)
    check(weft_panel_borrow_regressor(panel, ("x" + std::to_string(k + 1)).c_str(), data.regressor(k), nullptr),
          "regressor");
  weft_model* model = nullptr;
  auto start = Clock::now();
  check(weft_model_new_text(&model, panel, "pooled cluster"), "weft_model_new_text");
  const double fit_s = seconds_since(start);
  weft_bootstrap_result r;
  start = Clock::now();
  check(weft_test_bootstrap(model, "x1", o.bootstrap_settings.c_str(), &r), "weft_test_bootstrap");
  const double first_s = seconds_since(start);
  std::vector<double> times;
  for (int rep = 0; rep < std::max(o.reps, 3); ++rep) {
    start = Clock::now();
    check(weft_test_bootstrap(model, "x1", o.bootstrap_settings.c_str(), &r), "weft_test_bootstrap");
    times.push_back(seconds_since(start));
  }
  std::sort(times.begin(), times.end());
  std::printf("bootstrap: %zu rows, %.0f clusters, K=%zu, settings \"%s\": draws %.0f (%s%s)\n", data.rows,
              r.clusters, data.regressors, o.bootstrap_settings.c_str(), r.draws,
              r.weights == WEFT_BOOT_WEBB ? "Webb" : "Rademacher", r.enumerated ? ", enumerated" : "");
  std::printf("  lean fit %.3f s; first bootstrap call (with the full refit) %.3f s;\n"
              "  bootstrap alone: median %.3f s, min %.3f s over %zu calls; p %.4f, interval [%.6g, %.6g]\n",
              fit_s, first_s, times[times.size() / 2], times.front(), times.size(), r.p, r.ci_low, r.ci_high);
  weft_model_free(model);
  weft_panel_free(panel);
  return 0;
}

}  // namespace
}  // namespace weft_bench

int main(int argc, char** argv) {
  using namespace weft_bench;
  try {
    const Options o = parse_options(argc, argv);
    if (weft_version_number() != WEFT_VERSION_NUMBER) {
      std::fprintf(stderr, "weft_bench: header %s but library %s\n", WEFT_VERSION, weft_version_text());
      return 2;
    }
    if (o.smoke) return run_smoke();
    if (o.bootstrap) return run_bootstrap(o);
    if (!o.write_csv_path.empty()) {
      const Size& size = o.sizes.front();
      write_csv(make_panel({size.units, size.periods, size.regressors, o.layouts.front(), 20261202}),
                o.write_csv_path);
      return 0;
    }
    if (!o.read_csv_path.empty()) return run_csv(o);
    return run_timings(o);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "weft_bench: %s\n", e.what());
    return 2;
  }
}
