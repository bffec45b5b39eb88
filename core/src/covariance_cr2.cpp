// The bias-reduced cluster covariance CR2 by unit (CONVENTIONS.md "Few clusters"):
// Bell and McCaffrey (2002), with the small-sample tests of Pustejovsky and Tipton
// (2018): Satterthwaite df per term and the HTZ approximation for joint tests.
//
// Notation. Working design Z = Q R (Q N x K with orthonormal columns, never formed
// whole); Q_g = Z_g R^-1 are the rows of cluster g. H_gg = Q_g Q_g'. With the cluster
// Gram C_g = Q_g' Q_g = V diag(lambda) V' (K x K, 0 <= lambda <= 1):
//   I - H_gg has eigenvalue 1 - lambda_j along Q_g v_j and 1 on the rest, so
//   A_g = (I - H_gg)^{+1/2} acts as f_j = (1 - lambda_j)^-1/2 (0 where 1 - lambda_j
//   <= 1e-10, the pseudo-inverse; the same leverage rule as hc2) on range(Q_g), and
//   Q_g' A_g e_g = V diag(f) V' Q_g' e_g.
// So a cluster needs only its K x K Gram and the K-vector Q_g' e_g: O(n_g K^2 + K^3),
// never an n_g x n_g matrix; the total is O(N K^2 + G K^3) time and O(K^3) memory.
//
// Absorbed unit effects (within). The corrected way (Pustejovsky and Tipton 2018,
// corrected Theorem 2, JBES 2023, doi:10.1080/07350015.2023.2174123) takes H from the
// full design [X, unit indicators]: I - H_gg = I - Q_g Q_g' - s s'/(s's), s the unit's
// indicator column (scaled rows: sqrt(w)). The demeaned Q_g and the residuals e_g are
// orthogonal to s, so s is an eigenvector of eigenvalue 0, the pseudo-inverse square
// root sends it to 0, and on the rest A_g is as above: the formulas below are the
// full-design ones. They equal the absorbed shortcut here because the estimated
// equation is OLS on its (possibly weight-scaled) rows, the case in which the
// corrected theorem holds; tests check both against the explicit dummy-variable fit.
//
// Weights. A weighted fit's equation holds the rows sqrt(w_i) [x_i, y_i] (fit_weights.cpp),
// and everything here works on those rows: A_g is the symmetric inverse square root of
// I - H_gg of the scaled design, the working model Phi = I in the scaled rows, i.e.
// Var(u_i) proportional to 1/w_i (precision weights), and scaling every weight by one
// number changes nothing. This is clubSandwich's CR2 of the scaled equation fitted as an
// unweighted lm (tests/data/panel/cr2_reference.R). Pustejovsky and Tipton (2018) take
// the square root in the original rows instead (A_g = D_g' B_g^-1/2 D_g, D_g'D_g =
// Phi_g = W_g^-1, clubSandwich's inverse_var = TRUE on the weighted lm), which needs the
// n_g x n_g matrix W_g^-1 (I - H_gg) W_g^-1 and differs from this when the weights vary
// within a cluster; both are unbiased under the working model.
//
// Satterthwaite (Pustejovsky and Tipton 2018, eqs. 8-11, working model Phi = I): for a
// contrast with working vector delta (c'V c = sum_g (delta' Q_g' A_g e_g)^2),
//   a_g = A_g Q_g delta, h_g = Q_g' a_g = Gamma_g delta, Gamma_g = V diag(lambda f) V',
//   a_g' a_g = delta' Omega_g delta, Omega_g = V diag(lambda f^2) V',
//   P_gh = [g = h] a_g' a_g - h_g' h_h,  df = (tr P)^2 / ||P||_F^2,
// with ||P||^2 = sum_g (w_g^2 - 2 w_g h_g'h_g) + ||sum_g h_g h_g'||_F^2 (w_g = a_g'a_g).
#include <algorithm>
#include <cmath>
#include <limits>
#include <string>
#include <vector>

#include <Eigen/Dense>

#include "weft/distributions.hpp"
#include "weft/error.hpp"
#include "weft/model.hpp"
#include "weft/spec.hpp"
#include "internal.hpp"
#include "scaled.hpp"

