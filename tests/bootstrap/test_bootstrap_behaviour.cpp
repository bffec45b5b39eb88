// Size and power by a fixed-seed Monte Carlo, determinism, the generator's reference
// outputs and bad settings words.
#include "boot_support.hpp"

#include <cmath>
#include <random>

using boot_test::boot;
using boot_test::fit;

TEST_CASE("splitmix64 and xoshiro256** give the reference outputs", "[bootstrap][generator]") {
    // splitmix64 started at 0: first outputs from the reference code of Vigna
    // (prng.di.unimi.it/splitmix64.c), from memory.
    std::uint64_t state = 0;
    CHECK(weft::BootstrapRandom::splitmix64(state) == 0xe220a8397b1dcdafULL);
    CHECK(weft::BootstrapRandom::splitmix64(state) == 0x6e789e6aa1b965f4ULL);
    CHECK(weft::BootstrapRandom::splitmix64(state) == 0x06c45d188009454fULL);
    // xoshiro256** 1.0 from the state {1, 2, 3, 4}: the first outputs of the reference
    // code (prng.di.unimi.it/xoshiro256starstar.c), from memory, reproduced by a
    // line-by-line Python transcription of that code when this test was written.
    weft::BootstrapRandom x = weft::BootstrapRandom::from_state(1, 2, 3, 4);
    const std::uint64_t expected[] = {11520ULL, 0ULL, 1509978240ULL, 1215971899390074240ULL,
                                      1216172134540287360ULL, 607988272756665600ULL};
    for (std::uint64_t e : expected) CHECK(x.next() == e);
}

TEST_CASE("the same seed gives the same numbers, another seed other numbers", "[bootstrap][determinism]") {
    const weft::PanelData d = boot_test::panel(14, 5, 0.2, 1801);
    const weft::Fit f = fit(d, "pooled cluster");
    const weft::BootstrapResult a = boot(f, "draws=999 seed=11");
    const weft::BootstrapResult b = boot(fit(d, "pooled cluster"), "seed=11 draws=999");
    CHECK(a.weights == weft::BootstrapWeights::rademacher);  // 14 clusters: above the Webb limit
    CHECK(a.p == b.p);
    CHECK(a.ci_low == b.ci_low);
    CHECK(a.ci_high == b.ci_high);
    const weft::BootstrapResult c = boot(f, "draws=999 seed=12");
    CHECK((c.p != a.p || c.ci_low != a.ci_low || c.ci_high != a.ci_high));
    const weft::BootstrapResult w1 = boot(f, "webb draws=999 seed=5");
    const weft::BootstrapResult w2 = boot(f, "webb draws=999 seed=5");
    const weft::BootstrapResult w3 = boot(f, "webb draws=999 seed=6");
    CHECK(w1.weights == weft::BootstrapWeights::webb);
    CHECK(w1.p == w2.p);
    CHECK(w1.ci_high == w2.ci_high);
    CHECK((w3.p != w1.p || w3.ci_high != w1.ci_high));
}

TEST_CASE("weights follow the stated rule", "[bootstrap][rule]") {
    const weft::Fit f8 = fit(boot_test::panel(8, 5, 0.2, 1802), "pooled cluster");
    const weft::BootstrapResult e = boot(f8, "");            // 2^8 = 256 <= 9999: enumerate
    CHECK(e.enumerated);
    CHECK(e.draws == 256);
    const weft::BootstrapResult w = boot(f8, "draws=199");   // 256 > 199, G = 8 <= 12: Webb
    CHECK_FALSE(w.enumerated);
    CHECK(w.weights == weft::BootstrapWeights::webb);
    CHECK(w.draws == 199);
    const weft::BootstrapResult r = boot(f8, "rademacher draws=199");
    CHECK(r.weights == weft::BootstrapWeights::rademacher);
    CHECK_FALSE(r.enumerated);
    const weft::BootstrapResult ww = boot(f8, "webb");      // webb is never enumerated
    CHECK_FALSE(ww.enumerated);
    CHECK(ww.draws == 9999);
}

