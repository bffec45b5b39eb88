// Lean fits: the estimated equation of pooled or fd in streaming passes over the
// caller's columns, never holding its N x K design (see fit_model_lean in model.hpp).
//
// The steps are the solver's Gram route (solver.cpp), in the same working basis:
//  1. one pass: the Gram matrix of [X, y] about a shift s0 (the first block's column
//     means), with the column sums; the centred Gram follows exactly as
//     S - N (m - s0)(m - s0)', whose correction is small because s0 is already close
//     to the mean m; the columns are then centred and scaled to unit length (Z) and
//     the Gram matrix of Z is factorised by Cholesky when cond(Z) is small;
//  2. two passes of refinement (corrected semi-normal equations, Bjorck 1996 section
//     6.6.5), as the solver's Gram route;
//  3. one pass: residuals (aligned to the input rows), SSR, the outcome's sums, and the
//     score sums that the covariance needs (per row for hc0/hc1, per unit, per period).
// Whatever this route cannot decide exactly as the full solver would (a term near the
// 1e-13 thresholds of dropping, a design near or above the Gram route's condition
// limit, values near the limits of double, fewer than 2 clusters) is handed back to the
// full route, which then decides and words any message.
#include <algorithm>
#include <cmath>
#include <limits>

#include <Eigen/Dense>

#include "weft/error.hpp"
#include "weft/buffer.hpp"
#include "weft/model.hpp"
#include "internal.hpp"

namespace weft::detail {

using Eigen::Index;
using Eigen::MatrixXd;
using Eigen::VectorXd;
using VectorL = Eigen::Matrix<long double, Eigen::Dynamic, 1>;

OutcomeSums outcome_sums(const VectorXd& y) {
    OutcomeSums s;
    for (Index i = 0; i < y.size(); ++i) s.sum += y[i];
    const long double mean = y.size() > 0 ? s.sum / static_cast<long double>(y.size()) : 0.0L;
    for (Index i = 0; i < y.size(); ++i) {
        s.centred += (y[i] - mean) * (y[i] - mean);
        s.raw += static_cast<long double>(y[i]) * y[i];
    }
    return s;
}

bool lean_applies(const ModelSpec& spec) {
    if (spec.estimator != Estimator::pooled && spec.estimator != Estimator::fd) return false;
    if (spec.period_effects) return false;
    switch (spec.covariance) {
        case Covariance::classical:
        case Covariance::hc0:
        case Covariance::hc1:
        case Covariance::cluster:
        case Covariance::cluster0:
        case Covariance::cluster_period:
        case Covariance::dk:
            return true;
        default:
            return false;
    }
}

namespace {

// Margins that keep the lean route away from the full solver's decisions: a term
// within a factor 1000 of a dropping threshold, or a design within 10% of the Gram
// route's condition limit, goes to the full route.
constexpr double kLeanDropMargin = 1e3;
constexpr double kLeanConditionLimit = 0.9 * kGramConditionLimit;

constexpr std::size_t kNoRow = std::numeric_limits<std::size_t>::max();

// A run of equation rows whose input rows (and earlier rows) are consecutive.
struct Piece {
    Index at;              // first equation row
    std::size_t later;     // its input row
    std::size_t earlier;   // fd: the earlier row of the first difference
    Index length;
};

// Reads [X, y] of the estimated equation (original scale; fd: differences) in blocks.
// When the equation rows are the input rows in increasing order (fd: each with the
// row before it as its earlier row; true whenever the input is sorted by unit and
// period), a block is a range of input rows read by whole-column vector operations,
// and the rows that are not equation rows (a unit's first row, a row with a missing
// value) are marked and later given weight 0. Otherwise rows are gathered.
class BlockReader {
public:
    BlockReader(const LeanInput& in, Index block) : in_(in), fd_(!in.earlier.empty()), block_(block) {
        const std::size_t n = in.later.size();
        contiguous_ = true;
        for (std::size_t i = 0; i < n && contiguous_; ++i) {
            if (i > 0 && in.later[i] <= in.later[i - 1]) contiguous_ = false;
            if (fd_ && in.earlier[i] + 1 != in.later[i]) contiguous_ = false;
        }
        if (contiguous_) {
            first_ = in.later.front();
            end_ = in.later.back() + 1;
            is_row_.assign(end_ - first_, 0);
            for (std::size_t r : in.later) is_row_[r - first_] = 1;
        } else {
            for (std::size_t i = 0; i < n; ++i) {
                const bool extends = i > 0 && in.later[i] == in.later[i - 1] + 1 &&
                                     (!fd_ || in.earlier[i] == in.earlier[i - 1] + 1);
                if (extends)
                    ++pieces_.back().length;
                else
                    pieces_.push_back({static_cast<Index>(i), in.later[i], fd_ ? in.earlier[i] : 0, 1});
            }
        }
        for (const Column& x : in.data.regressors) {
            columns_.push_back(x.values.data());
            masks_.push_back(x.missing.empty() ? nullptr : x.missing.data());
        }
        columns_.push_back(in.data.outcome.values.data());
        masks_.push_back(in.data.outcome.missing.empty() ? nullptr : in.data.outcome.missing.data());
    }