namespace weft::detail {

using Eigen::Index;
using Eigen::MatrixXd;
using Eigen::VectorXd;

namespace {

// 1 - lambda at or below kFullLeverage (weft/tolerances.hpp) is a leverage-1 direction
// (as hc2's rule for a row).

// One cluster's pieces in Q-coordinates.
struct ClusterPieces {
    MatrixXd vectors;   // V (K x K)
    VectorXd lambda;    // eigenvalues of Q_g'Q_g
    VectorXd f;         // (1 - lambda)^-1/2, 0 for leverage 1
    VectorXd qe;        // Q_g' e_g
    bool full_leverage = false;
};

// Rows of each cluster (dense ids 0..G-1), clusters in order of first appearance.
struct ClusterRows {
    std::vector<std::size_t> start;  // G + 1
    std::vector<Index> rows;         // N, grouped by cluster, in equation order within
};

ClusterRows group_rows(const std::vector<std::int32_t>& dense, std::size_t G) {
    ClusterRows out;
    out.start.assign(G + 1, 0);
    for (std::int32_t g : dense) ++out.start[static_cast<std::size_t>(g) + 1];
    for (std::size_t g = 0; g < G; ++g) out.start[g + 1] += out.start[g];
    out.rows.resize(dense.size());
    std::vector<std::size_t> next(out.start.begin(), out.start.end() - 1);
    for (std::size_t i = 0; i < dense.size(); ++i) out.rows[next[static_cast<std::size_t>(dense[i])]++] = static_cast<Index>(i);
    return out;
}

// Calls visit(pieces) for every cluster. Rows of a cluster that are consecutive in the
// equation (the usual case: equations are in unit order) are read in blocks.
template <typename Visit>
void for_each_cluster(const Equation& eq, const ClusterRows& groups, const MatrixXd& r_inv, Visit visit) {
    const Index K = eq.X.cols();
    MatrixXd z, q, gram(K, K);
    VectorXd qe(K);
    ClusterPieces p;
    Eigen::SelfAdjointEigenSolver<MatrixXd> eig(K);
    for (std::size_t g = 0; g + 1 < groups.start.size(); ++g) {
        gram.setZero();
        qe.setZero();
        std::size_t k = groups.start[g];
        const std::size_t end = groups.start[g + 1];
        while (k < end) {
            // the longest run of consecutive rows, at most kBlockRows
            const Index first = groups.rows[k];
            std::size_t j = k + 1;
            while (j < end && groups.rows[j] == groups.rows[j - 1] + 1 &&
                   static_cast<Index>(j - k) < kBlockRows)
                ++j;
            const Index count = static_cast<Index>(j - k);
            working_block(eq, first, count, z);
            q.noalias() = z * r_inv;
            gram.selfadjointView<Eigen::Lower>().rankUpdate(q.transpose());
            qe.noalias() += q.transpose() * eq.residual.segment(first, count);
            k = j;
        }
        eig.compute(gram.selfadjointView<Eigen::Lower>());
        p.vectors = eig.eigenvectors();
        p.lambda = eig.eigenvalues();
        p.f.resize(K);
        p.full_leverage = false;
        for (Index m = 0; m < K; ++m) {
            const double rest = 1.0 - p.lambda[m];
            if (rest <= kFullLeverage) {
                p.f[m] = 0.0;
                p.full_leverage = true;
            } else {
                p.f[m] = 1.0 / std::sqrt(rest);
            }
        }
        p.qe = qe;
        visit(p);
    }
}

struct Clusters {
    std::size_t count = 0;
    ClusterRows groups;
};

Clusters unit_clusters(const Equation& eq) {
    if (eq.unit.size() != static_cast<std::size_t>(eq.X.rows()) ||
        std::any_of(eq.unit.begin(), eq.unit.end(), [](std::int32_t v) { return v < 0; }))
        throw Error("cr2: the estimated equation has no units for its rows; choose classical or hc0-hc3");
    std::vector<std::int32_t> dense;
    Clusters c;
    c.count = dense_ids(eq.unit, dense);
    if (c.count < 2)
        throw Error("cr2: " + std::to_string(c.count) +
                    " unit cluster found, at least 2 are needed; choose another standard-error word");
    c.groups = group_rows(dense, c.count);
    return c;
}

// L = M^-1 R^-1: V = L (sum_g s_g s_g') L' and the working vector of contrast c is L'c.
MatrixXd contrast_map(const Equation& eq, const MatrixXd& r_inv) { return working_to_original(eq) * r_inv; }

}  // namespace

CovarianceResult cr2_covariance(const Equation& eq) {
    require_rows(eq, "cr2");
    const Index K = eq.X.cols();
    const Clusters clusters = unit_clusters(eq);
    const MatrixXd r_inv = r_inverse(eq);
    const MatrixXd L = contrast_map(eq, r_inv);
    const MatrixXd delta = L.transpose();  // column k: the working vector of term k

    MatrixXd meat = MatrixXd::Zero(K, K);
    VectorXd trace = VectorXd::Zero(K), squares = VectorXd::Zero(K);
    MatrixXd hsum = MatrixXd::Zero(K, K * K);  // block k: sum_g h_g h_g' of term k
    std::size_t full_leverage = 0;
    MatrixXd y, h;
    VectorXd s, lf2, lf;
    for_each_cluster(eq, clusters.groups, r_inv, [&](const ClusterPieces& p) {
        s.noalias() = p.vectors * (p.f.asDiagonal() * (p.vectors.transpose() * p.qe));
        meat.selfadjointView<Eigen::Lower>().rankUpdate(s);
        full_leverage += p.full_leverage ? 1 : 0;
        lf2 = p.lambda.cwiseMax(0.0).cwiseProduct(p.f.cwiseAbs2());
        lf = p.lambda.cwiseMax(0.0).cwiseProduct(p.f);
        y.noalias() = p.vectors.transpose() * delta;
        h.noalias() = p.vectors * (lf.asDiagonal() * y);
        for (Index k = 0; k < K; ++k) {
            const double w = lf2.dot(y.col(k).cwiseAbs2());
            const double hh = h.col(k).squaredNorm();
            trace[k] += w - hh;
            squares[k] += w * w - 2.0 * w * hh;
            hsum.middleCols(k * K, K).selfadjointView<Eigen::Lower>().rankUpdate(h.col(k));
        }
    });
    meat = meat.selfadjointView<Eigen::Lower>();

    CovarianceResult out;
    out.kind = Covariance::cr2;
    const MatrixXd v = L * meat * L.transpose();
    out.matrix = 0.5 * (v + v.transpose());
    out.term_df.resize(static_cast<std::size_t>(K));
    for (Index k = 0; k < K; ++k) {
        const MatrixXd block = hsum.middleCols(k * K, K).selfadjointView<Eigen::Lower>();
        const double norm2 = squares[k] + block.squaredNorm();
        const double df = norm2 > 0 ? trace[k] * trace[k] / norm2 : std::numeric_limits<double>::quiet_NaN();
        out.term_df[static_cast<std::size_t>(k)] = df;
    }
    out.clusters = clusters.count;
    out.factor = 1.0;
    out.factor_rule = "none (each cluster's residuals scaled by (I - H_gg)^-1/2)";
    out.df = *std::min_element(out.term_df.begin(), out.term_df.end());
    out.df_rule = "Satterthwaite, per term";
    out.label = "cluster by unit, bias-reduced (CR2)";
    if (full_leverage > 0)
        out.warnings.push_back("cr2: " + std::to_string(full_leverage) +
                               (full_leverage == 1 ? " cluster has" : " clusters have") +
                               " a direction of leverage 1 (a term fitted by that cluster alone); it was "
                               "left out of the sum (pseudo-inverse), as hc2 leaves out a row of leverage 1");
    return out;
}

namespace {

// Sum over clusters of D'(Omega_g - Gamma_g^2)D: the expected R V R' under the working
// model (Omega of Pustejovsky and Tipton 2018, section 3.2).
MatrixXd htz_omega(const Equation& eq, const ClusterRows& groups, const MatrixXd& r_inv, const MatrixXd& d) {
    const Index q = d.cols();
    MatrixXd omega = MatrixXd::Zero(q, q);
    MatrixXd y;
    for_each_cluster(eq, groups, r_inv, [&](const ClusterPieces& p) {
        y.noalias() = p.vectors.transpose() * d;
        // lambda f^2 - lambda^2 f^2 = lambda (1 - lambda) f^2 = lambda, or 0 at leverage 1
        VectorXd weight(p.lambda.size());
        for (Index m = 0; m < weight.size(); ++m) weight[m] = p.f[m] > 0 ? std::max(p.lambda[m], 0.0) : 0.0;
        omega.noalias() += y.transpose() * weight.asDiagonal() * y;
    });
    return 0.5 * (omega + omega.transpose());
}

// A matrix W with W' Omega W = I on Omega's non-null part, W = D S^-1/2 with S = D Omega
// D its scaled basis (weft/tolerances.hpp): eigenvalues of S at most
// kPseudoInverseTolerance of the largest are null, a decision that does not depend on
// units. The HTZ sum below is a sum of traces, unchanged by an orthogonal rotation of
// the q contrasts, so any such W gives the same df as Omega^-1/2.
MatrixXd inverse_sqrt(const MatrixXd& m) {
    const ScaledEigen eig = scaled_eigen(m);
    VectorXd f(m.rows());
    for (Index j = 0; j < f.size(); ++j) {
        const double l = eig.lambda[j];
        f[j] = (eig.largest > 0 && l > kPseudoInverseTolerance * eig.largest) ? 1.0 / std::sqrt(l) : 0.0;
    }
    return eig.scale.asDiagonal() * eig.vectors * f.asDiagonal() * eig.vectors.transpose();
}

// The sum of the HTZ variance matrix (Pustejovsky and Tipton 2018, eq. 15 with the
// contrasts rotated by Omega^-1/2): sum_{s,t} [X(s,t,t,s) + X(s,s,t,t)],
// X(s,t,u,v) = sum_{g,h} P_st[g,h] P_uv[g,h].
double htz_variance_sum(const Equation& eq, const ClusterRows& groups, const MatrixXd& r_inv, const MatrixXd& d) {
    const Index K = eq.X.cols(), q = d.cols();
    MatrixXd ww = MatrixXd::Zero(q, q), wh = MatrixXd::Zero(q, q);  // cluster sums, see below
    MatrixXd wsst = MatrixXd::Zero(q, q), whst = MatrixXd::Zero(q, q);
    MatrixXd hall = MatrixXd::Zero(K * q, K * q);  // block (a, b): sum_g h_a h_b'
    MatrixXd y, h, w, hh;
    VectorXd stacked(K * q);
    for_each_cluster(eq, groups, r_inv, [&](const ClusterPieces& p) {
        const VectorXd lam = p.lambda.cwiseMax(0.0);
        y.noalias() = p.vectors.transpose() * d;
        w.noalias() = y.transpose() * lam.cwiseProduct(p.f.cwiseAbs2()).asDiagonal() * y;
        h.noalias() = p.vectors * (lam.cwiseProduct(p.f).asDiagonal() * y);
        hh.noalias() = h.transpose() * h;
        for (Index s = 0; s < q; ++s)
            for (Index t = 0; t < q; ++t) {
                ww(s, t) += w(s, t) * w(t, s);            // X(s,t,t,s), first term
                wh(s, t) += w(s, t) * hh(t, s) + w(t, s) * hh(s, t);
                wsst(s, t) += w(s, s) * w(t, t);          // X(s,s,t,t), first term
                whst(s, t) += w(s, s) * hh(t, t) + w(t, t) * hh(s, s);
            }
        for (Index a = 0; a < q; ++a) stacked.segment(a * K, K) = h.col(a);
        hall.selfadjointView<Eigen::Lower>().rankUpdate(stacked);
    });
    hall = hall.selfadjointView<Eigen::Lower>();
    double total = 0;
    for (Index s = 0; s < q; ++s)
        for (Index t = 0; t < q; ++t) {
            const MatrixXd ts = hall.block(t * K, s * K, K, K), st = hall.block(s * K, t * K, K, K);
            const double cross_tsts = (ts.cwiseProduct(ts.transpose())).sum();  // tr(H_ts H_ts)
            const double cross_stts = (st.cwiseProduct(st)).sum();               // tr(H_st H_ts), H_ts = H_st'
            total += ww(s, t) - wh(s, t) + cross_tsts + wsst(s, t) - whst(s, t) + cross_stts;
        }
    return total;
}

}  // namespace

WaldResult cr2_wald_test(const Equation& eq, const Eigen::VectorXd& coef, const Eigen::MatrixXd& covariance,
                         const Eigen::MatrixXd& restriction, const Eigen::VectorXd& value) {
    require_rows(eq, "the HTZ test of cr2");
    const Clusters clusters = unit_clusters(eq);
    // the plain Wald W (chi-square rows); the F rows are replaced below
    WaldResult r = wald_test(coef, covariance, static_cast<double>(clusters.count) - 1.0, restriction, value);
    const MatrixXd r_inv = r_inverse(eq);
    const MatrixXd d = contrast_map(eq, r_inv).transpose() * restriction.transpose();  // K x q
    const MatrixXd rotated = d * inverse_sqrt(htz_omega(eq, clusters.groups, r_inv, d));
    const double q = static_cast<double>(restriction.rows());
    const double total = htz_variance_sum(eq, clusters.groups, r_inv, rotated);
    const double nu = q * (q + 1.0) / total;
    const double df2 = nu - q + 1.0;
    if (!(df2 > 0) || !std::isfinite(df2))
        throw Error("joint test (cr2): the HTZ approximation leaves no denominator df (" +
                    std::to_string(df2) + ") for " + std::to_string(restriction.rows()) + " restrictions with " +
                    std::to_string(clusters.count) + " clusters; test fewer terms at once");
    r.f_scale = df2 / nu;
    r.f = r.f_scale * r.chi2 / q;
    r.f_df1 = q;
    r.f_df2 = df2;
    r.f_p = f_upper(r.f, q, df2);
    r.df_rule = "HTZ (Hotelling T^2 approximation)";
    return r;
}

}  // namespace weft::detail
