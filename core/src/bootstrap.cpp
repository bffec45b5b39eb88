// The restricted wild cluster bootstrap-t of one term (CONVENTIONS.md "Few clusters").
//
// Algebra (Roodman, MacKinnon, Nielsen and Webb 2019, section 5, in our notation). In
// the solver's working basis Z (X = Z M) the tested coefficient is c'b with
// c = M^-T e_j; A = (Z'Z)^-1, a = A c, q = c'a. For a tested value r let
// d = (c'b - r) / q: the restricted estimate is b~ = b - a d and its residuals
// u~ = u + Z a d, so per cluster s_g(d) = Z_g'u~_g = p_g + w_g d with p_g = Z_g'u_g and
// w_g = Z_g'Z_g a. A draw with weights v (one per cluster) gives
//   numerator   c'(b* - b~) = sum_g (a's_g) v_g = n0 + d n1,
//   score of g  a'Z_g'u*_g  = v_g a's_g - w_g'A S v = alpha_g + d beta_g,
// so t*(d)^2 = (n0 + d n1)^2 / sum_g (alpha_g + d beta_g)^2 up to the CR1 factor, which
// cancels against the sample's t(d)^2 = (q d)^2 / sum_g (a'p_g)^2. Each draw keeps
// (n0, n1, sum alpha^2, sum alpha beta, sum beta^2): five numbers that give its t for
// every tested value, so the interval needs no new draws.
#include <algorithm>
#include <cctype>
#include <cmath>
#include <limits>
#include <string>
#include <vector>

#include <Eigen/Dense>

#include "weft/bootstrap.hpp"
#include "weft/error.hpp"
#include "internal.hpp"

