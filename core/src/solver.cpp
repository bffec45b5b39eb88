// The least-squares solver shared by every estimator and auxiliary regression.
//
// Shape (ARCHITECTURE.md "Growing past one machine"): accumulate, merge, finish.
//  1. centre every column against the intercept column (long double sums) and scale it to
//     unit length, so that the rank tolerance is scale free and the QR sees a well
//     conditioned working design Z;
//  2. tall-skinny QR: Householder QR of row blocks of [Z, y], merging the small R factors
//     (a block's R can come from anywhere: another thread, another machine);
//  3. finish on the small (K+1) x (K+1) R: terms are taken in order and a term whose
//     distance from the span of the earlier kept terms is <= kRankTolerance is dropped;
//  4. the solution is refined with residuals and Z'r accumulated in long double
//     (corrected semi-normal equations, Bjorck 1996 section 6.6.5), which recovers the
//     digits that the double QR loses on ill-conditioned designs (NIST Filip, Wampler).
#include <cmath>
#include <limits>
#include <cstdlib>
#include <numeric>
#include <string>

#include <Eigen/Dense>

#include "weft/error.hpp"
#include "weft/model.hpp"
#include "internal.hpp"

namespace weft {

using Eigen::Index;
using Eigen::MatrixXd;
using Eigen::VectorXd;

namespace detail {

void working_block(const Equation& eq, Index first, Index count, MatrixXd& out) {
    const Index K = eq.X.cols();
    out.resize(count, K);
    const int c = eq.intercept_column;
    for (Index j = 0; j < K; ++j) {
        if (c >= 0 && j != c && eq.shift[j] != 0.0)
            out.col(j) = (eq.X.col(j).segment(first, count) - eq.shift[j] * eq.X.col(c).segment(first, count)) /
                         eq.scale[j];
        else
            out.col(j) = eq.X.col(j).segment(first, count) / eq.scale[j];
    }
}

MatrixXd working_to_original(const Equation& eq) {
    const Index K = eq.scale.size();
    MatrixXd m_inverse = MatrixXd::Zero(K, K);
    const int c = eq.intercept_column;
    for (Index j = 0; j < K; ++j) {
        m_inverse(j, j) = 1.0 / eq.scale[j];
        if (c >= 0 && j != c) m_inverse(c, j) = -eq.shift[j] / eq.scale[j];
    }
    return m_inverse;
}

MatrixXd r_inverse(const Equation& eq) {
    const Index K = eq.r_factor.cols();
    MatrixXd identity = MatrixXd::Identity(K, K);
    return eq.r_factor.triangularView<Eigen::Upper>().solve(identity);
}

bool gram_factor(const MatrixXd& gram, MatrixXd& r_out, double condition_limit) {
    const Index p = gram.rows();
    Eigen::LLT<MatrixXd> llt(gram);
    if (llt.info() != Eigen::Success) return false;
    MatrixXd r_try = llt.matrixU();
    const MatrixXd r_try_inv = r_try.triangularView<Eigen::Upper>().solve(MatrixXd::Identity(p, p));
    const double cond = r_try.norm() * r_try_inv.norm();
    if (!(std::isfinite(cond) && cond <= condition_limit)) return false;
    r_out = std::move(r_try);
    return true;
}

VectorXd original_coefficients(const Equation& eq, const Eigen::Matrix<long double, Eigen::Dynamic, 1>& c_work,
                               long double shift_y) {
    const Index K = c_work.size();
    const int c_kept = eq.intercept_column;
    Eigen::Matrix<long double, Eigen::Dynamic, 1> b(K);
    long double correction = 0;
    for (Index k = 0; k < K; ++k) {
        b[k] = c_work[k] / static_cast<long double>(eq.scale[k]);
        if (c_kept >= 0 && k != c_kept) correction += static_cast<long double>(eq.shift[k]) * b[k];
    }
    if (c_kept >= 0) b[c_kept] = shift_y + c_work[c_kept] / static_cast<long double>(eq.scale[c_kept]) - correction;
    return b.cast<double>();
}

MatrixXd xtx_inverse(const Equation& eq) {
    const MatrixXd r_inv = r_inverse(eq);
    // (Measured: polishing this inverse with Newton-Schulz steps against a long-double
    // Z'Z gains nothing on NIST; Filip's SEs are limited by its powers rounded to double.)
    const MatrixXd p_mat = working_to_original(eq) * r_inv;
    return p_mat * p_mat.transpose();
}

}  // namespace detail

namespace {

std::string term_name(const std::vector<std::string>& terms, Index j) {
    return terms[static_cast<std::size_t>(j)];
}

using VectorL = Eigen::Matrix<long double, Eigen::Dynamic, 1>;

// The input's shape and values: refused in words when they cannot be solved.
void check_input(EquationInput& in) {
    const Index N = in.X.rows();
    const Index K0 = in.X.cols();
    if (in.y.size() != N)
        throw Error("equation: y has " + std::to_string(in.y.size()) + " rows but the design has " +
                    std::to_string(N));
    if (N == 0) throw Error("no usable rows: the estimated equation has no rows");
    if (K0 == 0) throw Error("no terms to estimate: the equation has no columns");
    if (in.terms.empty())
        for (Index j = 0; j < K0; ++j) in.terms.push_back("x" + std::to_string(j + 1));
    if (static_cast<Index>(in.terms.size()) != K0)
        throw Error("equation: " + std::to_string(in.terms.size()) + " term names for " +
                    std::to_string(K0) + " columns");
    auto check_rows = [&](std::size_t size, const char* what) {
        if (size != 0 && size != static_cast<std::size_t>(N))
            throw Error(std::string("equation: ") + what + " has " + std::to_string(size) +
                        " entries for " + std::to_string(N) + " rows");
    };
    check_rows(in.input_row.size(), "input_row");
    check_rows(in.unit.size(), "unit");
    check_rows(in.period.size(), "period");
    if (in.input_row.empty()) {
        in.input_row.resize(static_cast<std::size_t>(N));
        std::iota(in.input_row.begin(), in.input_row.end(), std::size_t{0});
    }
    for (Index i = 0; i < N; ++i) {
        if (!std::isfinite(in.y[i]))
            throw Error("equation: the dependent variable is not finite in equation row " + std::to_string(i + 1));
    }
    if (!in.X.allFinite()) throw Error("equation: the design has a value that is not finite");
    // Sums of squares of the outcome must stay finite, or every SSR-based number (sigma,
    // standard errors, R-squared, tests) would come out as inf or NaN: refuse instead.
    if (!std::isfinite(in.y.squaredNorm()))
        throw Error("the outcome has values too large to compute with (their squares overflow a double); "
                    "divide the outcome by a power of 10 and scale the estimates back");
}

// The working basis: every column centred against the intercept column c and scaled to
// unit length (candidates: the columns that survive; the others are in `dropped`).
struct WorkingBasis {
    int c = -1;                       // intercept column, -1 none
    std::vector<Index> candidates;
    VectorXd shift, scale;            // per input column
    double ww = 0;                    // squared length of the intercept column
    bool unit_weight = false;         // the intercept column is all ones
    double shift_y_d = 0;             // y's shift against the intercept column
    Index p = 0;                      // candidates.size()
};

// Step 1: centring against the intercept column and scaling. The shift and scale define
// the working basis exactly (X = Z M with these very numbers), so they need only a few
// correct digits: plain vectorised double sums.
WorkingBasis centre_and_scale(const EquationInput& in, std::vector<DroppedTerm>& dropped) {
    const Index N = in.X.rows();
    const Index K0 = in.X.cols();
    WorkingBasis wb;
    int& c = wb.c;
    c = in.intercept_column;
    if (c >= K0) c = -1;
    wb.shift = VectorXd::Zero(K0);
    wb.scale = VectorXd::Ones(K0);
    if (c >= 0) {
        wb.ww = in.X.col(c).squaredNorm();
        if (wb.ww == 0) {
            dropped.push_back({term_name(in.terms, c), DropReason::collinear,
                               term_name(in.terms, c) + " is zero in every row; dropped"});
            c = -1;
        } else {
            wb.scale[c] = std::sqrt(wb.ww);
        }
    }
    const double ww = wb.ww;
    wb.unit_weight = c >= 0 && (in.X.col(c).array() == 1.0).all();
    for (Index j = 0; j < K0; ++j) {
        if (j == c) {
            wb.candidates.push_back(j);
            continue;
        }
        const double raw = in.X.col(j).squaredNorm();
        if (!std::isfinite(raw)) throw Error(term_name(in.terms, j) + " has values too large to compute with (their squares overflow a double); divide the column by a power of 10 and scale its estimate back");
        // Squares that underflow to zero (or to subnormals, which carry few digits) for a
        // column that is not zero: the column would wrongly look empty. Refuse it by name.
        if (raw < std::numeric_limits<double>::min() && (in.X.col(j).array() != 0.0).any())
            throw Error(term_name(in.terms, j) + " has values too small to compute with (their squares underflow a double); "
                        "multiply the column by a power of 10 and scale its estimate back");
        double s = 0, ss = raw;
        if (c >= 0) {
            s = wb.unit_weight ? in.X.col(j).sum() / static_cast<double>(N) : in.X.col(j).dot(in.X.col(c)) / ww;
            ss = (in.X.col(j) - s * in.X.col(c)).squaredNorm();
        }
        // A column that centring leaves at rounding-noise size (relative to its raw
        // size) is a multiple of the intercept column: scaling noise up to unit length
        // would hide that from the rank decision.
        if (ss == 0 || std::sqrt(ss) <= kConstantTolerance * std::sqrt(raw)) {
            const std::string name = term_name(in.terms, j);
            dropped.push_back({name, DropReason::collinear,
                               raw == 0 ? name + " is zero in every row; dropped"
                                        : name + " is constant (collinear with " + term_name(in.terms, c) +
                                              "); dropped"});
            continue;
        }
        wb.shift[j] = s;
        wb.scale[j] = std::sqrt(ss);
        wb.candidates.push_back(j);
    }
    wb.p = static_cast<Index>(wb.candidates.size());
    if (wb.p == 0) throw Error("no terms to estimate: every column is zero or constant");
    if (c >= 0) wb.shift_y_d = wb.unit_weight ? in.y.sum() / static_cast<double>(N) : in.X.col(c).dot(in.y) / ww;
    return wb;
}

// Rows [r0, r0 + b) of [Z, y - shift_y w] into rows [top, top + b) of `out`.
void fill_working(const EquationInput& in, const WorkingBasis& wb, Index r0, Index b, Index top, MatrixXd& out) {
    const int c = wb.c;
    const Index p = wb.p;
    for (Index jj = 0; jj < p; ++jj) {
        const Index j = wb.candidates[static_cast<std::size_t>(jj)];
        if (c >= 0 && j != c)
            out.col(jj).segment(top, b) = (in.X.col(j).segment(r0, b) - wb.shift[j] * in.X.col(c).segment(r0, b)) /
                                          wb.scale[j];
        else
            out.col(jj).segment(top, b) = in.X.col(j).segment(r0, b) / wb.scale[j];
    }
    if (c >= 0)
        out.col(p).segment(top, b) = in.y.segment(r0, b) - wb.shift_y_d * in.X.col(c).segment(r0, b);
    else
        out.col(p).segment(top, b) = in.y.segment(r0, b);
}

// The triangular system R c = Q'y of the kept working columns (kept_local: positions in
// the candidates).
struct Triangle {
    MatrixXd R;
    VectorXd qty;
    std::vector<Index> kept_local;
    bool gram_route = false;
};

// Step 2a, Gram route for well-conditioned designs. The Gram matrix of the centred,
// unit-length columns is accumulated per block (blocks add: the distributed shape) and
// factorised by Cholesky. Its R'R carries the same O(eps ||Z||^2) error as a QR's, so
// the covariances are as accurate; the coefficients lose cond(Z)^2 eps instead of
// cond(Z) eps, which the refinement removes. Taken only when R shows cond(Z) <=
// kGramConditionLimit and every term is far from collinear, so no rank decision depends
// on it; otherwise the tall-skinny QR decides.
bool gram_system(const EquationInput& in, const WorkingBasis& wb, Triangle& tri) {
    const Index N = in.X.rows(), p = wb.p;
    MatrixXd gram = MatrixXd::Zero(p + 1, p + 1);
    MatrixXd block_rows(detail::kBlockRows, p + 1);
    for (Index r0 = 0; r0 < N; r0 += detail::kBlockRows) {
        const Index b = std::min(detail::kBlockRows, N - r0);
        fill_working(in, wb, r0, b, 0, block_rows);
        gram.selfadjointView<Eigen::Lower>().rankUpdate(block_rows.topRows(b).transpose());
    }
    const MatrixXd g_design = gram.topLeftCorner(p, p).selfadjointView<Eigen::Lower>();
    if (!(N > p && detail::gram_factor(g_design, tri.R, detail::kGramConditionLimit))) return false;
    tri.gram_route = true;
    const VectorXd zty = gram.col(p).head(p);
    tri.qty = tri.R.transpose().triangularView<Eigen::Lower>().solve(zty);
    for (Index jj = 0; jj < p; ++jj) tri.kept_local.push_back(jj);
    return true;
}

// Step 2b, tall-skinny QR of [Z, y - shift_y w]: the R factor of all rows.
MatrixXd tsqr_factor(const EquationInput& in, const WorkingBasis& wb) {
    const Index N = in.X.rows(), p = wb.p;
    MatrixXd r_acc = MatrixXd::Zero(p + 1, p + 1);
    const Index block = detail::kTsqrBlockRows;
    MatrixXd stack(block + p + 1, p + 1);
    VectorXd h_coeffs(p + 1), temp(p + 1);
    bool first = true;
    for (Index r0 = 0; r0 < N; r0 += block) {
        const Index b = std::min(block, N - r0);
        // accumulate: the block's rows below the R merged so far
        const Index top = first ? 0 : p + 1;
        if (!first) stack.topRows(p + 1) = r_acc;
        fill_working(in, wb, r0, b, top, stack);
        // merge: Householder QR in place; its upper triangle is the new R
        const Index rows = top + b;
        auto m = stack.topRows(rows);
        const Index steps = std::min(rows, p + 1);
        h_coeffs.resize(steps);
        Eigen::internal::householder_qr_inplace_unblocked(m, h_coeffs, temp.data());
        r_acc.setZero();
        r_acc.topRows(steps) = m.topRows(steps).triangularView<Eigen::Upper>();
        first = false;
    }
    return r_acc;
}

// Step 3, rank decision on the QR's R, terms in order: a term whose distance from the
// span of the earlier kept terms is <= kRankTolerance of its length is dropped.
void rank_decision(const MatrixXd& r_acc, const EquationInput& in, const WorkingBasis& wb,
                   std::vector<DroppedTerm>& dropped, Triangle& tri) {
    const Index N = in.X.rows(), p = wb.p;
    MatrixXd a = r_acc;
    Index r = 0;
    VectorXd essential;
    VectorXd workspace(p + 1);
    for (Index jj = 0; jj < p; ++jj) {
        const double original = r_acc.col(jj).head(p).norm();
        const Index m_rows = p + 1 - r;
        const double distance = a.col(jj).segment(r, m_rows).norm();
        if (!(distance > kRankTolerance * original) || r >= N) {
            const std::string name = term_name(in.terms, wb.candidates[static_cast<std::size_t>(jj)]);
            dropped.push_back({name, DropReason::collinear,
                               name + " is a linear combination of earlier terms (collinear); dropped"});
            continue;
        }
        double tau = 0, beta = 0;
        essential.resize(m_rows - 1);
        a.col(jj).segment(r, m_rows).makeHouseholder(essential, tau, beta);
        if (jj + 1 <= p)
            a.block(r, jj + 1, m_rows, p - jj).applyHouseholderOnTheLeft(essential, tau, workspace.data());
        a(r, jj) = beta;
        a.col(jj).segment(r + 1, m_rows - 1).setZero();
        tri.kept_local.push_back(jj);
        ++r;
    }
    const Index k_kept = static_cast<Index>(tri.kept_local.size());
    tri.R.resize(k_kept, k_kept);
    tri.qty.resize(k_kept);
    for (Index k = 0; k < k_kept; ++k) {
        tri.R.col(k) = a.col(tri.kept_local[static_cast<std::size_t>(k)]).head(k_kept);
        tri.qty[k] = a(k, p);
    }
    tri.R.triangularView<Eigen::StrictlyLower>().setZero();
}

// The equation of the kept columns (terms, X, y, basis, factor, row ids).
void keep_columns(EquationInput& in, const WorkingBasis& wb, const Triangle& tri, Equation& eq) {
    const Index N = in.X.rows(), K0 = in.X.cols();
    const Index K = static_cast<Index>(tri.kept_local.size());
    std::vector<Index> kept;
    for (Index k : tri.kept_local) kept.push_back(wb.candidates[static_cast<std::size_t>(k)]);
    int c_kept = -1;
    for (Index k = 0; k < K; ++k)
        if (kept[static_cast<std::size_t>(k)] == wb.c) c_kept = static_cast<int>(k);
    if (wb.c >= 0 && c_kept < 0) {
        // The intercept column itself was judged collinear: no centring basis left.
        // (Cannot happen for the first candidate; kept for safety.)
        throw Error("equation: the intercept column is collinear with other terms");
    }
    eq.terms.clear();
    for (Index j : kept) eq.terms.push_back(in.terms[static_cast<std::size_t>(j)]);
    if (K == K0) {
        eq.X = std::move(in.X);
    } else {
        eq.X.resize(N, K);
        for (Index k = 0; k < K; ++k) eq.X.col(k) = in.X.col(kept[static_cast<std::size_t>(k)]);
        in.X.resize(0, 0);
    }
    eq.y = std::move(in.y);
    eq.intercept_column = c_kept;
    eq.shift.resize(K);
    eq.scale.resize(K);
    for (Index k = 0; k < K; ++k) {
        eq.shift[k] = wb.shift[kept[static_cast<std::size_t>(k)]];
        eq.scale[k] = wb.scale[kept[static_cast<std::size_t>(k)]];
    }
    eq.r_factor = tri.R;
    eq.input_row = std::move(in.input_row);
    eq.unit = std::move(in.unit);
    eq.period = std::move(in.period);
    eq.absorbed = in.absorbed;
}

// resid = y - shift_y w - Z c_work in long double.
void residual_long(const Equation& eq, const VectorL& c_work, long double shift_y, VectorL& resid) {
    const Index N = eq.X.rows(), K = eq.X.cols();
    const int c_kept = eq.intercept_column;
    for (Index i = 0; i < N; ++i)
        resid[i] = static_cast<long double>(eq.y[i]) - (c_kept >= 0 ? shift_y * eq.X(i, c_kept) : 0.0L);
    for (Index k = 0; k < K; ++k) {
        const long double ck = c_work[k];
        const long double sk = eq.shift[k];
        const long double scale_k = eq.scale[k];
        if (c_kept >= 0 && k != c_kept && sk != 0) {
            for (Index i = 0; i < N; ++i) resid[i] -= ck * ((eq.X(i, k) - sk * eq.X(i, c_kept)) / scale_k);
        } else {
            for (Index i = 0; i < N; ++i) resid[i] -= ck * (eq.X(i, k) / scale_k);
        }
    }
}

// One refinement step with the long-double residual: c_work += (R'R)^-1 Z'resid.
void refine_step_long(const Equation& eq, VectorL& c_work, const VectorL& resid) {
    const Index N = eq.X.rows(), K = eq.X.cols();
    const int c_kept = eq.intercept_column;
    const MatrixXd& R = eq.r_factor;
    VectorL g = VectorL::Zero(K);
    for (Index k = 0; k < K; ++k) {
        const long double sk = eq.shift[k];
        const long double scale_k = eq.scale[k];
        long double sum = 0;
        if (c_kept >= 0 && k != c_kept && sk != 0) {
            for (Index i = 0; i < N; ++i) sum += ((eq.X(i, k) - sk * eq.X(i, c_kept)) / scale_k) * resid[i];
        } else {
            for (Index i = 0; i < N; ++i) sum += (eq.X(i, k) / scale_k) * resid[i];
        }
        g[k] = sum;
    }
    VectorXd g_d = g.cast<double>();
    VectorXd delta = R.transpose().triangularView<Eigen::Lower>().solve(g_d);
    delta = R.triangularView<Eigen::Upper>().solve(delta);
    c_work += delta.cast<long double>();
}

// The Gram route's refinement: corrected semi-normal equations in double; each step
// shrinks the error of the Gram solution by about cond(Z)^2 eps. Measured on NIST: one
// step leaves Norris/Pontius at LRE 12.2/11.3, two reach 13.2/13.2 (the QR route with
// long-double refinement: 14.1/13.5).
void refine_gram(const Equation& eq, double shift_y_d, VectorXd& coef_work) {
    const Index N = eq.X.rows(), K = eq.X.cols();
    const int c_kept = eq.intercept_column;
    const MatrixXd& R = eq.r_factor;
    MatrixXd z;
    for (int step = 0; step < 2; ++step) {
        VectorXd g = VectorXd::Zero(K);
        for (Index r0 = 0; r0 < N; r0 += detail::kBlockRows) {
            const Index b = std::min(detail::kBlockRows, N - r0);
            detail::working_block(eq, r0, b, z);
            VectorXd r_block = eq.y.segment(r0, b) - z * coef_work;
            if (c_kept >= 0) r_block -= shift_y_d * eq.X.col(c_kept).segment(r0, b);
            g.noalias() += z.transpose() * r_block;
        }
        VectorXd delta = R.transpose().triangularView<Eigen::Lower>().solve(g);
        delta = R.triangularView<Eigen::Upper>().solve(delta);
        coef_work += delta;
    }
}

// Well conditioned: the double residual of the centred working design is exact to
// rounding; one vectorised pass (measured: reusing the last refinement step's residual
// instead costs Pontius 0.6 digits of SSR).
void residual_double(const Equation& eq, double shift_y_d, const VectorXd& coef_work, VectorL& resid) {
    const Index N = eq.X.rows();
    const int c_kept = eq.intercept_column;
    MatrixXd z;
    for (Index r0 = 0; r0 < N; r0 += detail::kBlockRows) {
        const Index b = std::min(detail::kBlockRows, N - r0);
        detail::working_block(eq, r0, b, z);
        VectorXd r_block = eq.y.segment(r0, b) - z * coef_work;
        if (c_kept >= 0) r_block -= shift_y_d * eq.X.col(c_kept).segment(r0, b);
        for (Index i = 0; i < b; ++i) resid[r0 + i] = r_block[i];
    }
}

// Step 4: solve R c = Q'y and refine in the working basis; the residual in `resid`.
VectorL solve_and_refine(const Equation& eq, const Triangle& tri, const WorkingBasis& wb, VectorL& resid) {
    const Index N = eq.X.rows(), K = eq.X.cols();
    const MatrixXd& R = eq.r_factor;
    const long double shift_y = wb.shift_y_d;
    VectorXd coef_work = R.triangularView<Eigen::Upper>().solve(tri.qty);
    VectorL c_work = coef_work.cast<long double>();
    // Refinement costs three passes over the data per step; it is skipped where the
    // working design is so well conditioned that the double QR is already exact to
    // rounding (diagonal ratio of R below 1e3; the columns of Z have unit length).
    double r_min = std::numeric_limits<double>::infinity(), r_max = 0;
    for (Index k = 0; k < K; ++k) {
        r_min = std::min(r_min, std::fabs(R(k, k)));
        r_max = std::max(r_max, std::fabs(R(k, k)));
    }
    const bool small = static_cast<double>(N) * static_cast<double>(K) <= 2e5;
    // The Gram route always refines in double, whatever the size, so that the NIST and
    // reference tests run the very path that large data take.
    const bool refine = !tri.gram_route && (r_max > 1e3 * r_min || small);
    if (!refine) {
        if (tri.gram_route) {
            refine_gram(eq, wb.shift_y_d, coef_work);
            c_work = coef_work.cast<long double>();
        }
        residual_double(eq, wb.shift_y_d, coef_work, resid);
        return c_work;
    }
    residual_long(eq, c_work, shift_y, resid);
    for (int step = 0; step < 3; ++step) {
        refine_step_long(eq, c_work, resid);
        residual_long(eq, c_work, shift_y, resid);
    }
    return c_work;
}

// Distinct ids (>= 0) in a list.
std::size_t count_distinct(const std::vector<std::int32_t>& ids) {
    std::int32_t max_id = -1;
    for (std::int32_t v : ids) max_id = std::max(max_id, v);
    if (max_id < 0) return std::size_t{0};
    std::vector<std::uint8_t> seen(static_cast<std::size_t>(max_id) + 1, 0);
    std::size_t count = 0;
    for (std::int32_t v : ids)
        if (v >= 0 && !seen[static_cast<std::size_t>(v)]) {
            seen[static_cast<std::size_t>(v)] = 1;
            ++count;
        }
    return count;
}

}  // namespace

// The stages of the full route's "accumulate and solve": check, working basis,
// accumulate (Gram, or tall-skinny QR with the rank decision), solve and refine, and
// the results back in the original basis.
Equation solve_equation(EquationInput in) {
    check_input(in);
    const Index N = in.X.rows();
    Equation eq;
    eq.estimator = in.estimator;
    const WorkingBasis wb = centre_and_scale(in, eq.dropped);
    Triangle tri;
    if (!gram_system(in, wb, tri)) rank_decision(tsqr_factor(in, wb), in, wb, eq.dropped, tri);
    keep_columns(in, wb, tri, eq);
    VectorL resid(N);
    const VectorL c_work = solve_and_refine(eq, tri, wb, resid);

    // ---- 5. back to the original basis
    const long double shift_y = wb.shift_y_d;
    eq.coef = detail::original_coefficients(eq, c_work, shift_y);
    eq.residual.resize(N);
    eq.fitted.resize(N);
    long double ssr = 0;
    for (Index i = 0; i < N; ++i) {
        eq.residual[i] = static_cast<double>(resid[i]);
        eq.fitted[i] = static_cast<double>(static_cast<long double>(eq.y[i]) - resid[i]);
        ssr += resid[i] * resid[i];
    }
    eq.ssr = static_cast<double>(ssr);

    // ---- 6. (X'X)^-1 = M^-1 (Z'Z)^-1 M^-T, (Z'Z)^-1 = R^-1 R^-T
    eq.xtx_inverse = detail::xtx_inverse(eq);
    eq.n_units = count_distinct(eq.unit);
    eq.n_periods = count_distinct(eq.period);
    return eq;
}

Eigen::VectorXd leverages(const Equation& eq) {
    detail::require_rows(eq, "leverages");
    const Index N = eq.X.rows();
    VectorXd h(N);
    const MatrixXd r_inv = detail::r_inverse(eq);
    MatrixXd z;
    for (Index r0 = 0; r0 < N; r0 += detail::kBlockRows) {
        const Index b = std::min(detail::kBlockRows, N - r0);
        detail::working_block(eq, r0, b, z);
        h.segment(r0, b) = (z * r_inv).rowwise().squaredNorm();
    }
    return h;
}

}  // namespace weft