    // Every cell outside the missing masks is a finite number. The rows that the
    // contiguous reads cover are checked as they are read with check_values (call
    // this after such a pass); the others here.
    bool values_finite() const {
        const std::size_t n = in_.data.outcome.size();
        auto finite_rows = [&](std::size_t from, std::size_t to) {
            for (std::size_t c = 0; c < columns_.size(); ++c)
                for (std::size_t r = from; r < to; ++r)
                    if (!(masks_[c] != nullptr && masks_[c][r] != 0) && !std::isfinite(columns_[c][r])) return false;
            return true;
        };
        if (!contiguous_) return finite_rows(0, n);
        return finite_ && finite_rows(0, first_) && finite_rows(end_, n);
    }

    Index width() const { return static_cast<Index>(columns_.size()); }
    Index blocks() const {
        const std::size_t span = contiguous_ ? end_ - first_ : in_.later.size();
        return static_cast<Index>((span + static_cast<std::size_t>(block_) - 1) / static_cast<std::size_t>(block_));
    }

    // Block k: column c of [X, y] (original scale; fd: differences) is written as
    // (v - shift[c]) * mult[c] into column col0 + c of out's top rows. rows[i] is the
    // input row of block row i, or kNoRow for a row that is not an equation row (its
    // block row is then 0); keep[i] is 1 or 0 accordingly. levels (fd, optional) adds the squares of the later rows'
    // values per column. Returns the block's row count.
    Index read(Index k, MatrixXd& out, Index col0, const VectorXd& shift, const VectorXd& mult,
               std::vector<std::size_t>& rows, VectorXd& keep, VectorXd* levels = nullptr,
               bool check_values = false) {
        if (contiguous_) {
            const std::size_t a = first_ + static_cast<std::size_t>(k * block_);
            const Index b = static_cast<Index>(std::min<std::size_t>(static_cast<std::size_t>(block_), end_ - a));
            for (Index i = 0; i < b; ++i) {
                const bool row = is_row_[a - first_ + static_cast<std::size_t>(i)] != 0;
                rows[static_cast<std::size_t>(i)] = row ? a + static_cast<std::size_t>(i) : kNoRow;
                keep[i] = row ? 1.0 : 0.0;
            }
            for (Index c = 0; c < width(); ++c) {
                const double* x = columns_[static_cast<std::size_t>(c)];
                const Eigen::Map<const VectorXd> now(x + a, b);
                if (check_values && finite_) {
                    const std::uint8_t* mask = masks_[static_cast<std::size_t>(c)];
                    if (mask == nullptr) {
                        // inf * 0 and NaN * 0 are NaN: one vectorised sum tests the block
                        if (!std::isfinite((now.array() * 0.0).sum())) finite_ = false;
                    } else {
                        for (Index i = 0; i < b; ++i)
                            if (mask[a + static_cast<std::size_t>(i)] == 0 && !std::isfinite(now[i])) finite_ = false;
                    }
                }
                auto dest = out.col(col0 + c).head(b);
                // rows that are not equation rows are set to 0 (select, not a product:
                // a missing cell may hold any value, NaN included)
                const auto kept = keep.head(b).array() != 0.0;
                if (fd_) {
                    // a > 0: the first equation row has its earlier row before it
                    const Eigen::Map<const VectorXd> before(x + a - 1, b);
                    dest = kept.select(((now - before).array() - shift[c]) * mult[c], 0.0);
                    if (levels != nullptr) (*levels)[c] += kept.select(now.array().square(), 0.0).sum();
                } else {
                    dest = kept.select((now.array() - shift[c]) * mult[c], 0.0);
                }
            }
            return b;
        }
        const Index first = k * block_;
        const Index end = std::min(first + block_, static_cast<Index>(in_.later.size()));
        const Index b = end - first;
        while (cursor_ < pieces_.size() && pieces_[cursor_].at + pieces_[cursor_].length <= first) ++cursor_;
        for (std::size_t q_i = cursor_; q_i < pieces_.size() && pieces_[q_i].at < end; ++q_i) {
            const Piece& q = pieces_[q_i];
            const Index from = std::max(first, q.at), to = std::min(end, q.at + q.length);
            const Index len = to - from, off = from - q.at, at = from - first;
            for (Index c = 0; c < width(); ++c) {
                const double* x = columns_[static_cast<std::size_t>(c)];
                const Eigen::Map<const VectorXd> now(x + q.later + off, len);
                auto dest = out.col(col0 + c).segment(at, len);
                if (fd_) {
                    dest = ((now - Eigen::Map<const VectorXd>(x + q.earlier + off, len)).array() - shift[c]) * mult[c];
                    if (levels != nullptr) (*levels)[c] += now.squaredNorm();
                } else {
                    dest = (now.array() - shift[c]) * mult[c];
                }
            }
        }
        for (Index i = 0; i < b; ++i) {
            rows[static_cast<std::size_t>(i)] = in_.later[static_cast<std::size_t>(first + i)];
            keep[i] = 1.0;
        }
        return b;
    }