TEST_CASE("bad settings words and models are refused with the word named", "[bootstrap][errors]") {
    using weft::parse_bootstrap_settings;
    CHECK_THROWS_WITH(parse_bootstrap_settings("drawz=99"), Catch::Contains("\"drawz=99\""));
    CHECK_THROWS_WITH(parse_bootstrap_settings("draws=5"), Catch::Contains("99 to 1000000"));
    CHECK_THROWS_WITH(parse_bootstrap_settings("draws=1000.5"), Catch::Contains("draws=1000.5"));
    CHECK_THROWS_WITH(parse_bootstrap_settings("seed=-1"), Catch::Contains("seed=-1"));
    CHECK_THROWS_WITH(parse_bootstrap_settings("null=abc"), Catch::Contains("null=abc"));
    CHECK_THROWS_WITH(parse_bootstrap_settings("webb rademacher"), Catch::Contains("conflicts"));
    CHECK_THROWS_WITH(parse_bootstrap_settings("draws=999 draws=199"), Catch::Contains("conflicts"));
    CHECK(parse_bootstrap_settings("DRAWS=999, Seed=3  null=-0.5 webb").draws == 999);
    const weft::PanelData d = boot_test::panel(8, 5, 0.2, 1803);
    CHECK_THROWS_WITH(boot(fit(d, "pooled cluster-both"), ""), Catch::Contains("cluster-period"));
    CHECK_THROWS_WITH(boot(fit(d, "within cluster-period"), ""), Catch::Contains("within"));
    CHECK_THROWS_WITH(weft::wild_bootstrap(fit(d, "pooled"), "x9", {}), Catch::Contains("x1, x2"));
}

namespace {

// One Monte Carlo panel: G = 8 clusters of very unequal sizes (4 to 512 rows), a
// regressor and an error with strong cluster components: the case where the CR1 t
// with G - 1 df over-rejects (MacKinnon and Webb 2017, unequal cluster sizes; Cameron,
// Gelbach and Miller 2008, few clusters; from memory).
weft::PanelData mc_panel(std::mt19937_64& rng, double beta1) {
    std::normal_distribution<double> z(0.0, 1.0);
    weft::PanelData d;
    d.outcome.name = "y";
    d.regressors.resize(1);
    d.regressors[0].name = "x1";
    for (std::size_t g = 0; g < 8; ++g) {
        const double xg = z(rng), eg = z(rng);
        const std::size_t rows = std::size_t{4} << g;
        for (std::size_t t = 0; t < rows; ++t) {
            const double x = xg + 0.5 * z(rng);
            d.units.numbers.push_back(static_cast<double>(g));
            d.periods.values.push_back(static_cast<double>(t));
            d.regressors[0].values.push_back(x);
            d.outcome.values.push_back(beta1 * x + eg + 0.5 * z(rng));
        }
    }
    return d;
}

}  // namespace

TEST_CASE("size near 5% at G = 8 where the cluster t over-rejects, and power", "[bootstrap][size]") {
    // 400 replications under the null (beta1 = 0): the bootstrap's 5% rejection rate
    // must lie in [0.02, 0.085] (binomial sd 0.011 around 0.05: -2.7 to +3.2 sd;
    // common practice, no source), and the CR1 t on G - 1 df must reject more often
    // than 0.085 in the same samples. 200 replications with beta1 = 1.5: the bootstrap
    // rejects in at least half (a bound set from the design, common practice).
    std::mt19937_64 rng(20261204);
    int boot_reject = 0, t_reject = 0;
    const int reps = 400;
    for (int r = 0; r < reps; ++r) {
        const weft::Fit f = fit(mc_panel(rng, 0.0), "pooled cluster");
        boot_reject += boot(f, "").p < 0.05 ? 1 : 0;
        t_reject += f.p[1] < 0.05 ? 1 : 0;
    }
    const double boot_rate = boot_reject / double(reps), t_rate = t_reject / double(reps);
    INFO("bootstrap rejects " << boot_rate << ", cluster t rejects " << t_rate);
    CHECK(boot_rate >= 0.02);
    CHECK(boot_rate <= 0.085);
    CHECK(t_rate > 0.085);
    int power = 0;
    for (int r = 0; r < 200; ++r) power += boot(fit(mc_panel(rng, 1.5), "pooled cluster"), "").p < 0.05 ? 1 : 0;
    INFO("power " << power / 200.0);
    CHECK(power >= 100);
}

TEST_CASE("the model's own covariance chooses only the cluster dimension", "[bootstrap][rule]") {
    // CONVENTIONS.md "Few clusters": CR1 in every draw, clusters as in the model's
    // standard errors, units when those are not clustered. So classical, hc1, cluster
    // and cr2 models (all by unit) give the same numbers; period clusters differ.
    const weft::PanelData d = boot_test::panel(9, 6, 0.2, 1804);
    const weft::BootstrapResult base = boot(fit(d, "within cluster"), "");
    for (const char* model : {"within", "within hc1", "within cr2", "within cluster0"}) {
        const weft::BootstrapResult b = boot(fit(d, model), "");
        INFO(model);
        CHECK(b.p == base.p);
        CHECK(b.ci_low == base.ci_low);
        CHECK(b.ci_high == base.ci_high);
        CHECK_FALSE(b.by_period);
    }
    const weft::BootstrapResult periods = boot(fit(d, "pooled cluster-period"), "");
    CHECK(periods.by_period);
    CHECK(periods.clusters == 6);
    // between has one row per unit: each row is its own cluster
    const weft::BootstrapResult between = boot(fit(d, "between"), "");
    CHECK(between.clusters == 9);
    CHECK(between.enumerated);
}
