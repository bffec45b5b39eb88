// The serial check steps along the period grid: residual pairs never cross a gap.
// Expected pair counts follow from the definition (CONVENTIONS.md "Panel index" and
// "Tests", serial) applied by hand to the panel built here; the slope is checked against
// a two-column least-squares fit written out in the test from the same residuals.
#include <algorithm>
#include <cmath>
#include <map>
#include <string>
#include <utility>
#include <vector>

#include "spec_support.hpp"

namespace {

// Units "a".."d" with periods chosen to contain gaps; a period 7 that no unit has
// between 6 and 8 would be skipped by the grid, so 6 and 8 are adjacent.
const std::vector<std::vector<double>> kPeriods = {
    {1, 2, 3, 5, 6},  // gap at 4: pairs (1,2) (2,3) (5,6) -> 3
    {2, 3, 4, 5, 6},  // no gap: 4 pairs
    {1, 3, 5, 6, 8},  // gaps at 2 and 4; 6 -> 8 adjacent on the grid (7 absent): (5,6) (6,8) -> 2
    {1, 2, 4, 5, 8},  // gap at 3 and 6: (1,2) (4,5) -> 2
};

weft::PanelData gap_panel() {
    weft::PanelData d;
    d.outcome.name = "y";
    d.units.name = "unit";
    d.periods.name = "period";
    d.regressors.resize(1);
    d.regressors[0].name = "x";
    double k = 0;
    // rows in a shuffled order: unit by unit backwards, periods backwards
    for (std::size_t u = kPeriods.size(); u-- > 0;)
        for (std::size_t j = kPeriods[u].size(); j-- > 0;) {
            k += 1;
            d.units.text.push_back(std::string(1, static_cast<char>('a' + u)));
            d.periods.values.push_back(kPeriods[u][j]);
            d.regressors[0].values.push_back(std::sin(2.3 * k));
            d.outcome.values.push_back(0.5 * std::sin(2.3 * k) + std::cos(1.9 * k * k));
        }
    return d;
}

}  // namespace

TEST_CASE("Serial check: pairs follow the grid, never the previous row", "[spec][serial][gaps]") {
    const weft::PanelData d = gap_panel();
    const weft::Fit fit = weft::fit_model(d, weft::parse_model_text("pooled"));
    const weft::SerialResult s = weft::serial_test(fit);
    CHECK(s.pairs == 3 + 4 + 2 + 2);
    CHECK(s.units == 4);
    CHECK(s.df == static_cast<double>(s.pairs) - 2);
    CHECK_FALSE(s.level.has_value());  // pooled: no level-error null

    // The same slope from the definition: pairs by (unit, period) on the grid.
    std::map<std::pair<std::string, double>, double> resid;
    for (std::size_t i = 0; i < d.outcome.values.size(); ++i)
        resid[{d.units.text[i], d.periods.values[i]}] = fit.residuals.value[i];
    const std::vector<double> grid = {1, 2, 3, 4, 5, 6, 8};
    double n = 0, sx = 0, sy = 0, sxx = 0, sxy = 0;
    for (const auto& [key, u] : resid) {
        const auto it = std::find(grid.begin(), grid.end(), key.second);
        if (it == grid.begin()) continue;
        const auto prev = resid.find({key.first, *(it - 1)});
        if (prev == resid.end()) continue;
        n += 1;
        sx += prev->second;
        sy += u;
        sxx += prev->second * prev->second;
        sxy += prev->second * u;
    }
    REQUIRE(n == 11);
    const double slope = (sxy - sx * sy / n) / (sxx - sx * sx / n);
    SPEC_CHECK_REL(s.slope, slope, 1e-10, "AR(1) slope");
}

TEST_CASE("Serial check after fd: differences and their pairs both follow the grid", "[spec][serial][gaps]") {
    const weft::PanelData d = gap_panel();
    const weft::Fit fit = weft::fit_model(d, weft::parse_model_text("fd"));
    // differences exist at: a 2,3,6; b 3,4,5,6; c 6,8; d 2,5 -> 11 rows; pairs of
    // differences on adjacent periods: a (2,3); b (3,4) (4,5) (5,6); c (6,8) -> 5
    CHECK(fit.nobs == 11);
    const weft::SerialResult s = weft::serial_test(fit);
    CHECK(s.pairs == 5);
    CHECK(s.units == 3);
    REQUIRE(s.level.has_value());
    CHECK(s.level->null_value == -0.5);
    CHECK(s.level->f_df2 == 2);  // G - 1 with G = 3 units contributing pairs
}