    void restart() { cursor_ = 0; }

private:
    const LeanInput& in_;
    bool fd_;
    Index block_;
    bool contiguous_ = true;
    std::size_t first_ = 0, end_ = 0;
    std::vector<std::uint8_t> is_row_;
    std::vector<Piece> pieces_;
    std::vector<const double*> columns_;
    std::vector<const std::uint8_t*> masks_;
    bool finite_ = true;
    std::size_t cursor_ = 0;
};

}  // namespace

std::optional<LeanResult> lean_equation(const LeanInput& in) {
    const ModelSpec& spec = in.spec;
    const bool fd = !in.earlier.empty();
    const Index k_reg = static_cast<Index>(in.data.regressors.size());
    if (k_reg == 0) return std::nullopt;
    const Index block = kBlockRows;
    BlockReader reader(in, block);
    const Index N = static_cast<Index>(in.later.size());
    const Index m = k_reg + 1;                 // [X, y]
    const bool intercept = spec.intercept;
    const Index p = k_reg + (intercept ? 1 : 0);
    const Index c0 = intercept ? 1 : 0;         // working column of the first regressor
    if (N <= p) return std::nullopt;
    const double n_d = static_cast<double>(N);
    std::vector<std::size_t> rows(static_cast<std::size_t>(block));
    VectorXd keep(block);

    // ---- 1. Gram matrix of [w, v - s0] with w the row weight (1, or 0 for a row that
    // is not an equation row): its first row holds the count and the column sums.
    MatrixXd B(block, m + 1);
    MatrixXd S = MatrixXd::Zero(m + 1, m + 1);
    VectorXd s0 = VectorXd::Zero(m), ones = VectorXd::Ones(m), levels = VectorXd::Zero(m);
    reader.restart();
    bool shifted = !intercept;
    for (Index k = 0; k < reader.blocks(); ++k) {
        const Index b = reader.read(k, B, 1, s0, ones, rows, keep, fd ? &levels : nullptr, true);
        if (!shifted) {
            // s0: the first block's column means, close to the means of all rows
            const double count = keep.head(b).sum();
            if (count > 0) {
                s0 = B.block(0, 1, b, m).colwise().sum().transpose() / count;
                B.block(0, 1, b, m).rowwise() -= s0.transpose();
                B.block(0, 1, b, m).array().colwise() *= keep.head(b).array();
                shifted = true;
            }
        }
        B.col(0).head(b) = keep.head(b);
        S.selfadjointView<Eigen::Lower>().rankUpdate(B.topRows(b).transpose());
    }
    // a NaN or infinity outside the masks: the full route words the message
    if (!reader.values_finite()) return std::nullopt;
    S = S.selfadjointView<Eigen::Lower>();
    const VectorXd sums = S.col(0).tail(m);                 // sum (v - s0)
    const MatrixXd S_v = S.bottomRightCorner(m, m);         // sum (v - s0)(v - s0)'
    // raw sums of squares (thresholds and range checks only)
    VectorXd raw(m);
    for (Index j = 0; j < m; ++j) raw[j] = S_v(j, j) + 2.0 * s0[j] * sums[j] + n_d * s0[j] * s0[j];
    if (!raw.allFinite() || raw.maxCoeff() > 1e290) return std::nullopt;
    for (Index j = 0; j < k_reg; ++j)
        if (!(raw[j] > 1e-290)) return std::nullopt;
    // shift t (the mean, with an intercept) and the Gram matrix about it:
    // sum (v - t)(v - t)' = S_v + d sums' + sums d' + N d d',  d = s0 - t
    VectorXd shift = VectorXd::Zero(m);
    if (intercept) shift = s0 + sums / n_d;
    const VectorXd d = s0 - shift;
    const MatrixXd C = S_v + d * sums.transpose() + sums * d.transpose() + n_d * d * d.transpose();
    const VectorXd centred_sums = sums + n_d * d;   // sum (v - t)
    VectorXd scale = VectorXd::Ones(m);
    for (Index j = 0; j < k_reg; ++j) {
        const double ss = C(j, j);
        // fd: a column whose differences vanish (no variation within units)
        if (fd && !(std::sqrt(raw[j]) > kLeanDropMargin * 1e-13 * std::sqrt(levels[j]))) return std::nullopt;
        // a column that centring reduces to noise (a multiple of the intercept)
        if (!(ss > 0) || !(std::sqrt(ss) > kLeanDropMargin * 1e-13 * std::sqrt(raw[j]))) return std::nullopt;
        scale[j] = std::sqrt(ss);
    }
    const double scale_c = std::sqrt(n_d);
    MatrixXd G(p, p);
    VectorXd zty(p);
    if (intercept) {
        G(0, 0) = 1.0;
        for (Index j = 0; j < k_reg; ++j) G(c0 + j, 0) = G(0, c0 + j) = centred_sums[j] / (scale_c * scale[j]);
        zty[0] = centred_sums[k_reg] / scale_c;
    }
    for (Index j = 0; j < k_reg; ++j) {
        for (Index k = 0; k < k_reg; ++k) G(c0 + j, c0 + k) = C(j, k) / (scale[j] * scale[k]);
        zty[c0 + j] = C(j, k_reg) / scale[j];
    }
    MatrixXd R;
    if (!gram_factor(G, R, kLeanConditionLimit)) return std::nullopt;

    LeanResult out;
    Equation& eq = out.equation;
    eq.estimator = spec.estimator;
    if (intercept) eq.terms.push_back("intercept");
    for (const std::string& name : in.regressor_names) eq.terms.push_back(name);
    eq.intercept_column = intercept ? 0 : -1;
    eq.X.resize(0, p);
    eq.shift = VectorXd::Zero(p);
    eq.scale = VectorXd::Zero(p);
    if (intercept) eq.scale[0] = scale_c;
    eq.shift.tail(k_reg) = shift.head(k_reg);
    eq.scale.tail(k_reg) = scale.head(k_reg);
    eq.r_factor = R;
    eq.lean_rows = static_cast<std::size_t>(N);
    const double shift_y = shift[k_reg];

    // Blocks of the working design: columns 0..k_reg-1 the slopes' Z = (x - t) / scale,
    // column k_reg the shifted outcome y - t_y; the intercept's column is 1/sqrt(N).
    VectorXd mult = scale.cwiseInverse();
    mult[k_reg] = 1.0;
    VectorXd u(block);
    // u = y - t_y - Z c, the residual of working solution c (0 in rows that are not
    // equation rows)
    auto residual = [&](Index b, const VectorXd& c) {
        u.head(b) = B.col(k_reg).head(b).array() - (intercept ? c[0] / scale_c : 0.0);
        u.head(b).noalias() -= B.topLeftCorner(b, k_reg) * c.tail(k_reg);
        u.head(b).array() *= keep.head(b).array();
    };
    auto add_gradient = [&](Index b, VectorXd& g) {
        if (intercept) g[0] += u.head(b).sum() / scale_c;
        g.tail(k_reg).noalias() += B.topLeftCorner(b, k_reg).transpose() * u.head(b);
    };
    auto correction = [&](const VectorXd& g) {
        return VectorXd(R.triangularView<Eigen::Upper>().solve(R.transpose().triangularView<Eigen::Lower>().solve(g)));
    };

    // ---- 2. solve and refine (two steps, as the solver's Gram route). The first step
    // has a pass of its own; the second is taken in the final pass below.
    VectorXd c = correction(zty);
    {
        VectorXd g = VectorXd::Zero(p);
        reader.restart();
        for (Index k = 0; k < reader.blocks(); ++k) {
            const Index b = reader.read(k, B, 0, shift, mult, rows, keep);
            residual(b, c);
            add_gradient(b, g);
        }
        c += correction(g);
    }

    // ---- 3. one pass at c: the second refinement step's gradient, the residuals
    // (aligned to the input rows), SSR, the outcome's sums, and the score sums of the
    // covariance. The second step's correction delta is then applied to the
    // coefficients, and to SSR exactly: SSR(c + delta) = SSR(c) - 2 delta'g + |R delta|^2.
    // Residuals and scores stay at c: they differ by Z delta, of the order of rounding.
    const std::size_t n_rows = in.data.outcome.size();
    assign_large(out.residuals.value, n_rows, 0.0);
    assign_large(out.residuals.defined, n_rows, std::uint8_t{0});
    assign_large(out.fitted.value, n_rows, 0.0);
    assign_large(out.fitted.defined, n_rows, std::uint8_t{0});
    const Covariance kind = spec.covariance;
    const bool by_unit = kind == Covariance::cluster || kind == Covariance::cluster0;
    const bool by_period = kind == Covariance::cluster_period || kind == Covariance::dk;
    const bool per_row = kind == Covariance::hc0 || kind == Covariance::hc1;
    const std::size_t groups = by_unit ? in.index.n_units() : in.index.n_periods();
    MatrixXd group_sums;   // p x groups: score sums per unit or per grid period
    if (by_unit || by_period) group_sums = MatrixXd::Zero(p, static_cast<Index>(groups));
    std::vector<std::uint8_t> unit_seen(in.index.n_units(), 0), period_seen(in.index.n_periods(), 0);
    MatrixXd meat = MatrixXd::Zero(p, p);
    MatrixXd W(block, p);
    VectorXd g = VectorXd::Zero(p);
    long double ssr = 0, y_sum = 0, y_squares = 0;   // y here is y - t_y
    std::vector<std::int32_t> ids(static_cast<std::size_t>(block));
    const std::vector<std::int32_t>& id_of_row = by_unit ? in.index.unit_of_row : in.index.period_of_row;
    const long double shift_y_l = shift_y;
    reader.restart();
    for (Index k = 0; k < reader.blocks(); ++k) {
        const Index b = reader.read(k, B, 0, shift, mult, rows, keep);
        residual(b, c);
        add_gradient(b, g);
        for (Index i = 0; i < b; ++i) {
            const std::size_t row = rows[static_cast<std::size_t>(i)];
            if (row == kNoRow) {
                ids[static_cast<std::size_t>(i)] = -1;
                continue;
            }
            ids[static_cast<std::size_t>(i)] = id_of_row[row];
            const long double yi = B(i, k_reg);
            const double ui = u[i];
            out.residuals.value[row] = ui;
            out.fitted.value[row] = static_cast<double>(yi + shift_y_l - ui);
            out.residuals.defined[row] = out.fitted.defined[row] = 1;
            ssr += static_cast<long double>(ui) * ui;
            y_sum += yi;
            y_squares += yi * yi;
            unit_seen[static_cast<std::size_t>(in.index.unit_of_row[row])] = 1;
            period_seen[static_cast<std::size_t>(in.index.period_of_row[row])] = 1;
        }
        if (kind == Covariance::classical) continue;
        // scores z_i u_i in the working basis
        if (intercept) W.col(0).head(b) = u.head(b) / scale_c;
        W.block(0, c0, b, k_reg) = B.topLeftCorner(b, k_reg).array().colwise() * u.head(b).array();
        if (per_row) {
            meat.selfadjointView<Eigen::Lower>().rankUpdate(W.topRows(b).transpose());
            continue;
        }
        for (Index i = 0; i < b;) {
            const std::int32_t id = ids[static_cast<std::size_t>(i)];
            Index j = i + 1;
            while (j < b && ids[static_cast<std::size_t>(j)] == id) ++j;
            if (id >= 0) group_sums.col(id) += W.middleRows(i, j - i).colwise().sum().transpose();
            i = j;
        }
    }
    const VectorXd delta = correction(g);
    c += delta;
    eq.coef = original_coefficients(eq, c.cast<long double>(), shift_y);
    eq.xtx_inverse = xtx_inverse(eq);
    {
        const long double dg = delta.cast<long double>().dot(g.cast<long double>());
        const long double rd = (R.triangularView<Eigen::Upper>() * delta).cast<long double>().squaredNorm();
        const long double corrected = ssr - 2.0L * dg + rd;
        eq.ssr = static_cast<double>(corrected > 0 ? corrected : ssr);
    }
    eq.n_units = static_cast<std::size_t>(std::count(unit_seen.begin(), unit_seen.end(), 1));
    eq.n_periods = static_cast<std::size_t>(std::count(period_seen.begin(), period_seen.end(), 1));
    {
        const long double n_l = static_cast<long double>(N);
        const long double mean = y_sum / n_l;           // of y - t_y
        out.outcome.sum = y_sum + n_l * shift_y_l;
        out.outcome.centred = y_squares - n_l * mean * mean;
        out.outcome.raw = y_squares + 2.0L * shift_y_l * y_sum + n_l * shift_y_l * shift_y_l;
    }

    std::size_t clusters = 0;
    int lag = -1;
    if (per_row) {
        meat = meat.selfadjointView<Eigen::Lower>();
    } else if (by_unit || kind == Covariance::cluster_period) {
        clusters = by_unit ? eq.n_units : eq.n_periods;
        if (clusters < 2) return std::nullopt;
        meat = group_sums * group_sums.transpose();
    } else if (kind == Covariance::dk) {
        clusters = eq.n_periods;
        if (clusters < 2) return std::nullopt;
        lag = spec.dk_lag < 0 ? dk_default_lag(clusters) : spec.dk_lag;
        meat = dk_meat(group_sums.transpose(), lag);
    }
    out.covariance = covariance_from_meat(eq, kind, meat, clusters, lag);
    return out;
}

}  // namespace weft::detail
