// The conventional two-way fixed-effects event-study regression, for comparison: the
// outcome on unit effects, period effects and event-time indicators binned at the window
// ends (reference e = -1 - anticipation), CR1 by unit with the absorbed unit effects not
// counted in K. The overall and per-cohort rows come from the static two-way regressions
// on a post-adoption indicator (one, or one per cohort), with anticipation periods given
// their own indicator so they do not serve as untreated periods.
#include <algorithm>
#include <string>
#include <vector>

#include <Eigen/Core>

#include "event_internal.hpp"

namespace weft::event_detail {

namespace {

// Static regressions: overall (one post indicator) and per cohort.
void static_effects(const EventPanel& panel, const std::vector<std::size_t>& rows, const EventDesign& design,
                    EventResult& out) {
    const PanelIndex& ix = panel.index();
    const auto N = static_cast<Eigen::Index>(rows.size());
    const auto C = static_cast<Eigen::Index>(panel.timing.cohorts.size());
    const Eigen::Index controls = static_cast<Eigen::Index>(panel.n_controls);
    const bool anticipation = panel.anticipation > 0;
    Eigen::MatrixXd pooled = Eigen::MatrixXd::Zero(N, 1 + (anticipation ? 1 : 0) + controls);
    Eigen::MatrixXd by_cohort = Eigen::MatrixXd::Zero(N, C + (anticipation ? 1 : 0) + controls);
    for (Eigen::Index k = 0; k < N; ++k) {
        const std::size_t r = rows[static_cast<std::size_t>(k)];
        const std::int32_t c = panel.cohort(static_cast<std::size_t>(ix.unit_of_row[r]));
        if (c < 0) continue;
        const int e = panel.timing.event_time(r);
        if (e >= 0) {
            pooled(k, 0) = 1;
            const auto at = std::find(panel.timing.cohorts.begin(), panel.timing.cohorts.end(), c);
            by_cohort(k, at - panel.timing.cohorts.begin()) = 1;
        } else if (e >= -panel.anticipation) {
            pooled(k, 1) = 1;
            by_cohort(k, C) = 1;
        }
    }
    const Regression all = regress(panel, rows, pooled);
    const double df = all.covariance.df;
    if (all.kept(0)) out.overall = infer(all.coef(0), all.variance(0), df, design.level, panel.timing.units_treated);
    const Regression each = regress(panel, rows, by_cohort);
    for (Eigen::Index g = 0; g < C; ++g) {
        const std::int32_t cohort = panel.timing.cohorts[static_cast<std::size_t>(g)];
        CohortEffect ce;
        ce.cohort_period = ix.grid[static_cast<std::size_t>(cohort)];
        std::size_t units = 0;
        for (std::size_t u = 0; u < panel.n_units(); ++u) units += panel.cohort(u) == cohort ? 1 : 0;
        const int column = static_cast<int>(g);
        if (each.kept(column)) ce.effect = infer(each.coef(column), each.variance(column), df, design.level, units);
        else ce.effect.treated_units = units;
        out.cohorts.push_back(ce);
    }
}

}  // namespace

EventResult estimate_twfe(const EventPanel& panel, const EventDesign& design) {
    EventResult out;
    const PanelIndex& ix = panel.index();
    const std::vector<std::size_t> rows = analysis_rows(panel);
    const int reference = -1 - panel.anticipation;
    const int width = panel.before + panel.after + 1;
    auto column_of = [&](int e) {  // event time -> indicator column (binned), -1 reference
        const int binned = std::clamp(e, -panel.before, panel.after);
        if (binned == reference) return -1;
        const int position = binned + panel.before;
        return position > reference + panel.before ? position - 1 : position;
    };
    const auto N = static_cast<Eigen::Index>(rows.size());
    Eigen::MatrixXd extra = Eigen::MatrixXd::Zero(N, width - 1 + static_cast<Eigen::Index>(panel.n_controls));
    std::vector<std::vector<std::uint8_t>> units_at(static_cast<std::size_t>(width),
                                                    std::vector<std::uint8_t>(panel.n_units(), 0));
    for (Eigen::Index k = 0; k < N; ++k) {
        const std::size_t r = rows[static_cast<std::size_t>(k)];
        const auto u = static_cast<std::size_t>(ix.unit_of_row[r]);
        if (panel.cohort(u) < 0) continue;
        const int e = panel.timing.event_time(r);
        units_at[static_cast<std::size_t>(std::clamp(e, -panel.before, panel.after) + panel.before)][u] = 1;
        const int column = column_of(e);
        if (column >= 0) extra(k, column) = 1;
    }
    const Regression fit = regress(panel, rows, extra);
    out.df = fit.covariance.df;
    out.inference = "t with G-1 = " + format_number(out.df) + " df; cluster by unit (CR1), unit effects not counted";
    std::vector<int> pre_columns;
    for (int e = -panel.before; e <= panel.after; ++e) {
        EventTimeEffect row;
        row.event_time = e;
        std::size_t units = 0;
        for (std::uint8_t v : units_at[static_cast<std::size_t>(e + panel.before)]) units += v;
        const int column = column_of(e);
        row.effect.treated_units = units;
        if (column < 0) {
            row.reference = true;
        } else if (fit.kept(column)) {
            row.effect = infer(fit.coef(column), fit.variance(column), out.df, design.level, units);
            if (e < -panel.anticipation) pre_columns.push_back(fit.fit.extra_kept[static_cast<std::size_t>(column)]);
        }
        out.event_times.push_back(row);
    }
    Eigen::VectorXd b(static_cast<Eigen::Index>(pre_columns.size()));
    Eigen::MatrixXd V(b.size(), b.size());
    for (Eigen::Index a = 0; a < b.size(); ++a) {
        b(a) = fit.fit.equation.coef(pre_columns[static_cast<std::size_t>(a)]);
        for (Eigen::Index c = 0; c < b.size(); ++c)
            V(a, c) = fit.covariance.matrix(pre_columns[static_cast<std::size_t>(a)], pre_columns[static_cast<std::size_t>(c)]);
    }
    out.pre_test = wald_pre_test(b, V, "no pre-treatment event time besides the reference lies in the window");
    static_effects(panel, rows, design, out);
    out.treated_units = panel.timing.units_treated;
    out.comparison_units = panel.timing.units_never;
    if (panel.timing.cohorts.size() > 1) out.warnings.push_back(staggered_warning(panel.timing.cohorts.size()));
    return out;
}

}  // namespace weft::event_detail
