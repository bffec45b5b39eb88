// The bootstrap against an independent computation in R (boot_support.hpp,
// kEnumerationR): with Rademacher weights fully enumerated there is no randomness, so
// the p-values must be equal (the same count of extreme draws out of 2^G); random
// draws must agree with that enumeration within Monte Carlo error.
#include "boot_support.hpp"

#include <cmath>

using boot_test::boot;
using boot_test::fit;
using boot_test::panel;
using boot_test::r_enumeration;

namespace {

// weft's enumerated p-values at the given tested values, and R's for the same panel.
void check_equal_to_r(const weft::PanelData& d, const std::string& model, const std::string& estimator,
                      const std::string& by, std::size_t G, const std::vector<double>& nulls,
                      const std::string& tag) {
    const weft::Fit f = fit(d, model);
    const std::vector<double> r = r_enumeration(d, estimator, by, nulls, tag);
    for (std::size_t i = 0; i < nulls.size(); ++i) {
        char settings[64];
        std::snprintf(settings, sizeof settings, "null=%.17g", nulls[i]);
        const weft::BootstrapResult b = boot(f, settings);
        INFO(model << " null " << nulls[i] << ": weft p " << b.p << ", R p " << r[i]);
        REQUIRE(b.enumerated);
        REQUIRE(b.weights == weft::BootstrapWeights::rademacher);
        REQUIRE(b.draws == (std::size_t{1} << G));
        REQUIRE(b.clusters == G);
        // Source: R enumeration (kEnumerationR); a count out of 2^G, so exact.
        CHECK(b.p == r[i]);
    }
}

}  // namespace

TEST_CASE("enumerated p-values equal R's enumeration: pooled, clusters by unit", "[bootstrap][oracle]") {
    const weft::PanelData d = panel(10, 6, 0.25, 1701);
    check_equal_to_r(d, "pooled cluster", "pooled", "unit", 10, {0.0, 0.1, 0.4, -0.2}, "pooled");
}

TEST_CASE("enumerated p-values equal R's enumeration: pooled, clusters by period", "[bootstrap][oracle]") {
    const weft::PanelData d = panel(12, 8, 0.25, 1702);
    check_equal_to_r(d, "pooled cluster-period", "pooled", "period", 8, {0.0, 0.3}, "period");
}

TEST_CASE("enumerated p-values equal R's enumeration: first differences", "[bootstrap][oracle]") {
    const weft::PanelData d = panel(9, 6, 0.25, 1703);
    check_equal_to_r(d, "fd cluster", "fd", "unit", 9, {0.0, 0.35}, "fd");
}

TEST_CASE("enumerated p-values equal R's enumeration: within, classical model errors", "[bootstrap][oracle]") {
    // The model's own errors are classical: the bootstrap then clusters by unit.
    const weft::PanelData d = panel(10, 5, 0.25, 1704);
    check_equal_to_r(d, "within", "within", "unit", 10, {0.0, 0.2}, "within");
}

TEST_CASE("interval ends are where R's enumerated p-value crosses 1 - level", "[bootstrap][oracle]") {
    const weft::PanelData d = panel(10, 6, 0.25, 1701);
    const weft::Fit f = fit(d, "pooled cluster level=0.9");
    const weft::BootstrapResult b = boot(f, "");
    REQUIRE(std::isfinite(b.ci_low));
    REQUIRE(std::isfinite(b.ci_high));
    REQUIRE(b.ci_low < b.estimate);
    REQUIRE(b.estimate < b.ci_high);
    const double delta = 1e-6 * (b.ci_high - b.ci_low);
    const std::vector<double> r = r_enumeration(
        d, "pooled", "unit", {b.ci_low - delta, b.ci_low + delta, b.ci_high - delta, b.ci_high + delta}, "ends");
    INFO("interval " << b.ci_low << " " << b.ci_high << "; R p-values " << r[0] << " " << r[1] << " " << r[2]
                     << " " << r[3]);
    // Source: R enumeration. Outside the interval R rejects at 10%, inside it does not.
    CHECK(r[0] < 0.1);
    CHECK(r[1] >= 0.1);
    CHECK(r[2] >= 0.1);
    CHECK(r[3] < 0.1);
}

TEST_CASE("random Rademacher draws agree with the enumeration within Monte Carlo error", "[bootstrap][montecarlo]") {
    // 999 random draws out of the 1024 sign patterns of G = 10: the random p-value is a
    // binomial share with mean the enumerated p (checked against R above), sd
    // sqrt(p (1 - p) / 999). Bound: 4 sd (a chance of about 6e-5 under the model;
    // common practice, no source). Interval ends: the enumerated p-value at a random
    // end must be within 4 sd of 1 - level.
    const weft::PanelData d = panel(10, 6, 0.25, 1701);
    const weft::Fit f = fit(d, "pooled cluster");
    for (const char* null : {"0", "0.1", "0.4"}) {
        const weft::BootstrapResult exact = boot(f, std::string("null=") + null);
        for (const char* seed : {"1", "2", "3"}) {
            const weft::BootstrapResult random =
                boot(f, std::string("rademacher draws=999 seed=") + seed + " null=" + null);
            REQUIRE_FALSE(random.enumerated);
            REQUIRE(random.draws == 999);
            const double sd = std::sqrt(exact.p * (1 - exact.p) / 999.0);
            INFO("null " << null << " seed " << seed << ": random p " << random.p << ", enumerated p " << exact.p);
            CHECK(std::fabs(random.p - exact.p) <= 4 * sd + 1e-12);
            const double alpha = 0.05, sd_a = std::sqrt(alpha * (1 - alpha) / 999.0);
            for (const double end : {random.ci_low, random.ci_high}) {
                char s[64];
                std::snprintf(s, sizeof s, "null=%.17g", end);
                const double p_end = boot(f, s).p;
                INFO("random end " << end << ": enumerated p there " << p_end);
                CHECK(std::fabs(p_end - alpha) <= 4 * sd_a);
            }
        }
    }
}
