// Fixed-seed simulation of a textbook property: with serially independent level errors,
// first-differenced errors have first-order correlation -0.5 (Wooldridge 2010,
// Econometric Analysis of Cross Section and Panel Data, section 10.6, as cited in
// CONVENTIONS.md). Checked on weft's fd residuals, lagged with weft::lag (gap-aware).
#include <random>

#include "core_support.hpp"

TEST_CASE("fd residuals of independent level errors have AR(1) correlation -0.5", "[simulation]") {
    const std::uint64_t seed = 20261202;  // fixed seed, printed on failure
    INFO("seed " << seed);
    std::mt19937_64 rng(seed);
    std::normal_distribution<double> normal(0.0, 1.0);
    const int n_units = 2000, n_periods = 6;
    weft::PanelData d;
    d.outcome.name = "y";
    d.regressors.resize(1);
    d.regressors[0].name = "x";
    for (int u = 0; u < n_units; ++u) {
        const double effect = 3.0 * normal(rng);
        for (int t = 0; t < n_periods; ++t) {
            const double x = normal(rng) + 0.5 * effect;
            d.outcome.values.push_back(1.0 + 2.0 * x + effect + normal(rng));
            d.regressors[0].values.push_back(x);
            d.units.numbers.push_back(u);
            d.periods.values.push_back(2000 + t);
        }
    }
    const weft::Fit fit = weft::fit_model(d, weft::parse_model_text("fd cluster"));
    CHECK(std::abs(fit.coef[1] - 2.0) < 0.05);
    weft::Column residual;
    residual.name = "residual";
    residual.values = fit.residuals.value;
    residual.missing.resize(residual.values.size());
    for (std::size_t i = 0; i < residual.values.size(); ++i) residual.missing[i] = fit.residuals.defined[i] ? 0 : 1;
    const weft::Series lagged = weft::lag(residual, fit.index, 1);
    double sxy = 0, sxx = 0, syy = 0, sx = 0, sy = 0, n = 0;
    for (std::size_t i = 0; i < residual.values.size(); ++i) {
        if (!fit.residuals.defined[i] || !lagged.defined[i]) continue;
        const double a = residual.values[i], b = lagged.value[i];
        sx += a;
        sy += b;
        sxy += a * b;
        sxx += a * a;
        syy += b * b;
        n += 1;
    }
    CHECK(n == n_units * (n_periods - 2));
    const double r = (sxy - sx * sy / n) / std::sqrt((sxx - sx * sx / n) * (syy - sy * sy / n));
    INFO("correlation of consecutive fd residuals " << r);
    // sampling sd of r is about 1/sqrt(8000) = 0.011; 0.04 is over 3 sd
    CHECK(std::abs(r + 0.5) < 0.04);
}
