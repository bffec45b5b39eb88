// Pieces shared by the event-study estimators (not installed).
#pragma once

#include <cstddef>
#include <cstdint>
#include <limits>
#include <string>
#include <vector>

#include <Eigen/Core>

#include "weft/event.hpp"
#include "weft/model.hpp"

namespace weft::event_detail {

inline constexpr double kNormal = std::numeric_limits<double>::infinity();

// Everything an estimator reads: the timing, the outcome and controls by input row, the
// input row of each (unit, grid period) cell, and the window.
struct EventPanel {
    const EventData* data = nullptr;
    TreatmentTiming timing;
    std::vector<std::int64_t> cell;   // n_units * n_periods, input row or -1
    int before = 0, after = 0;        // resolved window
    int anticipation = 0;
    std::size_t n_controls = 0;

    const PanelIndex& index() const { return timing.index; }
    std::size_t n_units() const { return timing.index.n_units(); }
    std::size_t n_periods() const { return timing.index.n_periods(); }
    std::int64_t row_at(std::size_t unit, std::int64_t period) const {
        if (period < 0 || period >= static_cast<std::int64_t>(n_periods())) return -1;
        return cell[unit * n_periods() + static_cast<std::size_t>(period)];
    }
    double y(std::size_t row) const { return data->outcome.value(row); }
    double control(std::size_t row, std::size_t j) const { return data->controls[j].value(row); }
    std::int32_t cohort(std::size_t unit) const { return timing.cohort_of_unit[unit]; }
    // Units in the analysis: all but those treated from their first observed period.
    bool in_analysis(std::size_t unit) const { return cohort(unit) != kTreatedFromStart; }
};

EventPanel make_event_panel(const EventData& data, const EventDesign& design);

// Estimate, standard error -> t, p, interval at `level` (df kNormal: standard normal).
Effect infer(double estimate, double variance, double df, double level, std::size_t treated_units);

// Wald chi-square that every entry of b is zero under V; not available when b is empty
// or V is singular in a tested direction.
PreTest wald_pre_test(const Eigen::VectorXd& b, const Eigen::MatrixXd& V, const std::string& none_reason);

// OLS with unit and period effects over `rows` (input rows): y on period indicators
// (the first period present omitted) and the extra columns, all demeaned by unit (exact
// for unbalanced panels), solved by solve_equation with the unit effects absorbed.
// extra_kept[j] is the position of extra column j in the equation's terms, or -1 when it
// was dropped as collinear.
struct TwoWayFit {
    Equation equation;
    std::vector<int> extra_kept;
    std::vector<int> design_kept;     // per design column (periods, then extra): term or -1
    std::vector<int> period_kept;     // per grid period: its term, or -1 (omitted/dropped)
    std::vector<int> period_column;   // per grid period: its design column, or -1 (reference/absent)
    std::vector<double> unit_mean_y;  // per unit number: mean of y over the rows
    Eigen::MatrixXd unit_mean_design; // per unit number: means of the design columns
};
TwoWayFit fit_two_way(const EventPanel& panel, const std::vector<std::size_t>& rows,
                      const Eigen::MatrixXd& extra);

// The rows of units in the analysis (all used rows but those of units treated from
// their first observed period).
std::vector<std::size_t> analysis_rows(const EventPanel& panel);

// fit_two_way with the controls filled into the last n_controls columns of `extra`,
// and its CR1 covariance by unit (unit effects not counted in K).
struct Regression {
    TwoWayFit fit;
    CovarianceResult covariance;
    double coef(int column) const { return fit.equation.coef(fit.extra_kept[static_cast<std::size_t>(column)]); }
    double variance(int column) const {
        const int k = fit.extra_kept[static_cast<std::size_t>(column)];
        return covariance.matrix(k, k);
    }
    bool kept(int column) const { return fit.extra_kept[static_cast<std::size_t>(column)] >= 0; }
};
Regression regress(const EventPanel& panel, const std::vector<std::size_t>& rows, Eigen::MatrixXd extra);

std::string staggered_warning(std::size_t n_cohorts);

EventResult estimate_group_time(const EventPanel& panel, const EventDesign& design);
EventResult estimate_imputation(const EventPanel& panel, const EventDesign& design);
EventResult estimate_twfe(const EventPanel& panel, const EventDesign& design);

}  // namespace weft::event_detail
