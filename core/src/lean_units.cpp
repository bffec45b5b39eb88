// The streaming route's unit sums (fit_stages.hpp): within and between without an
// N x K design. One pass over the used rows, in input order whatever the sheet's order,
// sums [X, y] per unit; from the unit means
//  - within: lean_equation (lean.cpp) takes each row's unit mean off as it reads the
//    row, so the demeaned cross-products are accumulated in blocks like pooled's, and
//    the level statistics (corr2_rows, corr2_means, the unit effects) follow
//    from the unit means and the within sums (lean_level_statistics);
//  - between: the regression of the unit means is the full route's own (one row per
//    unit, a small design), formed here from the same sums (between_from_means).
// The sums are long double in row order, so that on input sorted by unit and period
// the means are the full route's (fit_equations.cpp run_means) bit for bit.
#include <algorithm>
#include <cmath>
#include <limits>

#include "weft/buffer.hpp"
#include "fit_stages.hpp"

namespace weft::detail {

using Eigen::Index;
using Eigen::MatrixXd;
using Eigen::VectorXd;

namespace {

// Input rows per block of the sums pass: the block's used rows are listed once, then
// each column is read over them.
constexpr std::size_t kSumsBlockRows = 2048;

// Squared correlation of a and b over items with weights w (long double):
// (sum w (a - ma)(b - mb))^2 / (sum w (a - ma)^2 sum w (b - mb)^2), with extra
// within-item sums added to the three sums (ab, aa, bb).
double weighted_squared_correlation(const std::vector<long double>& a, const std::vector<long double>& b,
                                    const std::vector<long double>& w, long double extra_ab, long double extra_aa,
                                    long double extra_bb) {
    long double total = 0, ma = 0, mb = 0;
    for (std::size_t i = 0; i < a.size(); ++i) {
        total += w[i];
        ma += w[i] * a[i];
        mb += w[i] * b[i];
    }
    if (a.size() < 2 || !(total > 0)) return std::numeric_limits<double>::quiet_NaN();
    ma /= total;
    mb /= total;
    long double sab = extra_ab, saa = extra_aa, sbb = extra_bb;
    for (std::size_t i = 0; i < a.size(); ++i) {
        sab += w[i] * (a[i] - ma) * (b[i] - mb);
        saa += w[i] * (a[i] - ma) * (a[i] - ma);
        sbb += w[i] * (b[i] - mb) * (b[i] - mb);
    }
    if (saa == 0 || sbb == 0) return std::numeric_limits<double>::quiet_NaN();
    return static_cast<double>(sab * sab / (saa * sbb));
}

std::optional<double> finite_value(double v) {
    if (std::isfinite(v)) return v;
    return std::nullopt;
}

}  // namespace

std::vector<std::size_t> unit_aligned_blocks(const PanelIndex& index, std::size_t lo, std::size_t hi, std::size_t block) {
    const std::int32_t* unit = index.unit_of_row.data();
    std::vector<std::size_t> starts{lo};
    for (std::size_t a = lo; a < hi;) {
        std::size_t end = std::min(hi, a + block);
        if (end < hi) {
            while (end > a && unit[end] == unit[end - 1]) --end;   // back to where a unit ends
            if (end == a) return {};                               // one unit fills the block
        }
        starts.push_back(end);
        a = end;
    }
    return starts;
}

void block_unit_means(const LeanInput& in, std::size_t a, Index b, const double* keep, UnitMeansMatrix& means) {
    const std::int32_t* unit = in.index.unit_of_row.data() + a;
    const Index m = means.cols();
    // the block's runs of one unit and their kept rows
    std::vector<Index> end;
    std::vector<long double> count;
    for (Index i = 0; i < b;) {
        Index j = i;
        long double n = 0;
        for (; j < b && unit[j] == unit[i]; ++j) n += keep[j] != 0.0 ? 1.0L : 0.0L;
        end.push_back(j);
        count.push_back(n);
        i = j;
    }
    auto column = [&](Index c) {
        return (c + 1 < m ? in.data.regressors[static_cast<std::size_t>(c)].data() : in.data.outcome.data()) + a;
    };
    // each unit's sum as the full route takes it (fit_equations.cpp run_means: in row
    // order, long double), four columns at a time as four independent chains; a row
    // that is not an equation row adds an exact 0 (a select: its cell may hold NaN)
    Index c = 0;
    for (; c < m; c += 4) {
        const Index w = std::min<Index>(4, m - c);
        const double* x[4];
        for (Index k = 0; k < 4; ++k) x[k] = column(c + std::min(k, w - 1));
        Index i = 0;
        for (std::size_t r = 0; r < end.size(); ++r) {
            long double s0 = 0, s1 = 0, s2 = 0, s3 = 0;
            for (; i < end[r]; ++i) {
                const bool kept = keep[i] != 0.0;
                s0 += kept ? x[0][i] : 0.0;
                s1 += kept ? x[1][i] : 0.0;
                s2 += kept ? x[2][i] : 0.0;
                s3 += kept ? x[3][i] : 0.0;
            }
            if (!(count[r] > 0)) continue;
            const long double sums[4] = {s0, s1, s2, s3};
            const Index u = unit[end[r] - 1];
            for (Index k = 0; k < w; ++k) means(u, c + k) = static_cast<double>(sums[k] / count[r]);
        }
    }
}

UnitMeans lean_unit_means(const Context& ctx, const std::vector<std::uint8_t>& is_row, bool sums_too) {
    const PanelIndex& index = ctx.index;
    const std::size_t n_units = index.n_units(), n_rows = is_row.size();
    std::vector<const double*> columns;
    for (const Column& x : ctx.data.regressors) columns.push_back(x.data());
    columns.push_back(ctx.data.outcome.data());
    const Index m = static_cast<Index>(columns.size());
    UnitMeans out;
    out.count.assign(n_units, 0);
    out.first_row.assign(n_units, std::numeric_limits<std::size_t>::max());
    Eigen::Matrix<long double, Eigen::Dynamic, Eigen::Dynamic> sums =
        Eigen::Matrix<long double, Eigen::Dynamic, Eigen::Dynamic>::Zero(sums_too ? static_cast<Index>(n_units) : 0, m);
    const std::int32_t* unit = index.unit_of_row.data();
    const std::int32_t* period = index.period_of_row.data();
    std::vector<std::size_t> block, run_end;   // the block's used rows; where each run of one unit ends
    block.reserve(kSumsBlockRows);
    run_end.reserve(kSumsBlockRows);
    for (std::size_t a = 0; a < n_rows; a += kSumsBlockRows) {
        const std::size_t end = std::min(n_rows, a + kSumsBlockRows);
        block.clear();
        run_end.clear();
        for (std::size_t r = a; r < end; ++r) {
            if (!is_row[r]) continue;
            if (sums_too && !block.empty() && unit[block.back()] != unit[r]) run_end.push_back(block.size());
            if (sums_too) block.push_back(r);
            const std::size_t u = static_cast<std::size_t>(unit[r]);
            ++out.count[u];
            // the unit's row in its earliest period (the full route's first row of the run)
            const std::size_t first = out.first_row[u];
            if (first == std::numeric_limits<std::size_t>::max() || period[r] < period[first]) out.first_row[u] = r;
        }
        if (!sums_too) continue;
        if (!block.empty()) run_end.push_back(block.size());
        // a run's sum in a register, then into its unit's sum (a unit whose rows form
        // one run, as in input sorted by unit, gets exactly the sequential sum)
        // Four columns at a time: four independent chains of additions (each column's
        // own order unchanged) keep the adder busy.
        Index c = 0;
        for (; c + 4 <= m; c += 4) {
            const double* x0 = columns[static_cast<std::size_t>(c)];
            const double* x1 = columns[static_cast<std::size_t>(c + 1)];
            const double* x2 = columns[static_cast<std::size_t>(c + 2)];
            const double* x3 = columns[static_cast<std::size_t>(c + 3)];
            std::size_t i = 0;
            for (std::size_t stop : run_end) {
                long double a0 = 0, a1 = 0, a2 = 0, a3 = 0;
                const Index u = unit[block[i]];
                for (; i < stop; ++i) {
                    const std::size_t r = block[i];
                    a0 += x0[r];
                    a1 += x1[r];
                    a2 += x2[r];
                    a3 += x3[r];
                }
                sums(u, c) += a0;
                sums(u, c + 1) += a1;
                sums(u, c + 2) += a2;
                sums(u, c + 3) += a3;
            }
        }
        for (; c < m; ++c) {
            const double* x = columns[static_cast<std::size_t>(c)];
            long double* s = sums.col(c).data();
            std::size_t i = 0;
            for (std::size_t stop : run_end) {
                long double acc = 0;
                const std::int32_t u = unit[block[i]];
                for (; i < stop; ++i) acc += x[block[i]];
                s[u] += acc;
            }
        }
    }
    // one row more, zeros: what the block reader takes off a row that is not an equation row
    out.means = UnitMeansMatrix::Zero(static_cast<Index>(n_units) + 1, m);
    for (std::size_t u = 0; u < n_units; ++u) {
        if (out.count[u] > 0) ++out.units;
        if (!sums_too) continue;
        const long double n = static_cast<long double>(out.count[u]);
        for (Index c = 0; c < m; ++c)
            out.means(static_cast<Index>(u), c) =
                out.count[u] > 0 ? static_cast<double>(sums(static_cast<Index>(u), c) / n) : 0.0;
    }
    return out;
}

bool units_fit_blocks(const UnitMeans& means) {
    return std::all_of(means.count.begin(), means.count.end(),
                       [](std::size_t n) { return n <= static_cast<std::size_t>(kLeanBlockRows); });
}

// The full route's level statistics of within (fit_inference.cpp level_statistics)
// from the unit means: with xb = x'b at levels, each unit's mean of xb is xbar_i'b, and
// the deviations of xb from it are the within fitted values, whose sum of squares and
// cross-product with the demeaned y are both sum ydm^2 - SSR (the normal equations);
// sums over rows split into a between part (units weighted by their rows) and that
// within part, the cross terms vanishing within each unit.
void lean_level_statistics(const UnitMeans& m, const OutcomeSums& ysums, Fit& fit) {
    const Equation& eq = fit.equation;
    const Index k_reg = m.means.cols() - 1;
    std::vector<long double> ym, xm, rows, ones;
    for (std::size_t u = 0; u < m.count.size(); ++u) {
        if (m.count[u] == 0) continue;
        long double xb = 0;
        for (Index j = 0; j < k_reg; ++j)
            xb += static_cast<long double>(eq.coef[j]) * m.means(static_cast<Index>(u), j);
        xm.push_back(xb);
        ym.push_back(m.means(static_cast<Index>(u), k_reg));
        rows.push_back(static_cast<long double>(m.count[u]));
        ones.push_back(1.0L);
    }
    const long double fitted_within = ysums.raw - static_cast<long double>(eq.ssr);
    fit.corr2_rows = finite_value(weighted_squared_correlation(ym, xm, rows, fitted_within, ysums.raw, fitted_within));
    fit.corr2_means = finite_value(weighted_squared_correlation(ym, xm, ones, 0, 0, 0));
    fit.unit_effects.assign(m.count.size(), 0.0);
    for (std::size_t u = 0, i = 0; u < m.count.size(); ++u)
        if (m.count[u] > 0) {
            fit.unit_effects[u] = static_cast<double>(ym[i] - xm[i]);
            ++i;
        }
}

// between: y's unit means on [1, X's unit means], one row per unit in unit order (the
// unit's input row: its row in its earliest period), as build_between forms it.
Design between_from_means(const Context& ctx, const UnitMeans& m) {
    Design design;
    EquationInput& in = design.input;
    in.estimator = Estimator::between;
    const Index n = static_cast<Index>(m.units), k_reg = static_cast<Index>(ctx.k_reg);
    const bool intercept = ctx.spec.intercept;
    const Index c0 = intercept ? 1 : 0;
    in.X.resize(n, c0 + k_reg);
    in.y.resize(n);
    if (intercept) {
        in.X.col(0).setOnes();
        in.terms.push_back("intercept");
        in.intercept_column = 0;
    }
    for (const std::string& name : ctx.regressor_names) in.terms.push_back(name);
    Index r = 0;
    for (std::size_t u = 0; u < m.count.size(); ++u) {
        if (m.count[u] == 0) continue;
        const Index ui = static_cast<Index>(u);
        in.X.row(r).tail(k_reg) = m.means.row(ui).head(k_reg);
        in.y[r] = m.means(ui, k_reg);
        in.input_row.push_back(m.first_row[u]);
        in.unit.push_back(static_cast<std::int32_t>(u));
        in.period.push_back(-1);
        ++r;
    }
    return design;
}

// between's residuals and fitted values on every used row (each row carries its unit's).
void between_series(const std::vector<std::uint8_t>& is_row, const PanelIndex& index, Fit& fit) {
    const Equation& eq = fit.equation;
    std::vector<std::int32_t> at(index.n_units(), -1);
    for (std::size_t i = 0; i < eq.unit.size(); ++i) at[static_cast<std::size_t>(eq.unit[i])] = static_cast<std::int32_t>(i);
    const std::size_t n_rows = is_row.size();
    assign_large(fit.residuals.value, n_rows, 0.0);
    assign_large(fit.residuals.defined, n_rows, std::uint8_t{0});
    assign_large(fit.fitted.value, n_rows, 0.0);
    assign_large(fit.fitted.defined, n_rows, std::uint8_t{0});
    for (std::size_t r = 0; r < n_rows; ++r) {
        if (!is_row[r]) continue;
        const Index i = at[static_cast<std::size_t>(index.unit_of_row[r])];
        fit.residuals.value[r] = eq.residual[i];
        fit.fitted.value[r] = eq.fitted[i];
        fit.residuals.defined[r] = fit.fitted.defined[r] = 1;
    }
}

}  // namespace weft::detail
