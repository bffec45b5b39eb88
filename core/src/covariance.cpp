// Covariance matrices of an estimated equation (CONVENTIONS.md "Standard errors").
//
// Every sandwich is computed in the working basis of the solver (centred, unit-length
// columns: the scores there are well scaled) and mapped back:
//   V = B meat B',  B = M^-1 R^-1 R^-T,  meat = sum of score outer products.
// Scores are summed per cluster in one O(N K) pass; the meat is then O(G K^2).
#include <algorithm>
#include <cmath>
#include <string>
#include <unordered_map>

#include <Eigen/Dense>

#include "weft/error.hpp"
#include "weft/model.hpp"
#include "internal.hpp"
#include "scaled.hpp"

namespace weft {

using Eigen::Index;
using Eigen::MatrixXd;
using Eigen::VectorXd;

namespace {

std::string number_text(double v) {
    char buffer[32];
    std::snprintf(buffer, sizeof buffer, "%.6g", v);
    return buffer;
}

// Dense ids 0..G-1 for a list of ids (>= 0); returns G.
std::size_t densify(const std::vector<std::int32_t>& ids, std::vector<std::int32_t>& dense) {
    std::int32_t max_id = -1;
    for (std::int32_t v : ids) max_id = std::max(max_id, v);
    std::vector<std::int32_t> map(static_cast<std::size_t>(max_id + 1), -1);
    dense.resize(ids.size());
    std::int32_t next = 0;
    for (std::size_t i = 0; i < ids.size(); ++i) {
        std::int32_t& m = map[static_cast<std::size_t>(ids[i])];
        if (m < 0) m = next++;
        dense[i] = m;
    }
    return static_cast<std::size_t>(next);
}

// sum_g S_g S_g' with S_g = sum over rows of cluster g of z_i u_i (working basis).
MatrixXd cluster_meat(const Equation& eq, const std::vector<std::int32_t>& cluster, std::size_t G) {
    const Index N = eq.X.rows(), K = eq.X.cols();
    // K x G: one contiguous column of score sums per cluster
    MatrixXd sums = MatrixXd::Zero(K, static_cast<Index>(G));
    MatrixXd z;
    for (Index r0 = 0; r0 < N; r0 += detail::kBlockRows) {
        const Index b = std::min(detail::kBlockRows, N - r0);
        detail::working_block(eq, r0, b, z);
        z.array().colwise() *= eq.residual.segment(r0, b).array();
        // rows of one cluster usually come in runs (equations are in unit order)
        for (Index i = 0; i < b;) {
            const std::int32_t g = cluster[static_cast<std::size_t>(r0 + i)];
            Index j = i + 1;
            while (j < b && cluster[static_cast<std::size_t>(r0 + j)] == g) ++j;
            sums.col(g) += z.middleRows(i, j - i).colwise().sum().transpose();
            i = j;
        }
    }
    return sums * sums.transpose();
}

// sum_i omega_i z_i z_i'
MatrixXd weighted_meat(const Equation& eq, const VectorXd& omega) {
    const Index N = eq.X.rows(), K = eq.X.cols();
    MatrixXd meat = MatrixXd::Zero(K, K);
    MatrixXd z, zw;
    for (Index r0 = 0; r0 < N; r0 += detail::kBlockRows) {
        const Index b = std::min(detail::kBlockRows, N - r0);
        detail::working_block(eq, r0, b, z);
        zw = z.array().colwise() * omega.segment(r0, b).array();
        meat.noalias() += zw.transpose() * z;
    }
    return meat;
}

void require_ids(const Equation& eq, const std::vector<std::int32_t>& ids, const char* what,
                 const char* covariance_word) {
    if (ids.size() != static_cast<std::size_t>(eq.X.rows()) ||
        std::any_of(ids.begin(), ids.end(), [](std::int32_t v) { return v < 0; }))
        throw Error(std::string(covariance_word) + ": the estimated equation has no " + what +
                    " for its rows (between has one row per unit); choose classical or hc0-hc3");
}

void require_clusters(std::size_t G, const char* what, const char* covariance_word) {
    if (G < 2)
        throw Error(std::string(covariance_word) + ": " + std::to_string(G) + " " + what +
                    " cluster found, at least 2 are needed; choose another standard-error word");
}

}  // namespace

namespace detail {

std::size_t dense_ids(const std::vector<std::int32_t>& ids, std::vector<std::int32_t>& dense) {
    return densify(ids, dense);
}

void require_rows(const Equation& eq, const char* what) {
    if (!eq.rows_held())
        throw Error(std::string("internal: ") + what + " needs the estimated equation's rows; this fit is "
                    "lean (fit_model_lean): fit the model with fit_model");
}

MatrixXd dk_meat(const MatrixXd& h, int lag) {
    const Index grid = h.rows();
    MatrixXd meat = h.transpose() * h;
    for (int j = 1; j <= lag && j < grid; ++j) {
        const Index rows = grid - j;
        MatrixXd gamma = h.bottomRows(rows).transpose() * h.topRows(rows);
        meat += (1.0 - static_cast<double>(j) / (lag + 1.0)) * (gamma + gamma.transpose());
    }
    return meat;
}

int dk_default_lag(std::size_t periods) {
    return static_cast<int>(std::floor(std::pow(static_cast<double>(periods), 0.25)));
}

CovarianceResult covariance_from_meat(const Equation& eq, Covariance kind, const MatrixXd& meat,
                                      std::size_t clusters, int lag) {
    CovarianceResult out;
    out.kind = kind;
    const double n_d = static_cast<double>(eq.nobs()), k_d = static_cast<double>(eq.n_terms());
    const double df_resid = eq.df_residual();
    const std::string resid_rule = eq.absorbed > 0 ? "N-n-K" : "N-K";
    if (!(df_resid > 0))
        throw Error("the estimated equation has " + std::to_string(eq.nobs()) + " rows for " +
                    std::to_string(eq.n_terms()) + " terms" +
                    (eq.absorbed > 0 ? " and " + std::to_string(eq.absorbed) + " unit effects" : std::string()) +
                    ": there must be more rows than terms");
    if (kind == Covariance::classical) {
        out.matrix = (eq.ssr / df_resid) * eq.xtx_inverse;
        out.df = df_resid;
        out.df_rule = resid_rule;
        out.factor_rule = "s^2 = SSR/(" + resid_rule + ")";
        out.label = "classical";
        return out;
    }
    const MatrixXd r_inv = r_inverse(eq);
    const MatrixXd bread = working_to_original(eq) * r_inv * r_inv.transpose();
    MatrixXd v = bread * meat * bread.transpose();
    out.matrix = 0.5 * (v + v.transpose());
    switch (kind) {
        case Covariance::hc0:
        case Covariance::hc1:
        case Covariance::hc2:
        case Covariance::hc3:
            if (kind == Covariance::hc1) {
                out.factor = n_d / df_resid;
                out.factor_rule = "N/(" + resid_rule + ")";
                out.matrix *= out.factor;
            }
            out.df = df_resid;
            out.df_rule = resid_rule;
            out.label = to_word(kind);
            break;
        case Covariance::cluster:
        case Covariance::cluster0:
        case Covariance::cluster_period: {
            const bool by_period = kind == Covariance::cluster_period;
            const double g_d = static_cast<double>(clusters);
            if (kind != Covariance::cluster0) {
                // Unit effects are nested in unit clusters and not counted in K
                // (Cameron & Miller 2015); the reference values count them the same way
                // for period clusters, so K here is always the estimated terms.
                out.factor = g_d / (g_d - 1.0) * (n_d - 1.0) / (n_d - k_d);
                out.factor_rule = "G/(G-1) * (N-1)/(N-K)";
                out.matrix *= out.factor;
            }
            out.clusters = clusters;
            out.df = g_d - 1.0;
            out.df_rule = by_period ? "G_period-1" : "G-1";
            out.label = by_period ? "cluster by period (CR1)"
                                  : (kind == Covariance::cluster ? "cluster by unit (CR1)" : "cluster by unit (CR0)");
            break;
        }
        case Covariance::dk:
            out.clusters = clusters;
            out.dk_lag = lag;
            out.df = static_cast<double>(clusters) - 1.0;
            out.df_rule = "T-1";
            out.factor_rule = "none (Bartlett weights 1 - j/(L+1))";
            out.label = "Driscoll-Kraay, lag " + std::to_string(lag);
            break;
        default:
            throw Error("internal: covariance_from_meat does not build " + std::string(to_word(kind)));
    }
    return out;
}

}  // namespace detail

namespace {

// The working-basis bread B = M^-1 R^-1 R^-T; V = B meat B', symmetrised.
MatrixXd sandwich(const Equation& eq, const MatrixXd& meat) {
    const MatrixXd r_inv = detail::r_inverse(eq);
    const MatrixXd bread = detail::working_to_original(eq) * r_inv * r_inv.transpose();
    MatrixXd v = bread * meat * bread.transpose();
    return MatrixXd(0.5 * (v + v.transpose()));
}

// hc0-hc3: meat sum_i omega_i z_i z_i' with omega_i = u_i^2 (hc2: / (1 - h_ii), hc3:
// / (1 - h_ii)^2; a row of leverage 1 is left out, with a warning).
CovarianceResult hc_covariance(const Equation& eq, Covariance kind) {
    const Index N = eq.X.rows();
    VectorXd omega = eq.residual.array().square();
    std::size_t full_leverage = 0;
    if (kind == Covariance::hc2 || kind == Covariance::hc3) {
        const VectorXd h = leverages(eq);
        for (Index i = 0; i < N; ++i) {
            const double one_minus = 1.0 - h[i];
            if (one_minus <= kFullLeverage) {
                // the row is fitted exactly (e.g. the only row of a period
                // indicator); its residual is 0 and it carries no information
                omega[i] = 0.0;
                ++full_leverage;
            } else {
                omega[i] /= (kind == Covariance::hc2) ? one_minus : one_minus * one_minus;
            }
        }
    }
    CovarianceResult out = detail::covariance_from_meat(eq, kind, weighted_meat(eq, omega), 0, -1);
    if (full_leverage > 0)
        out.warnings.push_back(std::to_string(full_leverage) +
                               " rows have leverage 1 and were left out of the hc2/hc3 sum");
    return out;
}

// cluster, cluster0 (by unit), cluster-period: meat sum_g S_g S_g'.
CovarianceResult one_way_covariance(const Equation& eq, Covariance kind) {
    const bool by_period = kind == Covariance::cluster_period;
    const char* word = to_word(kind);
    const std::vector<std::int32_t>& ids = by_period ? eq.period : eq.unit;
    require_ids(eq, ids, by_period ? "periods" : "units", word);
    std::vector<std::int32_t> dense;
    const std::size_t G = densify(ids, dense);
    require_clusters(G, by_period ? "period" : "unit", word);
    return detail::covariance_from_meat(eq, kind, cluster_meat(eq, dense, G), G, -1);
}

// cluster-both (Cameron, Gelbach & Miller 2011): unit + period - intersection meats,
// factor on G_min, negative eigenvalues clipped to 0.
CovarianceResult two_way_covariance(const Equation& eq) {
    const Covariance kind = Covariance::cluster_both;
    const Index N = eq.X.rows(), K = eq.X.cols();
    const double n_d = static_cast<double>(N), k_d = static_cast<double>(K);
    CovarianceResult out;
    out.kind = kind;
    const char* word = to_word(kind);
    require_ids(eq, eq.unit, "units", word);
    require_ids(eq, eq.period, "periods", word);
    std::vector<std::int32_t> unit_dense, period_dense;
    const std::size_t G_unit = densify(eq.unit, unit_dense);
    const std::size_t G_period = densify(eq.period, period_dense);
    require_clusters(G_unit, "unit", word);
    require_clusters(G_period, "period", word);
    // intersection cells (one row each in a panel without repeated pairs)
    std::vector<std::int32_t> cell(static_cast<std::size_t>(N));
    std::unordered_map<std::int64_t, std::int32_t> cell_id;
    for (std::size_t i = 0; i < cell.size(); ++i) {
        const std::int64_t key = (static_cast<std::int64_t>(unit_dense[i]) << 32) | period_dense[i];
        auto it = cell_id.emplace(key, static_cast<std::int32_t>(cell_id.size())).first;
        cell[i] = it->second;
    }
    const MatrixXd one_way = cluster_meat(eq, unit_dense, G_unit) + cluster_meat(eq, period_dense, G_period);
    MatrixXd v = sandwich(eq, one_way - cluster_meat(eq, cell, cell_id.size()));
    // the scale of the clipping decision: V_unit + V_period, positive where V's own
    // diagonal can cancel
    const VectorXd reference = sandwich(eq, one_way).diagonal();
    const std::size_t G_min = std::min(G_unit, G_period);
    const double g_d = static_cast<double>(G_min);
    out.factor = g_d / (g_d - 1.0) * (n_d - 1.0) / (n_d - k_d);
    out.factor_rule = "G_min/(G_min-1) * (N-1)/(N-K)";
    v *= out.factor;
    // Decided and clipped in the scaled basis D V D, D = diag(V_unit + V_period)^-1/2
    // (weft/tolerances.hpp): Cameron, Gelbach and Miller's (2011, section 2.3) rule, the
    // negative eigenvalues set to 0, taken where it does not depend on units. In V's own
    // units (as R sandwich's vcovCL(fix = TRUE) does) the clip would change with the
    // units of a regressor (a joint test could compute in one unit and not in another),
    // and on regressors of very different size its small variances would be lost to the
    // rounding of the large ones.
    const detail::ScaledEigen scaled = detail::scaled_eigen(v, reference);
    out.min_eigenvalue = Eigen::SelfAdjointEigenSolver<MatrixXd>(v, Eigen::EigenvaluesOnly).eigenvalues().minCoeff();
    out.min_scaled_eigenvalue = scaled.largest > 0 ? scaled.lambda.minCoeff() / scaled.largest : 0.0;
    if (out.min_scaled_eigenvalue < -kClipTolerance) {
        v = scaled.rebuild(true);
        out.clipped = true;
        out.warnings.push_back("cluster-both: the two-way covariance was not positive semi-definite "
                               "(smallest eigenvalue " + number_text(out.min_scaled_eigenvalue) +
                               " of the largest, in the basis of unit variances); its negative "
                               "eigenvalues there were set to 0");
    }
    out.matrix = v;
    out.clusters = G_min;
    out.df = g_d - 1.0;
    out.df_rule = "G_min-1";
    out.label = "cluster by unit and period (two-way)";
    return out;
}

// dk (Driscoll & Kraay 1998): per-period score sums h_t, indexed by grid position so
// that t - j is j grid steps earlier, with Bartlett weights.
CovarianceResult dk_covariance(const Equation& eq, int dk_lag) {
    const Index N = eq.X.rows(), K = eq.X.cols();
    require_ids(eq, eq.period, "periods", "dk");
    std::int32_t max_period = -1;
    for (std::int32_t v : eq.period) max_period = std::max(max_period, v);
    const std::size_t grid = static_cast<std::size_t>(max_period) + 1;
    MatrixXd h = MatrixXd::Zero(static_cast<Index>(grid), K);
    std::vector<std::uint8_t> present(grid, 0);
    MatrixXd z;
    for (Index r0 = 0; r0 < N; r0 += detail::kBlockRows) {
        const Index b = std::min(detail::kBlockRows, N - r0);
        detail::working_block(eq, r0, b, z);
        z.array().colwise() *= eq.residual.segment(r0, b).array();
        for (Index i = 0; i < b; ++i) {
            const std::size_t t = static_cast<std::size_t>(eq.period[static_cast<std::size_t>(r0 + i)]);
            h.row(static_cast<Index>(t)) += z.row(i);
            present[t] = 1;
        }
    }
    std::size_t T = 0;
    for (std::uint8_t v : present) T += v;
    require_clusters(T, "period", "dk");
    const int lag = dk_lag < 0 ? detail::dk_default_lag(T) : dk_lag;
    return detail::covariance_from_meat(eq, Covariance::dk, detail::dk_meat(h, lag), T, lag);
}

}  // namespace

// The one dispatch of the covariance families (full route); a new family is a new case
// here (and, if the streaming route takes it, a meat in lean.cpp's ScorePass).
CovarianceResult compute_covariance(const Equation& eq, Covariance kind, int dk_lag) {
    detail::require_rows(eq, "this covariance");
    const Index N = eq.X.rows(), K = eq.X.cols();
    const double df_resid = eq.df_residual();
    const bool absorbs = eq.absorbed > 0;
    if (!(df_resid > 0))
        throw Error("the estimated equation has " + std::to_string(N) + " rows for " + std::to_string(K) +
                    " terms" + (absorbs ? " and " + std::to_string(eq.absorbed) + " unit effects" : std::string()) +
                    ": there must be more rows than terms");
    switch (kind) {
        case Covariance::classical:
            return detail::covariance_from_meat(eq, kind, MatrixXd(), 0, -1);
        case Covariance::hc0:
        case Covariance::hc1:
        case Covariance::hc2:
        case Covariance::hc3:
            return hc_covariance(eq, kind);
        case Covariance::cluster:
        case Covariance::cluster0:
        case Covariance::cluster_period:
            return one_way_covariance(eq, kind);
        case Covariance::cluster_both:
            return two_way_covariance(eq);
        case Covariance::dk:
            return dk_covariance(eq, dk_lag);
        case Covariance::cr2:
            return detail::cr2_covariance(eq);
    }
    throw Error("internal: unknown covariance");
}

}  // namespace weft
