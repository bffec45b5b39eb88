// Stage "inference and fit statistics" of a fit (fit_stages.hpp): per-term t, p and
// intervals from the covariance, the exact-fit rule, R-squared and the classical F, the
// level R-squared variants of within and random, and the aligned residuals.
#include <algorithm>
#include <cmath>
#include <limits>
#include <string>

#include <Eigen/Dense>

#include "weft/distributions.hpp"
#include "fit_stages.hpp"

namespace weft::detail {

using Eigen::Index;
using Eigen::MatrixXd;
using Eigen::VectorXd;

namespace {

double squared_correlation(const std::vector<long double>& a, const std::vector<long double>& b) {
    const std::size_t n = a.size();
    if (n < 2) return std::numeric_limits<double>::quiet_NaN();
    long double ma = 0, mb = 0;
    for (std::size_t i = 0; i < n; ++i) {
        ma += a[i];
        mb += b[i];
    }
    ma /= static_cast<long double>(n);
    mb /= static_cast<long double>(n);
    long double sab = 0, saa = 0, sbb = 0;
    for (std::size_t i = 0; i < n; ++i) {
        sab += (a[i] - ma) * (b[i] - mb);
        saa += (a[i] - ma) * (a[i] - ma);
        sbb += (b[i] - mb) * (b[i] - mb);
    }
    if (saa == 0 || sbb == 0) return std::numeric_limits<double>::quiet_NaN();
    return static_cast<double>(sab * sab / (saa * sbb));
}

std::optional<double> finite_or_empty(double v) {
    if (std::isfinite(v)) return v;
    return std::nullopt;
}

}  // namespace

void term_inference(Fit& fit, const OutcomeSums& ysums) {
    const ModelSpec& spec = fit.spec;
    const Equation& eq = fit.equation;
    const std::size_t K = eq.n_terms();
    for (const std::string& w : fit.covariance.warnings) fit.warnings.push_back(w);
    if (spec.estimator == Estimator::within &&
        (spec.covariance == Covariance::hc0 || spec.covariance == Covariance::hc1 ||
         spec.covariance == Covariance::hc2 || spec.covariance == Covariance::hc3))
        fit.warnings.push_back("with within and few periods per unit, hc0-hc3 standard errors are not "
                               "consistent (Stock & Watson 2008); cluster is recommended");
    fit.coef = eq.coef;
    fit.se.resize(static_cast<Index>(K));
    fit.t.resize(static_cast<Index>(K));
    fit.p.resize(static_cast<Index>(K));
    fit.ci_low.resize(static_cast<Index>(K));
    fit.ci_high.resize(static_cast<Index>(K));
    for (Index k = 0; k < static_cast<Index>(K); ++k) {
        // cr2: each term on its own Satterthwaite df
        const std::vector<double>& term_df = fit.covariance.term_df;
        const double df = term_df.empty() ? fit.covariance.df : term_df[static_cast<std::size_t>(k)];
        const double q = t_quantile(1.0 - (1.0 - spec.level) / 2.0, df);
        const double se = std::sqrt(std::max(fit.covariance.matrix(k, k), 0.0));
        fit.se[k] = se;
        fit.t[k] = se > 0 ? eq.coef[k] / se : std::numeric_limits<double>::quiet_NaN();
        fit.p[k] = se > 0 ? t_two_sided_p(fit.t[k], df) : std::numeric_limits<double>::quiet_NaN();
        fit.ci_low[k] = eq.coef[k] - q * se;
        fit.ci_high[k] = eq.coef[k] + q * se;
    }
    // An exact fit (every residual 0 to rounding) has standard errors 0: rounding noise
    // must not be shown as tiny SEs with huge t, so they are set to 0, and t and p are
    // undefined (NaN here; hosts show them as not available), with a warning.
    {
        if (static_cast<long double>(eq.ssr) <= kExactFitTolerance * ysums.raw) {
            fit.exact_fit = true;
            fit.covariance.matrix.setZero();
            for (Index k = 0; k < static_cast<Index>(K); ++k) {
                fit.se[k] = 0;
                fit.t[k] = fit.p[k] = std::numeric_limits<double>::quiet_NaN();
                fit.ci_low[k] = fit.ci_high[k] = eq.coef[k];
            }
            fit.warnings.push_back("the fit is exact: every residual is 0 (to rounding), so the standard "
                                   "errors are 0 and t and p-values are not defined");
        }
    }

}

void fit_statistics(Fit& fit, const OutcomeSums& ysums) {
    const ModelSpec& spec = fit.spec;
    const Equation& eq = fit.equation;
    const std::size_t N = eq.nobs(), K = eq.n_terms();
    const bool has_intercept = eq.intercept_column >= 0;
    const double N_d = static_cast<double>(N);
    {
        const long double centred = ysums.centred, raw = ysums.raw;
        // within: y is demeaned by unit, so the uncentred sum is sum (y - ybar_i)^2
        const bool centre = has_intercept || spec.estimator == Estimator::random;
        const double tss = static_cast<double>(spec.estimator == Estimator::within ? raw : (centre ? centred : raw));
        if (tss > 0) {
            fit.tss = tss;
            const double r2 = 1.0 - eq.ssr / tss;
            fit.r2 = r2;
            const double adj_n = (spec.estimator == Estimator::within || centre) ? N_d - 1.0 : N_d;
            fit.adj_r2 = 1.0 - (1.0 - r2) * adj_n / fit.df_residual;
            if (spec.estimator == Estimator::within) fit.corr2_deviations = r2;
        }
    }
    // F on all slopes (classical)
    {
        std::vector<Index> slopes;
        for (Index k = 0; k < static_cast<Index>(K); ++k)
            if (k != eq.intercept_column) slopes.push_back(k);
        const double qn = static_cast<double>(slopes.size());
        if (!slopes.empty()) {
            double f = std::numeric_limits<double>::quiet_NaN();
            if (spec.estimator == Estimator::random) {
                // Wald form: the 1 - theta column is not a constant in unbalanced panels
                const Index m = static_cast<Index>(slopes.size());
                MatrixXd v(m, m);
                VectorXd bs(m);
                for (Index a = 0; a < m; ++a) {
                    bs[a] = eq.coef[slopes[static_cast<std::size_t>(a)]];
                    for (Index c = 0; c < m; ++c)
                        v(a, c) = eq.xtx_inverse(slopes[static_cast<std::size_t>(a)], slopes[static_cast<std::size_t>(c)]);
                }
                const double s2 = eq.ssr / fit.df_residual;
                Eigen::LDLT<MatrixXd> ldlt(v * s2);
                f = bs.dot(ldlt.solve(bs)) / qn;
                fit.f_rule = "classical Wald F on all slopes (random effects)";
            } else if (fit.tss) {
                f = ((*fit.tss - eq.ssr) / qn) / (eq.ssr / fit.df_residual);
                fit.f_rule = has_intercept ? "((TSS-SSR)/q)/(SSR/df), TSS centred"
                                           : "((TSS-SSR)/q)/(SSR/df), TSS uncentred";
            }
            if (std::isfinite(f) && !fit.exact_fit) {
                fit.f = f;
                fit.f_df1 = qn;
                fit.f_df2 = fit.df_residual;
                fit.f_p = finite_or_empty(f_upper(f, qn, fit.df_residual));
            }
        }
    }
}

void level_statistics(const Context& ctx, const std::vector<std::size_t>& rows, const UnitRuns& runs, Fit& fit) {
    const ModelSpec& spec = fit.spec;
    const Equation& eq = fit.equation;
    const PanelData& data = ctx.data;
    const PanelIndex& index = ctx.index;
    const std::size_t K = eq.n_terms();
    if (spec.estimator == Estimator::within || spec.estimator == Estimator::random) {
        // x_it' b over used rows at levels (period indicators as 0/1), b without intercept
        std::vector<long double> xb(rows.size(), 0.0L), yl(rows.size());
        for (Index k = 0; k < static_cast<Index>(K); ++k) {
            if (k == eq.intercept_column) continue;
            const std::string& term = eq.terms[static_cast<std::size_t>(k)];
            const long double bk = eq.coef[k];
            bool found = false;
            for (std::size_t j = 0; j < ctx.k_reg && !found; ++j) {
                if (ctx.regressor_names[j] != term) continue;
                found = true;
                for (std::size_t r = 0; r < rows.size(); ++r) xb[r] += bk * ctx.regressors[j]->value(rows[r]);
            }
            if (!found) {
                for (std::size_t r = 0; r < rows.size(); ++r)
                    if (period_term(index, index.period_of_row[rows[r]]) == term) xb[r] += bk;
            }
        }
        for (std::size_t r = 0; r < rows.size(); ++r) yl[r] = data.outcome.value(rows[r]);
        const bool weighted = ctx.weights != nullptr;
        if (!weighted) fit.corr2_rows = finite_or_empty(squared_correlation(yl, xb));
        std::vector<long double> ym(runs.begin.size()), xm(runs.begin.size());
        std::vector<long double> yd(rows.size()), xd(rows.size());
        for (std::size_t r = 0; r < runs.begin.size(); ++r) {
            // unit means (weighted: sum w v / sum w, so unit_effects are the weighted
            // dummy-variable regression's unit coefficients)
            long double sy = 0, sx = 0, cnt = 0;
            for (std::size_t k = runs.begin[r]; k < runs.end[r]; ++k) {
                const long double w = weighted ? ctx.weights->value(rows[k]) : 1.0L;
                sy += w * yl[k];
                sx += w * xb[k];
                cnt += w;
            }
            ym[r] = sy / cnt;
            xm[r] = sx / cnt;
            for (std::size_t k = runs.begin[r]; k < runs.end[r]; ++k) {
                yd[k] = yl[k] - ym[r];
                xd[k] = xb[k] - xm[r];
            }
        }
        if (!weighted) fit.corr2_means = finite_or_empty(squared_correlation(ym, xm));
        if (spec.estimator == Estimator::random) fit.corr2_deviations = finite_or_empty(squared_correlation(yd, xd));
        if (spec.estimator == Estimator::within) {
            fit.unit_effects.assign(index.n_units(), 0.0);
            for (std::size_t r = 0; r < runs.begin.size(); ++r)
                fit.unit_effects[static_cast<std::size_t>(runs.unit[r])] = static_cast<double>(ym[r] - xm[r]);
        }
    }
}

void aligned_series(const std::vector<std::size_t>& rows, const UnitRuns& runs, std::size_t n_rows, Fit& fit) {
    const Equation& eq = fit.equation;
    const std::size_t N = eq.nobs();
    fit.residuals.value.assign(n_rows, 0.0);
    fit.residuals.defined.assign(n_rows, 0);
    fit.fitted = fit.residuals;
    if (fit.spec.estimator == Estimator::between) {
        for (std::size_t r = 0; r < runs.begin.size(); ++r)
            for (std::size_t k = runs.begin[r]; k < runs.end[r]; ++k) {
                const std::size_t row = rows[k];
                fit.residuals.value[row] = eq.residual[static_cast<Index>(r)];
                fit.fitted.value[row] = eq.fitted[static_cast<Index>(r)];
                fit.residuals.defined[row] = fit.fitted.defined[row] = 1;
            }
    } else {
        for (std::size_t i = 0; i < N; ++i) {
            const std::size_t row = eq.input_row[i];
            fit.residuals.value[row] = eq.residual[static_cast<Index>(i)];
            fit.fitted.value[row] = eq.fitted[static_cast<Index>(i)];
            fit.residuals.defined[row] = fit.fitted.defined[row] = 1;
        }
    }
}

}  // namespace weft::detail