namespace weft {

using Eigen::Index;
using Eigen::MatrixXd;
using Eigen::VectorXd;

// ---- the generator -----------------------------------------------------------------

std::uint64_t BootstrapRandom::splitmix64(std::uint64_t& state) {
    std::uint64_t z = (state += 0x9e3779b97f4a7c15ULL);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
    return z ^ (z >> 31);
}

BootstrapRandom::BootstrapRandom(std::uint64_t seed) {
    std::uint64_t state = seed;
    for (std::uint64_t& s : s_) s = splitmix64(state);
}

BootstrapRandom BootstrapRandom::from_state(std::uint64_t s0, std::uint64_t s1, std::uint64_t s2,
                                            std::uint64_t s3) {
    BootstrapRandom r(0);
    r.s_[0] = s0;
    r.s_[1] = s1;
    r.s_[2] = s2;
    r.s_[3] = s3;
    return r;
}

std::uint64_t BootstrapRandom::next() {
    const auto rotl = [](std::uint64_t x, int k) { return (x << k) | (x >> (64 - k)); };
    const std::uint64_t result = rotl(s_[1] * 5, 7) * 9;
    const std::uint64_t t = s_[1] << 17;
    s_[2] ^= s_[0];
    s_[3] ^= s_[1];
    s_[1] ^= s_[2];
    s_[0] ^= s_[3];
    s_[2] ^= t;
    s_[3] = rotl(s_[3], 45);
    return result;
}

const char* to_word(BootstrapWeights w) {
    switch (w) {
        case BootstrapWeights::automatic: return "automatic";
        case BootstrapWeights::rademacher: return "rademacher";
        case BootstrapWeights::webb: return "webb";
    }
    return "automatic";
}

namespace {

// ---- the pieces of the fit ---------------------------------------------------------

struct Pieces {
    std::size_t G = 0;
    MatrixXd A;          // (Z'Z)^-1, K x K
    MatrixXd P, W;       // K x G: p_g = Z_g'u_g and w_g = Z_g'Z_g a
    VectorXd c0, c1;     // G: a'p_g and a'w_g
    double q = 0;        // c'A c
    double s0 = 0;       // sum_g (a'p_g)^2 (CR0 variance of c'b)
};

// Dense cluster numbers 0..G-1 in increasing order of the ids (so the order of the
// weights never depends on the order of the rows).
std::size_t sorted_clusters(const std::vector<std::int32_t>& ids, std::vector<std::int32_t>& dense) {
    std::int32_t max_id = -1;
    for (std::int32_t v : ids) max_id = std::max(max_id, v);
    std::vector<std::int32_t> map(static_cast<std::size_t>(max_id + 1), -1);
    for (std::int32_t v : ids) map[static_cast<std::size_t>(v)] = 0;
    std::int32_t next = 0;
    for (std::int32_t& m : map)
        if (m == 0) m = next++;
    dense.resize(ids.size());
    for (std::size_t i = 0; i < ids.size(); ++i) dense[i] = map[static_cast<std::size_t>(ids[i])];
    return static_cast<std::size_t>(next);
}

Pieces gather_pieces(const Equation& eq, Index j, const std::vector<std::int32_t>& cluster, std::size_t G) {
    const Index K = static_cast<Index>(eq.n_terms()), N = eq.X.rows();
    Pieces pc;
    pc.G = G;
    const MatrixXd r_inv = detail::r_inverse(eq);
    pc.A = r_inv * r_inv.transpose();
    const VectorXd c = detail::working_to_original(eq).row(j).transpose();
    const VectorXd a = pc.A * c;
    pc.q = c.dot(a);
    pc.P = MatrixXd::Zero(K, static_cast<Index>(G));
    pc.W = MatrixXd::Zero(K, static_cast<Index>(G));
    MatrixXd z;
    VectorXd za;
    for (Index r0 = 0; r0 < N; r0 += detail::kBlockRows) {
        const Index b = std::min(detail::kBlockRows, N - r0);
        detail::working_block(eq, r0, b, z);
        za = z * a;
        for (Index i = 0; i < b;) {  // rows of one cluster usually come in runs
            const std::int32_t g = cluster[static_cast<std::size_t>(r0 + i)];
            Index k = i + 1;
            while (k < b && cluster[static_cast<std::size_t>(r0 + k)] == g) ++k;
            const auto rows = z.middleRows(i, k - i);
            pc.P.col(g).noalias() += rows.transpose() * eq.residual.segment(r0 + i, k - i);
            pc.W.col(g).noalias() += rows.transpose() * za.segment(i, k - i);
            i = k;
        }
    }
    pc.c0 = pc.P.transpose() * a;
    pc.c1 = pc.W.transpose() * a;
    pc.s0 = pc.c0.squaredNorm();
    return pc;
}

// ---- the draws ---------------------------------------------------------------------

struct DrawStats {
    std::vector<double> n0, n1, a2, ab, b2;
};

// Weights of one draw into v. Enumerated draw b: v_g = -1 where bit g of b is set
// (draw 0 is all +1). Random Rademacher: bit g mod 64 of the (g div 64)-th output of
// this draw. Webb: successive 3-bit pieces (lowest first, 21 per output) of the draw's
// outputs, a piece of 6 or 7 discarded, 0..5 mapped to -sqrt(3/2), -1, -sqrt(1/2),
// sqrt(1/2), 1, sqrt(3/2).
void draw_weights(BootstrapWeights scheme, bool enumerated, std::uint64_t b, BootstrapRandom& rng,
                  std::vector<double>& v) {
    static const double webb[6] = {-std::sqrt(1.5), -1.0, -std::sqrt(0.5), std::sqrt(0.5), 1.0, std::sqrt(1.5)};
    const std::size_t G = v.size();
    if (enumerated) {
        for (std::size_t g = 0; g < G; ++g) v[g] = ((b >> g) & 1U) ? -1.0 : 1.0;
    } else if (scheme == BootstrapWeights::rademacher) {
        std::uint64_t word = 0;
        for (std::size_t g = 0; g < G; ++g) {
            if (g % 64 == 0) word = rng.next();
            v[g] = ((word >> (g % 64)) & 1U) ? -1.0 : 1.0;
        }
    } else {
        std::uint64_t word = 0;
        int pieces = 0;
        for (std::size_t g = 0; g < G;) {
            if (pieces == 0) {
                word = rng.next();
                pieces = 21;
            }
            const unsigned piece = static_cast<unsigned>(word & 7U);
            word >>= 3;
            --pieces;
            if (piece < 6) v[g++] = webb[piece];
        }
    }
}

// Plain loops in a fixed order, so that every machine sums the same way.
DrawStats run_draws(const Pieces& pc, std::size_t draws, BootstrapWeights scheme, bool enumerated,
                    std::uint64_t seed) {
    const std::size_t G = pc.G;
    const Index K = pc.A.rows();
    DrawStats s;
    for (auto* x : {&s.n0, &s.n1, &s.a2, &s.ab, &s.b2}) x->resize(draws);
    BootstrapRandom rng(seed);
    std::vector<double> v(G);
    VectorXd sp(K), sw(K), mp(K), mw(K);
    for (std::size_t b = 0; b < draws; ++b) {
        draw_weights(scheme, enumerated, b, rng, v);
        sp.setZero();
        sw.setZero();
        double n0 = 0, n1 = 0;
        for (std::size_t g = 0; g < G; ++g) {
            const Index gi = static_cast<Index>(g);
            for (Index k = 0; k < K; ++k) {
                sp[k] += pc.P(k, gi) * v[g];
                sw[k] += pc.W(k, gi) * v[g];
            }
            n0 += pc.c0[gi] * v[g];
            n1 += pc.c1[gi] * v[g];
        }
        for (Index k = 0; k < K; ++k) {
            double x = 0, y = 0;
            for (Index l = 0; l < K; ++l) {
                x += pc.A(k, l) * sp[l];
                y += pc.A(k, l) * sw[l];
            }
            mp[k] = x;
            mw[k] = y;
        }
        double a2 = 0, ab = 0, b2 = 0;
        for (std::size_t g = 0; g < G; ++g) {
            const Index gi = static_cast<Index>(g);
            double wp = 0, ww = 0;
            for (Index k = 0; k < K; ++k) {
                wp += pc.W(k, gi) * mp[k];
                ww += pc.W(k, gi) * mw[k];
            }
            const double alpha = v[g] * pc.c0[gi] - wp;
            const double beta = v[g] * pc.c1[gi] - ww;
            a2 += alpha * alpha;
            ab += alpha * beta;
            b2 += beta * beta;
        }
        s.n0[b] = n0;
        s.n1[b] = n1;
        s.a2[b] = a2;
        s.ab[b] = ab;
        s.b2[b] = b2;
    }
    return s;
}

// Draws with |t*(d)| >= |t(d)| (1 - 1e-10), compared without division so that a draw
// with no variance counts as extreme.
std::size_t extreme_count(const DrawStats& s, const Pieces& pc, double d) {
    constexpr double tie = (1.0 - 1e-10) * (1.0 - 1e-10);
    const double sample = (pc.q * d) * (pc.q * d) * tie;
    std::size_t count = 0;
    const std::size_t B = s.n0.size();
    for (std::size_t b = 0; b < B; ++b) {
        const double num = s.n0[b] + d * s.n1[b];
        const double den = std::max(0.0, s.a2[b] + d * (2.0 * s.ab[b] + d * s.b2[b]));
        count += (num * num * pc.s0 >= sample * den) ? 1U : 0U;
    }
    return count;
}

// One end of the interval: from the estimate outwards (direction +1 or -1) by doubling
// steps until the test rejects, then bisection down to adjacent doubles. Returns the
// last value not rejected, or +-infinity when no value within 2^64 std errors is.
double interval_end(const DrawStats& s, const Pieces& pc, double estimate, double direction,
                    double threshold) {
    const auto kept = [&](double r) { return static_cast<double>(extreme_count(s, pc, (estimate - r) / pc.q)) >= threshold; };
    double step = 2.0 * std::sqrt(pc.s0);
    double inside = estimate, outside = estimate + direction * step;
    int doublings = 0;
    while (kept(outside)) {
        if (++doublings > 64) return direction * std::numeric_limits<double>::infinity();
        inside = outside;
        step *= 2.0;
        outside = estimate + direction * step;
    }
    for (int i = 0; i < 200; ++i) {
        const double mid = inside + 0.5 * (outside - inside);
        if (mid == inside || mid == outside) break;
        (kept(mid) ? inside : outside) = mid;
    }
    return inside;
}

// ---- settings ----------------------------------------------------------------------

const char* const kAcceptedWords = "draws=N (99 to 1000000), seed=S (a whole number), rademacher, webb, null=V";

[[noreturn]] void bad_word(const std::string& word, const std::string& why) {
    throw Error("bootstrap settings: " + why + " \"" + word + "\"; the accepted words are " + kAcceptedWords);
}

double number_after(const std::string& word, std::size_t at) {
    const std::string text = word.substr(at);
    char* end = nullptr;
    const double v = text.empty() ? std::nan("") : std::strtod(text.c_str(), &end);
    if (text.empty() || end == nullptr || *end != '\0' || !std::isfinite(v))
        bad_word(word, "no number after the = sign in");
    return v;
}

std::size_t whole_number(const std::string& word, std::size_t at, double low, double high, const char* range) {
    const double v = number_after(word, at);
    if (v != std::floor(v) || v < low || v > high)
        throw Error("bootstrap settings: \"" + word + "\" needs " + range);
    return static_cast<std::size_t>(v);
}

}  // namespace

BootstrapSettings parse_bootstrap_settings(std::string_view text) {
    BootstrapSettings s;
    std::vector<std::string> seen;
    std::string word;
    const auto apply = [&](const std::string& w) {
        const std::string key = w.substr(0, w.find('='));
        const bool is_scheme = w == "rademacher" || w == "webb";
        for (const std::string& old : seen) {
            const std::string old_key = old.substr(0, old.find('='));
            if (old == w) return;
            if (old_key == key || (is_scheme && (old == "rademacher" || old == "webb")))
                bad_word(w, "\"" + old + "\" conflicts with");
        }
        seen.push_back(w);
        if (w == "rademacher") s.weights = BootstrapWeights::rademacher;
        else if (w == "webb") s.weights = BootstrapWeights::webb;
        else if (key == "draws" && w.size() > key.size())
            s.draws = whole_number(w, 6, 99, 1e6, "a whole number of draws from 99 to 1000000");
        else if (key == "seed" && w.size() > key.size())
            s.seed = whole_number(w, 5, 0, 9007199254740991.0, "a whole number from 0 to 9007199254740991");
        else if (key == "null" && w.size() > key.size())
            s.null_value = number_after(w, 5);
        else
            bad_word(w, "unknown word");
    };
    for (std::size_t i = 0; i <= text.size(); ++i) {
        const char ch = i < text.size() ? text[i] : ' ';
        if (ch == ' ' || ch == ',' || ch == '\t' || ch == ';') {
            if (!word.empty()) apply(word);
            word.clear();
        } else {
            word += static_cast<char>(std::tolower(static_cast<unsigned char>(ch)));
        }
    }
    return s;
}

namespace {

std::size_t term_column(const Fit& fit, std::string_view term) {
    if (const auto pos = fit.term_position(term)) return *pos;
    for (const auto& d : fit.dropped)
        if (d.name == term)
            throw Error("bootstrap: term \"" + std::string(term) + "\" is not estimated by this model (" +
                        d.message + "); choose another term");
    std::string known;
    for (const auto& t : fit.equation.terms) known += (known.empty() ? "" : ", ") + t;
    throw Error("bootstrap: the model has no term \"" + std::string(term) + "\"; its terms are: " + known);
}

// Cluster dimension of the model's standard errors (units unless cluster-period).
bool clusters_by_period(const Fit& fit) {
    const Covariance kind = fit.spec.covariance;
    const Estimator est = fit.spec.estimator;
    if (kind == Covariance::cluster_both)
        throw Error("bootstrap: the model clusters by unit and period together, and the bootstrap draws by "
                    "one dimension; use \"cluster\" (units) or \"cluster-period\" in the model text");
    if (kind != Covariance::cluster_period) return false;
    if (est == Estimator::within || est == Estimator::random)
        throw Error(std::string("bootstrap: period clusters with ") + to_word(est) +
                    " are not available (its transform mixes the periods of a unit); use \"cluster\" "
                    "(units) in the model text, or the pooled estimator with period clusters");
    return true;
}

}  // namespace

BootstrapResult wild_bootstrap(const Fit& fit, std::string_view term, const BootstrapSettings& settings) {
    const Equation& eq = fit.equation;
    const std::size_t j = term_column(fit, term);
    detail::require_rows(eq, "the bootstrap");
    detail::refuse_weighted(eq, "bootstrap", "use the cluster standard errors of the weighted fit");
    BootstrapResult r;
    r.by_period = clusters_by_period(fit);
    const std::vector<std::int32_t>& ids = r.by_period ? eq.period : eq.unit;
    if (ids.size() != eq.nobs())
        throw Error("bootstrap: the estimated equation has no cluster ids; fit the model from a panel");
    if (fit.exact_fit)
        throw Error("bootstrap: the model fits every row exactly, so no t statistic is defined; "
                    "check the regressors");
    std::vector<std::int32_t> cluster;
    r.clusters = sorted_clusters(ids, cluster);
    if (r.clusters < 2)
        throw Error(std::string("bootstrap: the estimated equation has 1 ") + (r.by_period ? "period" : "unit") +
                    "; the bootstrap needs at least 2 clusters");
    const Pieces pc = gather_pieces(eq, static_cast<Index>(j), cluster, r.clusters);
    if (!(pc.s0 > 0) || !(pc.q > 0))
        throw Error("bootstrap: the cluster std error of \"" + std::string(term) +
                    "\" is 0, so no t statistic is defined");

    const std::size_t G = r.clusters;
    r.weights = settings.weights == BootstrapWeights::automatic
                    ? (G <= 62 && (std::size_t{1} << G) <= settings.draws) || G > kWebbClusterLimit
                          ? BootstrapWeights::rademacher
                          : BootstrapWeights::webb
                    : settings.weights;
    r.enumerated = r.weights == BootstrapWeights::rademacher && G <= 62 && (std::size_t{1} << G) <= settings.draws;
    r.draws = r.enumerated ? (std::size_t{1} << G) : settings.draws;
    const DrawStats stats = run_draws(pc, r.draws, r.weights, r.enumerated, settings.seed);

    r.term = std::string(term);
    r.estimate = eq.coef[static_cast<Index>(j)];
    r.null_value = settings.null_value;
    r.level = fit.spec.level;
    const double k = static_cast<double>(G) / static_cast<double>(G - 1) *
                     (static_cast<double>(eq.nobs()) - 1.0) / (static_cast<double>(eq.nobs()) - static_cast<double>(eq.n_terms()));
    r.t = (r.estimate - r.null_value) / std::sqrt(k * pc.s0);
    const double B = static_cast<double>(r.draws);
    r.p = static_cast<double>(extreme_count(stats, pc, (r.estimate - r.null_value) / pc.q)) / B;
    // Not rejected at level 1 - level: a share of extreme draws of at least 1 - level
    // (the factor keeps 1 - 0.95 = 0.05000000000000004 from moving the count by one).
    const double threshold = (1.0 - r.level) * B * (1.0 - 1e-12);
    r.ci_low = interval_end(stats, pc, r.estimate, -1.0, threshold);
    r.ci_high = interval_end(stats, pc, r.estimate, 1.0, threshold);
    if (r.enumerated && G < 10)
        r.warnings.push_back("only " + std::to_string(r.draws) + " sign patterns with " + std::to_string(G) +
                             " clusters: p-values move in steps of 2/" + std::to_string(r.draws) +
                             "; the settings word webb gives finer steps");
    if (!std::isfinite(r.ci_low) || !std::isfinite(r.ci_high))
        r.warnings.push_back("the test rejects no value on one side at this level, so the interval is unbounded "
                             "there (too few clusters or sign patterns); try the settings word webb");
    return r;
}

}  // namespace weft
