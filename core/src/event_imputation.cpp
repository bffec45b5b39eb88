// The imputation estimator of Borusyak, Jaravel and Spiess (2024): unit and period
// effects (and controls) fitted on untreated observations (e < -anticipation and
// never-treated units), the untreated outcome imputed for every treated observation,
// effects averaged with equal weights by exact event time and by cohort; the overall
// average weights the cohort averages by cohort size (as group-time does), one of the
// weightings their Theorem 1 allows.
//
// Variance: their conservative clustered variance (Theorem 3): sum over units of
// (sum_t v_it e_it)^2, with v_it the weight of y_it in the estimate (w_it for treated
// observations, minus the imputation weights for untreated ones) and e_it the
// untreated residual, or for a treated observation tau_it minus the mean of tau within
// its cohort and period. Without a dense unit-indicator matrix the imputation weight of
// an untreated y_js is omega_j / T0_j + z_js' (Z'Z)^-1 c, with z the unit-demeaned
// period indicators and controls, omega_j the target weight of unit j's treated rows and
// c = sum over treated rows of w_it (z_it - mean of z over the unit's untreated rows).
// Pre-treatment: their test, an OLS on untreated observations with unit and period
// effects and indicators of e = -before .. -1-anticipation, CR1 by unit; its coefficients
// are shown in the event-time rows before adoption and tested jointly.
#include <algorithm>
#include <map>
#include <string>
#include <utility>
#include <vector>

#include <Eigen/Core>

#include "event_internal.hpp"

