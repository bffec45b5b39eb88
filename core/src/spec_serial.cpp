// Serial correlation of the residuals within units, on the period grid
// (CONVENTIONS.md "Tests", serial; Wooldridge 2010 sections 10.5.4 and 10.6.3).
#include <algorithm>
#include <cmath>
#include <numeric>
#include <string>
#include <vector>

#include "weft/distributions.hpp"
#include "weft/error.hpp"
#include "internal.hpp"
#include "weft/panel.hpp"
#include "weft/spec.hpp"

namespace weft {

SerialResult serial_test(const Equation& equation) {
    detail::require_rows(equation, "the serial-correlation test");
    detail::refuse_weighted(equation, "serial test",
                            "its auxiliary regression has no agreed weighted form; the weighted fit's cluster or "
                            "dk standard errors already allow for serial correlation");
    if (equation.estimator == Estimator::between)
        throw Error("serial test: between has one row per unit, so there is no residual of "
                    "an earlier period to compare with; use pooled, fd or within");
    const std::size_t n = equation.nobs();
    if (equation.unit.size() != n || equation.period.size() != n)
        throw Error("serial test: the estimated equation carries no unit and period of its "
                    "rows; fit the model from a panel");

    // Rows sorted by (unit, grid period); a pair is two rows of one unit on adjacent grid
    // periods, so a gap never makes a pair.
    std::vector<std::size_t> order(n);
    std::iota(order.begin(), order.end(), std::size_t{0});
    std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
        if (equation.unit[a] != equation.unit[b]) return equation.unit[a] < equation.unit[b];
        return equation.period[a] < equation.period[b];
    });
    std::vector<std::size_t> current, previous;
    for (std::size_t k = 1; k < n; ++k) {
        const std::size_t a = order[k - 1], b = order[k];
        if (equation.unit[a] == equation.unit[b] && equation.period[a] >= 0 &&
            equation.period[b] == equation.period[a] + 1) {
            previous.push_back(a);
            current.push_back(b);
        }
    }
    const std::size_t pairs = current.size();
    if (pairs == 0)
        throw Error("serial test: no unit has residuals in two adjacent periods (each unit "
                    "has one period in the estimated equation, or only periods separated by "
                    "gaps); the test needs at least two consecutive periods per unit");
    std::vector<std::int32_t> pair_units;
    pair_units.reserve(pairs);
    for (auto b : current) pair_units.push_back(equation.unit[b]);
    std::vector<std::int32_t> distinct = pair_units;
    std::sort(distinct.begin(), distinct.end());
    distinct.erase(std::unique(distinct.begin(), distinct.end()), distinct.end());
    if (pairs < 3 || distinct.size() < 2)
        throw Error("serial test: only " + std::to_string(pairs) + " pair(s) of adjacent "
                    "residuals in " + std::to_string(distinct.size()) + " unit(s); the test "
                    "needs at least 3 pairs in at least 2 units");

    EquationInput aux;
    aux.estimator = equation.estimator;
    const auto np = static_cast<Eigen::Index>(pairs);
    aux.X.resize(np, 2);
    aux.y.resize(np);
    for (Eigen::Index i = 0; i < np; ++i) {
        aux.X(i, 0) = 1.0;
        aux.X(i, 1) = equation.residual(static_cast<Eigen::Index>(previous[static_cast<std::size_t>(i)]));
        aux.y(i) = equation.residual(static_cast<Eigen::Index>(current[static_cast<std::size_t>(i)]));
    }
    aux.terms = {"intercept", "lagged residual"};
    aux.intercept_column = 0;
    aux.unit = pair_units;
    aux.period.reserve(pairs);
    aux.input_row.reserve(pairs);
    for (auto b : current) {
        aux.period.push_back(equation.period[b]);
        aux.input_row.push_back(b < equation.input_row.size() ? equation.input_row[b] : b);
    }
    const Equation ar = solve_equation(std::move(aux));
    if (ar.n_terms() != 2)
        throw Error("serial test: the lagged residuals do not vary, so their slope cannot be "
                    "estimated");

    const CovarianceResult classical = compute_covariance(ar, Covariance::classical);
    SerialResult r;
    r.intercept = ar.coef(0);
    r.slope = ar.coef(1);
    r.se = std::sqrt(classical.matrix(1, 1));
    if (!(r.se > 0))
        throw Error("serial test: the residuals follow their own lag exactly, so the slope "
                    "has no standard error (a perfect fit); there is nothing to test");
    r.t = r.slope / r.se;
    r.df = classical.df;
    r.p = t_two_sided_p(r.t, r.df);
    r.pairs = pairs;
    r.units = distinct.size();

    if (equation.estimator == Estimator::fd || equation.estimator == Estimator::within) {
        LevelErrorTest level;
        if (equation.estimator == Estimator::fd) {
            // Differences of serially uncorrelated errors have correlation -1/2.
            level.null_value = -0.5;
            level.rule = "fd: slope -0.5";
        } else {
            // Demeaning over T periods gives the errors correlation -1/(T-1).
            const double periods = static_cast<double>(equation.n_periods);
            level.null_value = -1.0 / (periods - 1.0);
            level.rule = "within: slope -1/(T-1), T = " + std::to_string(equation.n_periods);
        }
        const CovarianceResult cr1 = compute_covariance(ar, Covariance::cluster);
        const CovarianceResult cr0 = compute_covariance(ar, Covariance::cluster0);
        level.se = std::sqrt(cr1.matrix(1, 1));
        level.se_cluster0 = std::sqrt(cr0.matrix(1, 1));
        const double z = (r.slope - level.null_value) / level.se;
        level.f = z * z;
        level.f_df1 = 1;
        level.f_df2 = cr1.df;
        level.f_p = f_upper(level.f, 1.0, level.f_df2);
        r.level = level;
    }
    return r;
}

SerialResult serial_test(const Fit& fit) {
    return serial_test(fit.equation);
}

}  // namespace weft
