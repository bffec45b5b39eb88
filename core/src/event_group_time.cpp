// Group-time average effects (Callaway and Sant'Anna 2021) with the outcome regression
// of Sant'Anna and Zhao (2020) for controls; aggregation to event time, cohorts and
// overall with the influence function of the estimated cohort-share weights.
//
// Influence functions are kept on the "sum" scale: psi_i with estimate - truth ~ sum_i
// psi_i over units, so the variance clustered by unit is sum_i psi_i^2 (no G/(G-1)
// factor, as in the paper). For a cell without controls psi is (dY_i - mean_T)/n_T for a
// treated unit and -(dY_j - mean_C)/n_C for a comparison unit.
#include <algorithm>
#include <cmath>
#include <map>
#include <string>
#include <utility>
#include <vector>

#include <Eigen/Dense>

#include "event_internal.hpp"
#include "weft/error.hpp"

namespace weft::event_detail {

namespace {

using Psi = std::vector<std::pair<std::size_t, double>>;  // (unit, psi), sparse

struct Cell {
    std::int32_t cohort = 0;   // grid position g
    std::int32_t period = 0;   // grid position t
    double att = 0;
    Psi psi;
    std::size_t treated = 0;
};

// The base period of cell (g, t): g - 1 - K once anticipation may start, else t - 1.
std::int32_t base_period(std::int32_t g, std::int32_t t, int K) {
    return t >= g - K ? g - 1 - K : t - 1;
}

bool is_comparison(const EventPanel& panel, std::size_t unit, std::int32_t g, std::int32_t t, std::int32_t base,
                   Comparison comparison) {
    const std::int32_t c = panel.cohort(unit);
    if (c == kNeverTreated) return true;
    if (comparison == Comparison::never || c == kTreatedFromStart || c == g) return false;
    return c > std::max(t, base) + panel.anticipation;
}

// ATT(g, t) by outcome regression of the changes on [1, controls at the base period]
// among comparison units (Sant'Anna and Zhao 2020, their panel estimator).
bool estimate_cell(const EventPanel& panel, Comparison comparison, Cell& cell, std::vector<std::uint8_t>& used_as_comparison) {
    const std::int32_t g = cell.cohort, t = cell.period;
    const std::int32_t base = base_period(g, t, panel.anticipation);
    if (base < 0) return false;
    const auto p = static_cast<Eigen::Index>(panel.n_controls + 1);
    std::vector<std::size_t> treated, control;
    for (std::size_t u = 0; u < panel.n_units(); ++u) {
        if (panel.row_at(u, t) < 0 || panel.row_at(u, base) < 0) continue;
        if (panel.cohort(u) == g) treated.push_back(u);
        else if (is_comparison(panel, u, g, t, base, comparison)) control.push_back(u);
    }
    if (treated.empty() || control.empty()) return false;
    auto change = [&](std::size_t u) {
        return panel.y(static_cast<std::size_t>(panel.row_at(u, t))) - panel.y(static_cast<std::size_t>(panel.row_at(u, base)));
    };
    auto covariates = [&](std::size_t u) {
        Eigen::VectorXd x(p);
        x(0) = 1.0;
        const auto r = static_cast<std::size_t>(panel.row_at(u, base));
        for (Eigen::Index j = 1; j < p; ++j) x(j) = panel.control(r, static_cast<std::size_t>(j - 1));
        return x;
    };
    EquationInput in;
    in.X.resize(static_cast<Eigen::Index>(control.size()), p);
    in.y.resize(static_cast<Eigen::Index>(control.size()));
    in.intercept_column = 0;
    for (std::size_t k = 0; k < control.size(); ++k) {
        in.X.row(static_cast<Eigen::Index>(k)) = covariates(control[k]).transpose();
        in.y(static_cast<Eigen::Index>(k)) = change(control[k]);
    }
    in.terms.push_back("c0");
    for (Eigen::Index j = 1; j < p; ++j) in.terms.push_back("c" + std::to_string(j));
    Equation eq;
    try {
        eq = solve_equation(std::move(in));
    } catch (const Error&) {
        return false;  // fewer comparison units than controls + 1
    }
    // coefficients and (X_C'X_C)^-1 on the full column set (dropped columns: 0)
    std::vector<Eigen::Index> kept;
    for (const std::string& name : eq.terms) kept.push_back(std::stoi(name.substr(1)));
    Eigen::VectorXd beta = Eigen::VectorXd::Zero(p);
    for (std::size_t k = 0; k < kept.size(); ++k) beta(kept[k]) = eq.coef(static_cast<Eigen::Index>(k));
    Eigen::MatrixXd xtx_inv = Eigen::MatrixXd::Zero(p, p);
    for (std::size_t a = 0; a < kept.size(); ++a)
        for (std::size_t b = 0; b < kept.size(); ++b)
            xtx_inv(kept[a], kept[b]) = eq.xtx_inverse(static_cast<Eigen::Index>(a), static_cast<Eigen::Index>(b));

    const double n_t = static_cast<double>(treated.size());
    Eigen::VectorXd sum_x_treated = Eigen::VectorXd::Zero(p);
    long double att = 0;
    std::vector<double> gap(treated.size());
    for (std::size_t k = 0; k < treated.size(); ++k) {
        const Eigen::VectorXd x = covariates(treated[k]);
        sum_x_treated += x;
        gap[k] = change(treated[k]) - x.dot(beta);
        att += gap[k];
    }
    cell.att = static_cast<double>(att / n_t);
    cell.treated = treated.size();
    cell.psi.clear();
    for (std::size_t k = 0; k < treated.size(); ++k) cell.psi.emplace_back(treated[k], (gap[k] - cell.att) / n_t);
    const Eigen::VectorXd direction = xtx_inv * sum_x_treated / n_t;
    for (std::size_t k = 0; k < control.size(); ++k) {
        const Eigen::VectorXd x = covariates(control[k]);
        const double residual = change(control[k]) - x.dot(beta);
        cell.psi.emplace_back(control[k], -residual * x.dot(direction));
        used_as_comparison[control[k]] = 1;
    }
    return true;
}

// A weighted average of cells (or of cohort averages) with cohort-share weights
// pg = n_g / n, including the influence of the estimated weights (Callaway and
// Sant'Anna 2021, their aggregation; the weight term reduces to
// (1/S) sum_k (1[G_i = g_k] - pg_k)(att_k - theta) / n).
struct Part {
    std::int32_t cohort;
    double att;
    Eigen::VectorXd psi;  // dense over units
};

std::pair<double, Eigen::VectorXd> share_weighted(const EventPanel& panel, const std::vector<Part>& parts,
                                                  const std::vector<double>& cohort_size, double n) {
    double S = 0, theta = 0;
    for (const Part& part : parts) S += cohort_size[static_cast<std::size_t>(part.cohort)] / n;
    for (const Part& part : parts) theta += cohort_size[static_cast<std::size_t>(part.cohort)] / n / S * part.att;
    Eigen::VectorXd psi = Eigen::VectorXd::Zero(static_cast<Eigen::Index>(panel.n_units()));
    for (const Part& part : parts) psi += cohort_size[static_cast<std::size_t>(part.cohort)] / n / S * part.psi;
    for (std::size_t u = 0; u < panel.n_units(); ++u) {
        if (!panel.in_analysis(u)) continue;
        double w = 0;
        for (const Part& part : parts) {
            const double pg = cohort_size[static_cast<std::size_t>(part.cohort)] / n;
            w += ((panel.cohort(u) == part.cohort ? 1.0 : 0.0) - pg) * (part.att - theta);
        }
        psi(static_cast<Eigen::Index>(u)) += w / S / n;
    }
    return {theta, psi};
}

Eigen::VectorXd dense(const EventPanel& panel, const Psi& psi) {
    Eigen::VectorXd out = Eigen::VectorXd::Zero(static_cast<Eigen::Index>(panel.n_units()));
    for (const auto& [u, v] : psi) out(static_cast<Eigen::Index>(u)) += v;
    return out;
}

}  // namespace

EventResult estimate_group_time(const EventPanel& panel, const EventDesign& design) {
    EventResult out;
    const TreatmentTiming& timing = panel.timing;
    const double n = static_cast<double>(timing.units_never + timing.units_treated);
    std::vector<double> cohort_size(panel.n_periods(), 0.0);
    for (std::size_t u = 0; u < panel.n_units(); ++u)
        if (panel.cohort(u) >= 0) cohort_size[static_cast<std::size_t>(panel.cohort(u))] += 1;

    std::vector<std::uint8_t> used_as_comparison(panel.n_units(), 0);
    std::vector<Cell> cells;
    std::vector<std::int32_t> cohorts_without_base;
    for (std::int32_t g : timing.cohorts) {
        if (g - 1 - panel.anticipation < 0) { cohorts_without_base.push_back(g); continue; }
        for (std::int32_t t = 0; t < static_cast<std::int32_t>(panel.n_periods()); ++t) {
            Cell cell;
            cell.cohort = g;
            cell.period = t;
            if (estimate_cell(panel, design.comparison, cell, used_as_comparison)) cells.push_back(std::move(cell));
        }
    }
    for (std::int32_t g : cohorts_without_base)
        out.warnings.push_back("cohort " + format_number(panel.index().grid[static_cast<std::size_t>(g)]) +
                               " has no untreated base period " +
                               (panel.anticipation > 0 ? "before its anticipation periods" : "before adoption") +
                               ": left out");
    // event-time aggregation
    std::vector<Eigen::VectorXd> pre_psi;
    std::vector<double> pre_estimate;
    for (int e = -panel.before; e <= panel.after; ++e) {
        std::vector<Part> parts;
        std::size_t treated = 0;
        for (const Cell& cell : cells)
            if (cell.period - cell.cohort == e) {
                parts.push_back({cell.cohort, cell.att, dense(panel, cell.psi)});
                treated += cell.treated;
            }
        EventTimeEffect row;
        row.event_time = e;
        if (!parts.empty()) {
            const auto [theta, psi] = share_weighted(panel, parts, cohort_size, n);
            row.effect = infer(theta, psi.squaredNorm(), kNormal, design.level, treated);
            if (e < -panel.anticipation) {
                pre_psi.push_back(psi);
                pre_estimate.push_back(theta);
            }
        }
        out.event_times.push_back(row);
    }
    // cohort averages over post-treatment cells (e >= 0), then the overall average
    std::vector<Part> cohort_parts;
    for (std::int32_t g : timing.cohorts) {
        Part part{g, 0, Eigen::VectorXd::Zero(static_cast<Eigen::Index>(panel.n_units()))};
        double count = 0;
        for (const Cell& cell : cells)
            if (cell.cohort == g && cell.period >= g) {
                part.att += cell.att;
                part.psi += dense(panel, cell.psi);
                count += 1;
            }
        CohortEffect ce;
        ce.cohort_period = panel.index().grid[static_cast<std::size_t>(g)];
        if (count > 0) {
            part.att /= count;
            part.psi /= count;
            ce.effect = infer(part.att, part.psi.squaredNorm(), kNormal, design.level,
                              static_cast<std::size_t>(cohort_size[static_cast<std::size_t>(g)]));
            cohort_parts.push_back(part);
        }
        out.cohorts.push_back(ce);
    }
    if (!cohort_parts.empty()) {
        const auto [theta, psi] = share_weighted(panel, cohort_parts, cohort_size, n);
        std::size_t treated = 0;
        for (const Part& part : cohort_parts) treated += static_cast<std::size_t>(cohort_size[static_cast<std::size_t>(part.cohort)]);
        out.overall = infer(theta, psi.squaredNorm(), kNormal, design.level, treated);
    }
    Eigen::VectorXd b(static_cast<Eigen::Index>(pre_estimate.size()));
    Eigen::MatrixXd psi_matrix(static_cast<Eigen::Index>(panel.n_units()), b.size());
    for (Eigen::Index k = 0; k < b.size(); ++k) {
        b(k) = pre_estimate[static_cast<std::size_t>(k)];
        psi_matrix.col(k) = pre_psi[static_cast<std::size_t>(k)];
    }
    out.pre_test = wald_pre_test(b, psi_matrix.transpose() * psi_matrix,
                                 "no pre-treatment effect can be estimated in the window");
    for (std::int32_t c : timing.cohort_of_unit) out.treated_units += c >= 0 ? 1 : 0;
    for (std::uint8_t c : used_as_comparison) out.comparison_units += c;
    out.df = 0;
    out.inference = "normal; influence functions clustered by unit";
    return out;
}

}  // namespace weft::event_detail