namespace weft::event_detail {

namespace {

struct Imputed {
    std::size_t row;
    std::size_t unit;
    int event;
    double tau;
    Eigen::VectorXd design_gap;  // design row minus the unit's untreated mean (design columns)
};

struct ImputationFit {
    Regression untreated;
    std::vector<std::size_t> untreated_rows;
    std::vector<Imputed> treated;
    std::size_t not_imputable = 0;
    Eigen::VectorXd gamma;       // per design column (0 where dropped or reference)
    std::vector<double> untreated_count;  // per unit
};

bool is_untreated(const EventPanel& panel, std::size_t row) {
    const auto u = static_cast<std::size_t>(panel.index().unit_of_row[row]);
    return panel.cohort(u) == kNeverTreated || panel.timing.event_time(row) < -panel.anticipation;
}

ImputationFit fit_untreated(const EventPanel& panel) {
    ImputationFit out;
    const PanelIndex& ix = panel.index();
    std::vector<std::size_t> treated_rows;
    for (std::size_t r : analysis_rows(panel)) (is_untreated(panel, r) ? out.untreated_rows : treated_rows).push_back(r);
    const auto n_controls = static_cast<Eigen::Index>(panel.n_controls);
    out.untreated = regress(panel, out.untreated_rows,
                            Eigen::MatrixXd::Zero(static_cast<Eigen::Index>(out.untreated_rows.size()), n_controls));
    const TwoWayFit& fit = out.untreated.fit;
    const auto D = static_cast<Eigen::Index>(fit.design_kept.size());
    out.gamma = Eigen::VectorXd::Zero(D);
    for (Eigen::Index j = 0; j < D; ++j)
        if (fit.design_kept[static_cast<std::size_t>(j)] >= 0)
            out.gamma(j) = fit.equation.coef(fit.design_kept[static_cast<std::size_t>(j)]);
    out.untreated_count.assign(panel.n_units(), 0.0);
    std::vector<std::uint8_t> period_present(panel.n_periods(), 0);
    for (std::size_t r : out.untreated_rows) {
        out.untreated_count[static_cast<std::size_t>(ix.unit_of_row[r])] += 1;
        period_present[static_cast<std::size_t>(ix.period_of_row[r])] = 1;
    }
    for (std::size_t r : treated_rows) {
        const auto u = static_cast<std::size_t>(ix.unit_of_row[r]);
        const auto p = static_cast<std::size_t>(ix.period_of_row[r]);
        const int column = fit.period_column[p];
        const bool period_ok = period_present[p] && (column < 0 || fit.design_kept[static_cast<std::size_t>(column)] >= 0);
        if (out.untreated_count[u] == 0 || !period_ok) { ++out.not_imputable; continue; }
        Eigen::VectorXd design = Eigen::VectorXd::Zero(D);
        if (column >= 0) design(column) = 1.0;
        for (Eigen::Index j = 0; j < n_controls; ++j)
            design(D - n_controls + j) = panel.control(r, static_cast<std::size_t>(j));
        Imputed obs{r, u, panel.timing.event_time(r), 0.0, design - fit.unit_mean_design.row(static_cast<Eigen::Index>(u)).transpose()};
        obs.tau = panel.y(r) - fit.unit_mean_y[u] - obs.design_gap.dot(out.gamma);
        out.treated.push_back(std::move(obs));
    }
    return out;
}

// Estimate and conservative variance of the weighted average of the treated observations
// (weights >= 0, normalised here to sum 1).
Effect average_effect(const EventPanel& panel, const ImputationFit& fit, std::vector<double> weight,
                      const std::vector<double>& residual_treated, double level) {
    const Equation& eq = fit.untreated.fit.equation;
    const std::vector<int>& kept = fit.untreated.fit.design_kept;
    double total = 0;
    for (double w : weight) total += w;
    if (total == 0) return Effect{};
    for (double& w : weight) w /= total;
    Eigen::VectorXd psi = Eigen::VectorXd::Zero(static_cast<Eigen::Index>(panel.n_units()));
    std::vector<double> omega(panel.n_units(), 0.0);
    Eigen::VectorXd c = Eigen::VectorXd::Zero(static_cast<Eigen::Index>(eq.terms.size()));
    double estimate = 0;
    std::vector<std::uint8_t> unit_seen(panel.n_units(), 0);
    for (std::size_t k = 0; k < fit.treated.size(); ++k) {
        if (weight[k] == 0) continue;
        const double w = weight[k];
        const Imputed& obs = fit.treated[k];
        estimate += w * obs.tau;
        omega[obs.unit] += w;
        unit_seen[obs.unit] = 1;
        psi(static_cast<Eigen::Index>(obs.unit)) += w * residual_treated[k];
        for (std::size_t j = 0; j < kept.size(); ++j)
            if (kept[j] >= 0) c(kept[j]) += w * obs.design_gap(static_cast<Eigen::Index>(j));
    }
    const Eigen::VectorXd direction = eq.xtx_inverse * c;
    for (Eigen::Index k = 0; k < eq.X.rows(); ++k) {
        const auto u = static_cast<std::size_t>(eq.unit[static_cast<std::size_t>(k)]);
        const double v = -(omega[u] / fit.untreated_count[u] + eq.X.row(k).dot(direction));
        psi(static_cast<Eigen::Index>(u)) += v * eq.residual(k);
    }
    std::size_t units = 0;
    for (std::uint8_t s : unit_seen) units += s;
    return infer(estimate, psi.squaredNorm(), kNormal, level, units);
}

// tau_it minus the mean of tau over treated observations of its cohort and period.
std::vector<double> treated_residuals(const EventPanel& panel, const ImputationFit& fit) {
    std::map<std::pair<std::int32_t, std::int32_t>, std::pair<double, double>> cell;  // sum, count
    auto key = [&](const Imputed& obs) {
        return std::make_pair(panel.cohort(obs.unit), panel.index().period_of_row[obs.row]);
    };
    for (const Imputed& obs : fit.treated) {
        auto& s = cell[key(obs)];
        s.first += obs.tau;
        s.second += 1;
    }
    std::vector<double> out;
    for (const Imputed& obs : fit.treated) {
        const auto& s = cell[key(obs)];
        out.push_back(obs.tau - s.first / s.second);
    }
    return out;
}

// Their pre-trend test: untreated observations on unit and period effects, controls and
// indicators of the pre-treatment event times in the window.
void pre_trend(const EventPanel& panel, const ImputationFit& fit, const EventDesign& design, EventResult& out) {
    const int first = -panel.before, last = -1 - panel.anticipation;
    const int width = std::max(0, last - first + 1);
    const std::vector<std::size_t>& rows = fit.untreated_rows;
    Eigen::MatrixXd extra = Eigen::MatrixXd::Zero(static_cast<Eigen::Index>(rows.size()),
                                                  width + static_cast<Eigen::Index>(panel.n_controls));
    std::vector<std::vector<std::uint8_t>> units_at(static_cast<std::size_t>(width), std::vector<std::uint8_t>(panel.n_units(), 0));
    for (std::size_t k = 0; k < rows.size(); ++k) {
        const auto u = static_cast<std::size_t>(panel.index().unit_of_row[rows[k]]);
        if (panel.cohort(u) < 0) continue;
        const int e = panel.timing.event_time(rows[k]);
        if (e < first || e > last) continue;
        extra(static_cast<Eigen::Index>(k), e - first) = 1.0;
        units_at[static_cast<std::size_t>(e - first)][u] = 1;
    }
    std::vector<int> tested;
    if (width > 0) {
        const Regression reg = regress(panel, rows, extra);
        for (int e = first; e <= last; ++e) {
            const int column = e - first;
            EventTimeEffect& row = out.event_times[static_cast<std::size_t>(e + panel.before)];
            std::size_t units = 0;
            for (std::uint8_t v : units_at[static_cast<std::size_t>(column)]) units += v;
            row.effect.treated_units = units;
            if (units == 0 || !reg.kept(column)) continue;
            row.effect = infer(reg.coef(column), reg.variance(column), kNormal, design.level, units);
            tested.push_back(reg.fit.extra_kept[static_cast<std::size_t>(column)]);
        }
        Eigen::VectorXd b(static_cast<Eigen::Index>(tested.size()));
        Eigen::MatrixXd V(b.size(), b.size());
        for (Eigen::Index a = 0; a < b.size(); ++a) {
            b(a) = reg.fit.equation.coef(tested[static_cast<std::size_t>(a)]);
            for (Eigen::Index c = 0; c < b.size(); ++c)
                V(a, c) = reg.covariance.matrix(tested[static_cast<std::size_t>(a)], tested[static_cast<std::size_t>(c)]);
        }
        out.pre_test = wald_pre_test(b, V, "no pre-treatment event time can be estimated in the window");
    } else {
        out.pre_test = wald_pre_test(Eigen::VectorXd(), Eigen::MatrixXd(), "the window has no pre-treatment event time");
    }
}

double cohort_units(const EventPanel& panel, std::int32_t g) {
    double n = 0;
    for (std::size_t u = 0; u < panel.n_units(); ++u) n += panel.cohort(u) == g ? 1 : 0;
    return n;
}

}  // namespace

EventResult estimate_imputation(const EventPanel& panel, const EventDesign& design) {
    EventResult out;
    const ImputationFit fit = fit_untreated(panel);
    const std::vector<double> residual_treated = treated_residuals(panel, fit);
    const std::size_t T = fit.treated.size();
    auto select = [&](auto keep) {
        std::vector<double> s(T, 0.0);
        for (std::size_t k = 0; k < T; ++k) s[k] = keep(fit.treated[k]) ? 1.0 : 0.0;
        return s;
    };
    for (int e = -panel.before; e <= panel.after; ++e) {
        EventTimeEffect row;
        row.event_time = e;
        if (e >= -panel.anticipation)
            row.effect = average_effect(panel, fit, select([e](const Imputed& o) { return o.event == e; }),
                                        residual_treated, design.level);
        out.event_times.push_back(row);
    }
    pre_trend(panel, fit, design, out);
    for (std::int32_t g : panel.timing.cohorts) {
        CohortEffect ce;
        ce.cohort_period = panel.index().grid[static_cast<std::size_t>(g)];
        ce.effect = average_effect(panel, fit, select([&](const Imputed& o) { return o.event >= 0 && panel.cohort(o.unit) == g; }),
                                   residual_treated, design.level);
        out.cohorts.push_back(ce);
    }
    // overall: the cohort averages weighted by cohort size (the same target as group-time's
    // overall average), i.e. weight n_g / (rows of cohort g after adoption) per row
    std::vector<double> overall = select([](const Imputed& o) { return o.event >= 0; });
    std::map<std::int32_t, double> rows_of;
    for (std::size_t k = 0; k < T; ++k) rows_of[panel.cohort(fit.treated[k].unit)] += overall[k];
    for (std::size_t k = 0; k < T; ++k) {
        const std::int32_t g = panel.cohort(fit.treated[k].unit);
        if (overall[k] > 0) overall[k] = cohort_units(panel, g) / rows_of[g];
    }
    out.overall = average_effect(panel, fit, overall, residual_treated, design.level);
    if (fit.not_imputable > 0)
        out.warnings.push_back(std::to_string(fit.not_imputable) +
                               " treated rows have no untreated outcome to impute from (their period or unit has no "
                               "untreated row): left out of the averages");
    out.treated_units = panel.timing.units_treated;
    out.comparison_units = panel.timing.units_never;
    out.df = 0;
    out.inference = "normal; conservative variance clustered by unit";
    return out;
}

}  // namespace weft::event_detail
