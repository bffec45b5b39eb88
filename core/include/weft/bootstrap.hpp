// weft/bootstrap.hpp -- the wild cluster bootstrap test of one term of a fitted model.
//
// Contract (CONVENTIONS.md "Few clusters" is the statistical specification):
// - wild_bootstrap(fit, term, settings) tests H0: b_term = settings.null_value with the
//   restricted wild cluster bootstrap-t (Cameron, Gelbach and Miller 2008): the null is
//   imposed on the estimated equation, the restricted residuals of each cluster are
//   multiplied by one weight per cluster and draw, the equation is refitted and its t
//   statistic formed with the CR1 covariance of the same clusters. The p-value is
//   symmetric: the share of draws with |t*| >= |t|, where |t*| equal to |t| within
//   relative 1e-10 counts as at least as extreme (CONVENTIONS.md, ties).
// - Clusters are those of the model's standard errors: periods under cluster-period,
//   units under every other choice (including the ones that do not cluster). Two-way
//   clustering has no single cluster dimension to draw by and is refused; so are period
//   clusters for within and random, whose transform mixes a unit's periods.
// - Fast: one O(N K) pass gathers per-cluster pieces (Z_g'u_g and Z_g'Z_g a in the
//   solver's working basis); a draw then costs O(G K) (Roodman, MacKinnon, Nielsen and
//   Webb 2019), and every draw keeps five numbers from which its t statistic follows
//   for any tested value in O(1), so the interval (the tested values whose p-value
//   exceeds 1 - level, the model's level) is found by doubling and bisection in O(B)
//   per step without redrawing.
// - Weights: Rademacher (+1/-1 with probability 1/2) enumerated over all 2^G sign
//   patterns when 2^G <= draws (draws then reports 2^G); otherwise random draws from
//   BootstrapRandom with the given seed: Webb (2023) six-point weights when the clusters
//   are few (G <= kWebbClusterLimit) and Rademacher above. The words `rademacher` and
//   `webb` choose the scheme (webb is never enumerated).
// - Deterministic: the same fit, term and settings give the same draws and numbers on
//   every call and machine (weft's own generator; sums in a fixed order).
// - Errors (weft::Error): a lean equation (no rows held), a term the model does not
//   estimate, an exact fit, fewer than 2 clusters, cluster-both, period clusters with
//   within or random; bad settings words (parse_bootstrap_settings).
//
// Stability: fields may be added; existing names and meanings do not change.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "weft/model.hpp"

namespace weft {

// xoshiro256** 1.0 (Blackman and Vigna, "Scrambled linear pseudorandom number
// generators", ACM TOMS 47(4), 2021; reference code at prng.di.unimi.it), its state
// seeded by four successive outputs of splitmix64 (Steele, Lea and Flood 2014) started
// at the seed, as the reference code recommends.
class BootstrapRandom {
public:
    explicit BootstrapRandom(std::uint64_t seed);
    // A generator with the given state (not all zero), for checking reference outputs.
    static BootstrapRandom from_state(std::uint64_t s0, std::uint64_t s1, std::uint64_t s2, std::uint64_t s3);
    std::uint64_t next();
    static std::uint64_t splitmix64(std::uint64_t& state);

private:
    std::uint64_t s_[4];
};

enum class BootstrapWeights { automatic, rademacher, webb };

// Webb weights are chosen by default when random draws are needed and G is at most
// this (common practice, no source: Webb (2023) recommends the six-point weights when
// clusters are "very few", around a dozen or fewer; from memory).
inline constexpr std::size_t kWebbClusterLimit = 12;

struct BootstrapSettings {
    std::size_t draws = 9999;           // 99 to 1,000,000
    std::uint64_t seed = 1;             // 0 to 2^53 - 1
    BootstrapWeights weights = BootstrapWeights::automatic;
    double null_value = 0;              // tested value of the term
};

// The settings words `draws=N`, `seed=S`, `rademacher`, `webb`, `null=V`, separated
// by spaces or commas, any order, case-insensitive; "" gives the defaults. Unknown,
// repeated with another value or conflicting words raise weft::Error naming the word
// and listing the accepted words.
BootstrapSettings parse_bootstrap_settings(std::string_view text);

struct BootstrapResult {
    std::string term;
    double estimate = 0;                // the model's estimate of the term
    double null_value = 0;              // tested value
    double p = 1;                       // symmetric bootstrap p-value
    double ci_low = 0;                  // interval by test inversion at `level`;
    double ci_high = 0;                 //   -inf / +inf when the test never rejects on that side
    double level = 0.95;
    std::size_t draws = 0;              // draws used (2^G when enumerated)
    BootstrapWeights weights = BootstrapWeights::rademacher;  // rademacher or webb
    bool enumerated = false;
    std::size_t clusters = 0;           // G
    bool by_period = false;             // clusters are periods (else units)
    double t = 0;                       // t statistic of the sample, CR1 by the same clusters
    std::vector<std::string> warnings;
};

BootstrapResult wild_bootstrap(const Fit& fit, std::string_view term, const BootstrapSettings& settings);

const char* to_word(BootstrapWeights w);

}  // namespace weft
