// Shared pieces of the event-study estimators: the panel they read, inference, the
// pre-treatment Wald test, the two-way fixed-effects OLS, and the entry point.
#include <algorithm>
#include <cmath>
#include <string>
#include <vector>

#include <boost/math/distributions/normal.hpp>
#include <Eigen/Dense>

#include "event_internal.hpp"
#include "weft/distributions.hpp"
#include "weft/error.hpp"
#include "weft/spec.hpp"

namespace weft::event_detail {

EventPanel make_event_panel(const EventData& data, const EventDesign& design) {
    EventPanel panel;
    panel.data = &data;
    panel.timing = treatment_timing(data);
    panel.anticipation = design.anticipation;
    panel.n_controls = data.controls.size();
    const PanelIndex& ix = panel.timing.index;
    panel.cell.assign(ix.n_units() * ix.n_periods(), -1);
    for (std::size_t r = 0; r < panel.timing.used.size(); ++r) {
        if (!panel.timing.used[r]) continue;
        const auto u = static_cast<std::size_t>(ix.unit_of_row[r]);
        const auto p = static_cast<std::size_t>(ix.period_of_row[r]);
        panel.cell[u * ix.n_periods() + p] = static_cast<std::int64_t>(r);
    }
    panel.before = design.before >= 0 ? design.before : std::max(0, -panel.timing.min_event);
    panel.after = design.after >= 0 ? design.after : std::max(0, panel.timing.max_event);
    if (design.estimator == EventEstimator::twfe)
        panel.before = std::max(panel.before, design.anticipation + 1);
    return panel;
}

Effect infer(double estimate, double variance, double df, double level, std::size_t treated_units) {
    Effect e;
    e.treated_units = treated_units;
    if (!std::isfinite(estimate) || !std::isfinite(variance) || variance < 0) return e;
    e.estimated = true;
    e.estimate = estimate;
    e.se = std::sqrt(variance);
    e.t = e.se > 0 ? estimate / e.se : 0;
    const bool normal = !std::isfinite(df);
    const double q = normal ? boost::math::quantile(boost::math::normal(), 0.5 + level / 2)
                            : t_quantile(0.5 + level / 2, df);
    e.p = e.se > 0 ? (normal ? normal_two_sided_p(e.t) : t_two_sided_p(e.t, df)) : 1.0;
    e.ci_low = estimate - q * e.se;
    e.ci_high = estimate + q * e.se;
    return e;
}

PreTest wald_pre_test(const Eigen::VectorXd& b, const Eigen::MatrixXd& V, const std::string& none_reason) {
    PreTest out;
    if (b.size() == 0) {
        out.reason = none_reason;
        return out;
    }
    try {
        const Eigen::MatrixXd identity = Eigen::MatrixXd::Identity(b.size(), b.size());
        const WaldResult w = wald_test(b, V, 1.0, identity, Eigen::VectorXd::Zero(b.size()));
        out.available = true;
        out.statistic = w.chi2;
        out.df = w.chi2_df;
        out.p = w.chi2_p;
    } catch (const Error&) {
        out.reason = "the pre-treatment effects have a singular joint covariance";
    }
    return out;
}

TwoWayFit fit_two_way(const EventPanel& panel, const std::vector<std::size_t>& rows,
                      const Eigen::MatrixXd& extra) {
    const PanelIndex& ix = panel.index();
    const std::size_t N = rows.size();
    TwoWayFit fit;
    fit.period_kept.assign(ix.n_periods(), -1);
    std::vector<int> period_column(ix.n_periods(), -1);
    std::vector<std::uint8_t> present(ix.n_periods(), 0);
    for (std::size_t r : rows) present[static_cast<std::size_t>(ix.period_of_row[r])] = 1;
    int n_period_columns = 0;
    bool first = true;
    for (std::size_t p = 0; p < present.size(); ++p) {
        if (!present[p]) continue;
        if (first) { first = false; continue; }  // reference period
        period_column[p] = n_period_columns++;
    }
    const Eigen::Index K = n_period_columns + extra.cols();
    Eigen::MatrixXd X = Eigen::MatrixXd::Zero(static_cast<Eigen::Index>(N), K);
    Eigen::VectorXd y(static_cast<Eigen::Index>(N));
    EquationInput in;
    for (std::size_t k = 0; k < N; ++k) {
        const std::size_t r = rows[k];
        const int pc = period_column[static_cast<std::size_t>(ix.period_of_row[r])];
        const auto kk = static_cast<Eigen::Index>(k);
        if (pc >= 0) X(kk, pc) = 1.0;
        X.row(kk).tail(extra.cols()) = extra.row(kk);
        y(kk) = panel.y(r);
        in.input_row.push_back(r);
        in.unit.push_back(ix.unit_of_row[r]);
        in.period.push_back(ix.period_of_row[r]);
    }
    // unit means over the rows, then demean
    fit.unit_mean_y.assign(ix.n_units(), 0.0);
    fit.unit_mean_design = Eigen::MatrixXd::Zero(static_cast<Eigen::Index>(ix.n_units()), K);
    std::vector<double> count(ix.n_units(), 0.0);
    for (std::size_t k = 0; k < N; ++k) {
        const auto u = static_cast<std::size_t>(in.unit[k]);
        count[u] += 1;
        fit.unit_mean_y[u] += y(static_cast<Eigen::Index>(k));
        fit.unit_mean_design.row(static_cast<Eigen::Index>(u)) += X.row(static_cast<Eigen::Index>(k));
    }
    std::size_t units = 0;
    for (std::size_t u = 0; u < count.size(); ++u) {
        if (count[u] == 0) continue;
        ++units;
        fit.unit_mean_y[u] /= count[u];
        fit.unit_mean_design.row(static_cast<Eigen::Index>(u)) /= count[u];
    }
    for (std::size_t k = 0; k < N; ++k) {
        const auto u = static_cast<Eigen::Index>(in.unit[k]);
        const auto kk = static_cast<Eigen::Index>(k);
        y(kk) -= fit.unit_mean_y[static_cast<std::size_t>(u)];
        X.row(kk) -= fit.unit_mean_design.row(u);
    }
    for (Eigen::Index j = 0; j < K; ++j) in.terms.push_back("c" + std::to_string(j));
    in.estimator = Estimator::within;
    in.X = std::move(X);
    in.y = std::move(y);
    in.absorbed = units;
    fit.equation = solve_equation(std::move(in));
    std::vector<int> kept(static_cast<std::size_t>(K), -1);
    for (std::size_t t = 0; t < fit.equation.terms.size(); ++t)
        kept[static_cast<std::size_t>(std::stoi(fit.equation.terms[t].substr(1)))] = static_cast<int>(t);
    for (std::size_t p = 0; p < period_column.size(); ++p)
        if (period_column[p] >= 0) fit.period_kept[p] = kept[static_cast<std::size_t>(period_column[p])];
    for (Eigen::Index j = 0; j < extra.cols(); ++j)
        fit.extra_kept.push_back(kept[static_cast<std::size_t>(n_period_columns + j)]);
    fit.design_kept = kept;
    fit.period_column = period_column;
    return fit;
}

std::vector<std::size_t> analysis_rows(const EventPanel& panel) {
    std::vector<std::size_t> rows;
    const PanelIndex& ix = panel.index();
    for (std::size_t r = 0; r < panel.timing.used.size(); ++r)
        if (panel.timing.used[r] && panel.in_analysis(static_cast<std::size_t>(ix.unit_of_row[r]))) rows.push_back(r);
    return rows;
}

namespace {

// Fill the controls into the last columns of `extra`.
void add_controls(const EventPanel& panel, const std::vector<std::size_t>& rows, Eigen::MatrixXd& extra) {
    const Eigen::Index first = extra.cols() - static_cast<Eigen::Index>(panel.n_controls);
    for (std::size_t k = 0; k < rows.size(); ++k)
        for (std::size_t j = 0; j < panel.n_controls; ++j)
            extra(static_cast<Eigen::Index>(k), first + static_cast<Eigen::Index>(j)) = panel.control(rows[k], j);
}

}  // namespace

Regression regress(const EventPanel& panel, const std::vector<std::size_t>& rows, Eigen::MatrixXd extra) {
    add_controls(panel, rows, extra);
    Regression out;
    out.fit = fit_two_way(panel, rows, extra);
    out.covariance = compute_covariance(out.fit.equation, Covariance::cluster);
    return out;
}

std::string staggered_warning(std::size_t n_cohorts) {
    return "adoption is staggered (" + std::to_string(n_cohorts) +
           " cohorts): the two-way regression compares later adopters with earlier ones and can weight "
           "some effects negatively (de Chaisemartin and D'Haultfoeuille 2020; Goodman-Bacon 2021); "
           "compare with group-time or imputation";
}

}  // namespace weft::event_detail

namespace weft {

EventResult estimate_event(const EventData& data, const EventDesign& design) {
    using namespace event_detail;
    const EventPanel panel = make_event_panel(data, design);
    EventResult out;
    switch (design.estimator) {
        case EventEstimator::imputation: out = estimate_imputation(panel, design); break;
        case EventEstimator::twfe: out = estimate_twfe(panel, design); break;
        default: out = estimate_group_time(panel, design); break;
    }
    out.design = design;
    out.rows_used = panel.timing.rows_used;
    out.rows_dropped = panel.timing.rows_dropped;
    out.units = panel.timing.units_never + panel.timing.units_treated;
    out.warnings.insert(out.warnings.begin(), panel.timing.warnings.begin(), panel.timing.warnings.end());
    return out;
}

}  // namespace weft
