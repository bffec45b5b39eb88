// Lean fits: the estimated equation of pooled or fd in streaming passes over the
// caller's columns, never holding its N x K design (see fit_model_lean in model.hpp).
// A weighted fit (CONVENTIONS.md "Observation weights") reads every equation row times
// sqrt(w) (fd: the later row's w), as fit_weights.cpp scales the full route's rows: the
// row weight below is then sqrt(w), the count N becomes sum w, and every step is the
// unweighted one on the scaled rows.
//
// The steps are the solver's Gram route (solver.cpp), in the same working basis
// (columns centred against the intercept and scaled to unit length):
//  1. one pass: the Gram matrix of [w, x - s0, y - s0] (w the row weight, s0 the first
//     block's column means, so the centred Gram follows exactly as S - N (m - s0)(m - s0)'
//     with a small correction), factorised by Cholesky when cond(Z) is small. The same
//     pass takes the first refinement step (corrected semi-normal equations, Bjorck
//     1996 section 6.6.5) from a starting solution, the fit of the first 64 blocks
//     (whose blocks are read once more for it): the sums it needs are linear in the
//     rows, so the start need not be the Gram solution;
//  2. one pass: residuals (aligned to the input rows), SSR, the outcome's sums, the
//     score sums that the covariance needs (per row for hc0/hc1, per unit, per
//     period), and the gradient of the second refinement step, whose correction is
//     applied to the coefficients and, exactly, to SSR.
// The data are read about 2.1 times. Whatever this route cannot decide exactly as the
// full solver would (a term near the 1e-13 thresholds of dropping, a design near or
// above the Gram route's condition limit, values near the limits of double, a NaN or
// infinity, fewer than 2 clusters) is handed back to the full route, which then
// decides and words any message.
#include <algorithm>
#include <cmath>
#include <limits>

#if defined(__SSE2__)
#include <emmintrin.h>
#endif

#include <Eigen/Dense>

#include "weft/error.hpp"
#include "weft/buffer.hpp"
#include "weft/model.hpp"
#include "internal.hpp"

namespace weft::detail {

using Eigen::Index;
using Eigen::MatrixXd;
using Eigen::VectorXd;

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
    if (spec.period_effects) return false;
    // between: the unit means' small design, solved and covered as on the full route
    if (spec.estimator == Estimator::between) return true;
    if (spec.estimator != Estimator::pooled && spec.estimator != Estimator::fd &&
        spec.estimator != Estimator::within)
        return false;
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
// Rows per block: the block of [w, X, y] (under 100 KB at 20 regressors) stays in the
// first-level cache between being written and its Gram update, measurably faster
// than the full route's 2,048 on the benchmark machine (tests/bench, 5-8%).
// (kLeanBlockRows = 512, internal.hpp: within's unit-aligned blocks need it too)
// The start of the refinement: the fit of the first blocks (32,768 rows), whose
// system is only required to be solvable.
constexpr Index kSampleBlocks = 64;
constexpr double kSampleConditionLimit = 1e6;

// The working system of a Gram matrix S of [w, v - s0] (v = [x, y], w the weights):
// the shift t (the means, with an intercept; else 0), the scales (centred column
// lengths), the Gram matrix G of the working design Z (intercept column 1/sqrt(n)
// first, when there is one) and Z'(y - t_y). usable: every scale is positive.
struct WorkingSystem {
    VectorXd shift, scale, zty;
    MatrixXd G;
    double n = 0;
    bool usable = false;
};

WorkingSystem working_system(const MatrixXd& S, const VectorXd& s0, bool intercept, Index k_reg) {
    WorkingSystem w;
    const Index m = k_reg + 1, p = k_reg + (intercept ? 1 : 0), c0 = intercept ? 1 : 0;
    w.n = S(0, 0);
    if (!(w.n > 0)) return w;
    const VectorXd sums = S.col(0).tail(m);
    const MatrixXd S_v = S.bottomRightCorner(m, m);
    // sum (v - t)(v - t)' = S_v + d sums' + sums d' + n d d',  d = s0 - t
    w.shift = VectorXd::Zero(m);
    if (intercept) w.shift = s0 + sums / w.n;
    const VectorXd d = s0 - w.shift;
    const MatrixXd C = S_v + d * sums.transpose() + sums * d.transpose() + w.n * d * d.transpose();
    const VectorXd centred_sums = sums + w.n * d;   // sum (v - t)
    w.scale = VectorXd::Ones(m);
    for (Index j = 0; j < k_reg; ++j) {
        if (!(C(j, j) > 0)) return w;
        w.scale[j] = std::sqrt(C(j, j));
    }
    const double scale_c = std::sqrt(w.n);
    w.G.resize(p, p);
    w.zty.resize(p);
    if (intercept) {
        w.G(0, 0) = 1.0;
        for (Index j = 0; j < k_reg; ++j) w.G(c0 + j, 0) = w.G(0, c0 + j) = centred_sums[j] / (scale_c * w.scale[j]);
        w.zty[0] = centred_sums[k_reg] / scale_c;
    }
    for (Index j = 0; j < k_reg; ++j) {
        for (Index k = 0; k < k_reg; ++k) w.G(c0 + j, c0 + k) = C(j, k) / (w.scale[j] * w.scale[k]);
        w.zty[c0 + j] = C(j, k_reg) / w.scale[j];
    }
    w.usable = w.G.allFinite() && w.zty.allFinite();
    return w;
}

// A run of equation rows whose input rows (and earlier rows) are consecutive.
struct Piece {
    Index at;              // first equation row
    std::size_t later;     // its input row
    std::size_t earlier;   // fd: the earlier row of the first difference
    Index length;
};

// One block of the estimated equation's rows as the reader wrote them.
struct Block {
    Index rows = 0;                    // block rows
    std::size_t first = 0;             // sorted input: the input row of block row 0 (rows are consecutive)
    const double* keep = nullptr;      // per block row: 1 (weighted: sqrt(w)) for an equation row, 0 for a row to skip
    const std::size_t* input = nullptr;  // unsorted input: the input row of each block row
    std::size_t input_row(Index i) const { return input != nullptr ? input[i] : first + static_cast<std::size_t>(i); }
};

// The regressor columns the equation reads (LeanInput::regressors, else all).
std::vector<const Column*> regressor_columns(const LeanInput& in) {
    std::vector<const Column*> out;
    if (in.regressors != nullptr) return *in.regressors;
    for (const Column& x : in.data.regressors) out.push_back(&x);
    return out;
}

// Reads [X, y] of the estimated equation (original scale; fd: differences) in blocks.
// Weighted (LeanInput::weights): every row times sqrt(w), the block's keep then holding
// sqrt(w) (0 for a row to skip).
// Sorted input (LeanInput::is_row): a block is a range of input rows, read by
// whole-column vector operations; rows that are not equation rows (a unit's first row,
// a row with a missing value) are written as 0 and have weight 0. Otherwise the
// equation rows are gathered from LeanInput::later (and earlier), in runs.
class BlockReader {
public:
    BlockReader(const LeanInput& in, Index block) : in_(in), fd_(in.spec.estimator == Estimator::fd), block_(block) {
        if (in.is_row != nullptr) {
            const std::vector<std::uint8_t>& is_row = *in.is_row;
            lo_ = 0;
            while (lo_ < is_row.size() && !is_row[lo_]) ++lo_;
            hi_ = is_row.size();
            while (hi_ > lo_ && !is_row[hi_ - 1]) --hi_;
            marks_ = is_row.data();
            keep_.assign(static_cast<std::size_t>(block), 0.0);
            if (in.unit_means != nullptr) {
                centre_.assign(static_cast<std::size_t>(block), 0.0);
                slot_.assign(static_cast<std::size_t>(block), 0);
                // means still to find: blocks that end where a unit ends (lean_units.cpp)
                if (in.unit_means_pending) starts_ = unit_aligned_blocks(in.index, lo_, hi_, static_cast<std::size_t>(block));
            }
        } else {
            const std::vector<std::size_t>& later = *in.later;
            for (std::size_t i = 0; i < later.size(); ++i) {
                const bool extends = i > 0 && later[i] == later[i - 1] + 1 &&
                                     (!fd_ || (*in.earlier)[i] == (*in.earlier)[i - 1] + 1);
                if (extends)
                    ++pieces_.back().length;
                else
                    pieces_.push_back({static_cast<Index>(i), later[i], fd_ ? (*in.earlier)[i] : 0, 1});
            }
            keep_.assign(static_cast<std::size_t>(block), 1.0);
        }
        for (const Column* x : regressor_columns(in)) {
            columns_.push_back(x->data());
            masks_.push_back(x->mask());
        }
        if (in.weights != nullptr) weights_ = in.weights->data();
        columns_.push_back(in.data.outcome.data());
        masks_.push_back(in.data.outcome.mask());
    }

    Index width() const { return static_cast<Index>(columns_.size()); }
    Index blocks() const {
        if (!starts_.empty()) return static_cast<Index>(starts_.size()) - 1;
        const std::size_t span = sorted() ? hi_ - lo_ : in_.later->size();
        return static_cast<Index>((span + static_cast<std::size_t>(block_) - 1) / static_cast<std::size_t>(block_));
    }
    void restart() { cursor_ = 0; }

    // Every cell outside the missing masks is a finite number. Sorted input: the rows
    // read with check_values are checked as they are read (call this after such a
    // pass), the others here; unsorted: all here.
    bool values_finite() const {
        const std::size_t n = in_.data.outcome.size();
        if (!sorted()) return finite_rows(0, n);
        return finite_ && finite_rows(0, lo_) && finite_rows(hi_, n);
    }

    // Block k: column c of [X, y] is written as (v - shift[c]) * mult[c] into column
    // col0 + c of out's top rows (0 in a row of weight 0).
    Block read(Index k, MatrixXd& out, Index col0, const VectorXd& shift, const VectorXd& mult,
               VectorXd* levels = nullptr, bool check_values = false) {
        Block blk;
        if (sorted()) {
            const std::size_t a = starts_.empty() ? lo_ + static_cast<std::size_t>(k * block_) : starts_[static_cast<std::size_t>(k)];
            const Index b = starts_.empty() ? static_cast<Index>(std::min<std::size_t>(static_cast<std::size_t>(block_), hi_ - a))
                                            : static_cast<Index>(starts_[static_cast<std::size_t>(k) + 1] - a);
            blk.rows = b;
            blk.first = a;
            // the block's weights from the row marks (0 or 1)
            for (Index i = 0; i < b; ++i) keep_[static_cast<std::size_t>(i)] = marks_[a + static_cast<std::size_t>(i)] != 0 ? 1.0 : 0.0;
            blk.keep = keep_.data();
            if (!starts_.empty() && k == means_done_) {
                // the first read of this block: its units' means, from the rows in cache
                block_unit_means(in_, a, b, keep_.data(), *in_.unit_means);
                ++means_done_;
            }
            if (!centre_.empty()) unit_slots(a, b);
            if (weights_ != nullptr) root_weights(blk);
            for (Index c = 0; c < width(); ++c) {
                const double* x = columns_[static_cast<std::size_t>(c)];
                // a column without a mask is checked in the same loop that reads it
                const bool unmasked = masks_[static_cast<std::size_t>(c)] == nullptr;
                if (check_values && finite_ && !unmasked) finite_ = finite_block(c, a, b);
                prefetch_next(x, a + static_cast<std::size_t>(b));
                // a > 0 for fd: the first equation row has its earlier row before it;
                // within: each row's unit mean is taken off as fd takes off the earlier row
                const double* before = fd_ ? x + a - 1 : nullptr;
                if (!centre_.empty()) before = unit_means_of(c, b);
                double squares = 0;
                bool finite = true;
                kept_column(x + a, before, blk.keep, weights_ != nullptr, shift[c], mult[c],
                            out.col(col0 + c).data(), b, levels != nullptr ? &squares : nullptr,
                            check_values && finite_ && unmasked ? &finite : nullptr);
                if (levels != nullptr) (*levels)[c] += squares;
                if (!finite) finite_ = false;
            }
            return blk;
        }
        const std::vector<std::size_t>& later = *in_.later;
        const Index first = k * block_;
        const Index end = std::min(first + block_, static_cast<Index>(later.size()));
        blk.rows = end - first;
        blk.keep = keep_.data();
        blk.input = later.data() + first;
        if (weights_ != nullptr) root_weights(blk);
        while (cursor_ < pieces_.size() && pieces_[cursor_].at + pieces_[cursor_].length <= first) ++cursor_;
        for (std::size_t q_i = cursor_; q_i < pieces_.size() && pieces_[q_i].at < end; ++q_i) {
            const Piece& q = pieces_[q_i];
            const Index from = std::max(first, q.at), to = std::min(end, q.at + q.length);
            const Index len = to - from, off = from - q.at, at = from - first;
            for (Index c = 0; c < width(); ++c) {
                const double* x = columns_[static_cast<std::size_t>(c)];
                const Eigen::Map<const Eigen::ArrayXd> now(x + q.later + off, len);
                auto dest = out.col(col0 + c).segment(at, len).array();
                if (fd_) {
                    dest = (now - Eigen::Map<const Eigen::ArrayXd>(x + q.earlier + off, len) - shift[c]) * mult[c];
                    if (levels != nullptr) (*levels)[c] += now.square().sum();
                } else {
                    dest = (now - shift[c]) * mult[c];
                }
            }
        }
        if (weights_ != nullptr) weigh_block(out, col0, blk.rows);
        return blk;
    }

    // Weighted: the largest sqrt(w) read so far (the fd threshold test's bound).
    double max_root_weight() const { return max_root_; }

private:
    bool sorted() const { return in_.is_row != nullptr; }

    // Weighted: the block's keep becomes sqrt(w) of each equation row's input row (fd:
    // the later row), 0 elsewhere as before (a select: a row that is not an equation row
    // may hold any weight, NaN or negative included).
    void root_weights(const Block& blk) {
        Eigen::Map<Eigen::ArrayXd> keep(keep_.data(), blk.rows);
        if (blk.input == nullptr) {
            const Eigen::Map<const Eigen::ArrayXd> w(weights_ + blk.first, blk.rows);
            keep = (keep != 0.0).select(w.sqrt(), 0.0);
        } else {
            for (Index i = 0; i < blk.rows; ++i) keep[i] = std::sqrt(weights_[blk.input[i]]);
        }
        if (blk.rows > 0) max_root_ = std::max(max_root_, keep.maxCoeff());
    }

    // Weighted, unsorted input: the block's rows times sqrt(w).
    void weigh_block(MatrixXd& out, Index col0, Index b) const {
        const Eigen::Map<const Eigen::ArrayXd> root(keep_.data(), b);
        for (Index c = 0; c < width(); ++c) out.col(col0 + c).head(b).array() *= root;
    }

    // within: where the row of LeanInput::unit_means for each of the block's rows
    // [a, a + b) starts (its last row, zeros, for a row that is not an equation row),
    // once per block
    void unit_slots(std::size_t a, Index b) {
        const std::int64_t width = in_.unit_means->cols();
        const std::int64_t zeros = (in_.unit_means->rows() - 1) * width;
        const std::int32_t* unit = in_.index.unit_of_row.data() + a;
        for (Index i = 0; i < b; ++i)
            slot_[static_cast<std::size_t>(i)] = keep_[static_cast<std::size_t>(i)] != 0.0 ? unit[i] * width : zeros;
    }

    // within: the unit means of column c for the block's rows, into centre_
    const double* unit_means_of(Index c, Index b) {
        const double* mean_c = in_.unit_means->data() + c;
        const std::int64_t* slot = slot_.data();
        double* centre = centre_.data();
        for (Index i = 0; i < b; ++i) centre[i] = mean_c[slot[i]];
        return centre;
    }

    // Ask for the start of the next block of a column ahead of time, every
    // kPrefetchStride values: hardware prefetchers stop at each 4 KiB page of a host's
    // array, so a column read in blocks otherwise waits at every page it enters.
    void prefetch_next(const double* x, std::size_t from) const {
        const std::size_t end = std::min(hi_, from + static_cast<std::size_t>(block_));
        for (std::size_t r = from; r < end; r += kPrefetchStride) __builtin_prefetch(x + r, 0, 1);
    }
    static constexpr std::size_t kPrefetchStride = 8;    // every 64-byte line

    // dest[i] = ((now[i] - before[i]) - shift) * mult where keep[i] != 0, else 0 (a
    // select, not a product: a missing cell may hold any value, NaN included); before
    // null: no difference; weigh: the kept value times keep[i] (sqrt(w)). squares
    // (optional) gets the sum of now[i]^2 over kept rows (a threshold test only: partial
    // sums, in any order); finite (optional) is set to false if some now[i] is not a
    // finite number (inf * 0 and NaN * 0 are NaN). One loop does all of it, so that each
    // value is loaded once.
    static void kept_column(const double* __restrict now, const double* __restrict before,
                            const double* __restrict keep, bool weigh, double shift, double mult,
                            double* __restrict dest, Index b, double* squares, bool* finite) {
        using Loop = void (*)(const double*, const double*, const double*, double, double, double*, Index, double*,
                              bool*);
        static constexpr Loop loops[16] = {kept_loop<0>, kept_loop<1>, kept_loop<2>,  kept_loop<3>,
                                           kept_loop<4>, kept_loop<5>, kept_loop<6>,  kept_loop<7>,
                                           kept_loop<8>, kept_loop<9>, kept_loop<10>, kept_loop<11>,
                                           kept_loop<12>, kept_loop<13>, kept_loop<14>, kept_loop<15>};
        const int flags = (weigh ? kWeigh : 0) | (before != nullptr ? kDiff : 0) | (squares != nullptr ? kSquares : 0) |
                          (finite != nullptr ? kCheck : 0);
        loops[flags](now, before, keep, shift, mult, dest, b, squares, finite);
    }
    static constexpr int kCheck = 1, kSquares = 2, kDiff = 4, kWeigh = 8;

    template <int Flags>
    static void kept_loop(const double* __restrict now, const double* __restrict before,
                          const double* __restrict keep, double shift, double mult, double* __restrict dest, Index b,
                          double* squares, bool* finite) {
        constexpr bool Check = (Flags & kCheck) != 0, Squares = (Flags & kSquares) != 0, Diff = (Flags & kDiff) != 0,
                       Weigh = (Flags & kWeigh) != 0;
        Index i = 0;
        double sq = 0, probe = 0;
#if defined(__SSE2__)
        // two rows at a time; the select is an AND with the comparison mask
        const __m128d s = _mm_set1_pd(shift), m = _mm_set1_pd(mult), zero = _mm_setzero_pd();
        __m128d sq2 = zero, probe2 = zero;
        for (; i + 2 <= b; i += 2) {
            const __m128d x = _mm_loadu_pd(now + i);
            const __m128d k = _mm_loadu_pd(keep + i);
            const __m128d kept = _mm_cmpneq_pd(k, zero);
            __m128d v = x;
            if constexpr (Diff) v = _mm_sub_pd(v, _mm_loadu_pd(before + i));
            v = _mm_mul_pd(_mm_sub_pd(v, s), m);
            if constexpr (Weigh) v = _mm_mul_pd(v, k);
            _mm_storeu_pd(dest + i, _mm_and_pd(v, kept));
            if constexpr (Squares) {
                const __m128d xk = _mm_and_pd(x, kept);
                sq2 = _mm_add_pd(sq2, _mm_mul_pd(xk, xk));
            }
            if constexpr (Check) probe2 = _mm_add_pd(probe2, _mm_mul_pd(x, zero));
        }
        double lanes[2];
        _mm_storeu_pd(lanes, sq2);
        sq = lanes[0] + lanes[1];
        _mm_storeu_pd(lanes, probe2);
        probe = lanes[0] + lanes[1];
#endif
        for (; i < b; ++i) {
            const double v = ((Diff ? now[i] - before[i] : now[i]) - shift) * mult;
            dest[i] = keep[i] != 0.0 ? (Weigh ? v * keep[i] : v) : 0.0;
            if constexpr (Squares) {
                const double xk = keep[i] != 0.0 ? now[i] : 0.0;
                sq += xk * xk;
            }
            if constexpr (Check) probe += now[i] * 0.0;
        }
        if constexpr (Squares) *squares = sq;
        if constexpr (Check)
            if (!std::isfinite(probe)) *finite = false;
    }

    bool finite_block(Index c, std::size_t a, Index b) const {
        const double* x = columns_[static_cast<std::size_t>(c)];
        const std::uint8_t* mask = masks_[static_cast<std::size_t>(c)];
        // inf * 0 and NaN * 0 are NaN: one vectorised sum tests the block
        if (mask == nullptr) return std::isfinite((Eigen::Map<const Eigen::ArrayXd>(x + a, b) * 0.0).sum());
        for (Index i = 0; i < b; ++i)
            if (mask[a + static_cast<std::size_t>(i)] == 0 && !std::isfinite(x[a + static_cast<std::size_t>(i)]))
                return false;
        return true;
    }

    bool finite_rows(std::size_t from, std::size_t to) const {
        for (Index c = 0; c < width(); ++c)
            for (std::size_t a = from; a < to; a += static_cast<std::size_t>(block_))
                if (!finite_block(c, a, static_cast<Index>(std::min<std::size_t>(static_cast<std::size_t>(block_), to - a))))
                    return false;
        return true;
    }

    const LeanInput& in_;
    bool fd_;
    Index block_;
    std::size_t lo_ = 0, hi_ = 0;          // sorted: the input rows [lo_, hi_) hold every equation row
    const std::uint8_t* marks_ = nullptr;  // sorted: LeanInput::is_row
    std::vector<double> keep_;             // row weights of the block (sorted: 0 or 1, unsorted: 1; weighted: sqrt(w) for 1)
    std::vector<double> centre_;           // within: the block's unit means of one column
    std::vector<std::int64_t> slot_;       // within: where each block row's unit means start
    std::vector<std::size_t> starts_;      // within, means found on the way: block k is rows [starts_[k], starts_[k + 1])
    Index means_done_ = 0;                 // ... and blocks 0 .. means_done_ - 1 have their means
    std::vector<Piece> pieces_;
    std::vector<const double*> columns_;
    std::vector<const std::uint8_t*> masks_;
    bool finite_ = true;
    std::size_t cursor_ = 0;
    const double* weights_ = nullptr;      // weighted: the weight column
    double max_root_ = 0;
};

}  // namespace

namespace {

// The sizes of a lean equation.
struct LeanShape {
    Index k_reg = 0;     // regressors
    Index m = 0;         // [X, y]: k_reg + 1
    Index p = 0;         // terms: k_reg (+ intercept)
    Index c0 = 0;        // working column of the first regressor
    Index N = 0;         // equation rows
    Index block = kLeanBlockRows;
    bool intercept = false, fd = false, weighted = false;
    bool within = false;  // [X, y] less each row's unit mean (LeanInput::unit_means)
    double n_d = 0;       // N; weighted: sum w (the intercept's scale and the means' divisor)
    double max_w = 0;     // weighted: the largest w
};

// What the accumulating pass gathers: SE, the Gram matrix of B = [w, v - s0, e, 0...]
// (w the row weight: 1 or sqrt(w), 0 for a row that is not an equation row; e the start's
// residual), s0, the fd levels' sums of squares, and the start y ~ start_constant +
// x' start_slopes with the sums h = sum [w, v - s0] e of its refinement step.
struct FirstPass {
    MatrixXd SE;
    VectorXd s0, levels, start_slopes, h;
    double start_constant = 0;
};

// e = y - start_constant - x' start_slopes of the first b rows of B, written with the
// shifted columns into column m + 1.
void start_residuals(const LeanShape& sh, const FirstPass& fp, MatrixXd& B, Index b) {
    const Index k_reg = sh.k_reg, m = sh.m;
    const double gamma = fp.start_constant + fp.s0.head(k_reg).dot(fp.start_slopes) - fp.s0[k_reg];
    auto e = B.col(m + 1).head(b);
    e = B.col(m).head(b) - gamma * B.col(0).head(b);
    e.noalias() -= B.block(0, 1, b, k_reg) * fp.start_slopes;
}

// The start: the fit of the sample's own Gram matrix (if its system is usable; else 0),
// then the sample's blocks (0..last) once more for the step from the start (the reader
// ends where the main pass goes on).
void sample_start(BlockReader& reader, const LeanShape& sh, Index last, MatrixXd& B, FirstPass& fp) {
    const Index k_reg = sh.k_reg, m = sh.m;
    const MatrixXd S_sample = fp.SE.topLeftCorner(m + 1, m + 1).selfadjointView<Eigen::Lower>();
    WorkingSystem sample = working_system(S_sample, fp.s0, sh.intercept, k_reg);
    MatrixXd R_sample;
    if (sample.usable && gram_factor(sample.G, R_sample, kSampleConditionLimit)) {
        const VectorXd c_sample = R_sample.triangularView<Eigen::Upper>().solve(
            R_sample.transpose().triangularView<Eigen::Lower>().solve(sample.zty));
        fp.start_slopes = c_sample.tail(k_reg).cwiseQuotient(sample.scale.head(k_reg));
        fp.start_constant = sample.shift[k_reg] - sample.shift.head(k_reg).dot(fp.start_slopes) +
                            (sh.intercept ? c_sample[0] / std::sqrt(sample.n) : 0.0);
    }
    const VectorXd ones = VectorXd::Ones(m);
    reader.restart();
    for (Index kk = 0; kk <= last; ++kk) {
        const Block again = reader.read(kk, B, 1, fp.s0, ones);
        const Index rows = again.rows;
        B.col(0).head(rows) = Eigen::Map<const VectorXd>(again.keep, rows);
        start_residuals(sh, fp, B, rows);
        fp.h.noalias() += B.topLeftCorner(rows, m + 1).transpose() * B.col(m + 1).head(rows);
    }
}

// Stage "accumulate", streaming: one pass for the Gram matrix of [w, v - s0], its first
// row holding the count and the column sums. The same pass takes the first refinement
// step from a starting solution: the fit of the first kSampleBlocks blocks (all rows,
// for data of that size or less); its blocks are read once more for that step, once the
// start is known. The rank update of all of B gives, in its last row, the sums h of the
// first refinement step at the Gram update's speed. B's width is padded with zero
// columns to a multiple of 4, the width of the rank update's kernel, whose edge code is
// slower (on the benchmark machine, 512 x 23 blocks took 15% longer than 512 x 24).
FirstPass accumulate_gram(BlockReader& reader, const LeanShape& sh, MatrixXd& B) {
    const Index k_reg = sh.k_reg, m = sh.m;
    const Index width = B.cols();
    FirstPass fp;
    fp.SE = MatrixXd::Zero(width, width);
    fp.s0 = VectorXd::Zero(m);
    fp.levels = VectorXd::Zero(m);
    fp.start_slopes = VectorXd::Zero(k_reg);
    fp.h = VectorXd::Zero(m + 1);
    const VectorXd ones = VectorXd::Ones(m);
    const Index sample_blocks = std::min<Index>(kSampleBlocks, reader.blocks());
    reader.restart();
    bool shifted = !sh.intercept;
    for (Index k = 0; k < reader.blocks(); ++k) {
        const Block blk = reader.read(k, B, 1, fp.s0, ones, sh.fd || sh.within ? &fp.levels : nullptr, true);
        const Index b = blk.rows;
        const Eigen::Map<const VectorXd> keep(blk.keep, b);
        if (!shifted) {
            // s0: the first block's column means, close to the means of all rows
            const double count = keep.sum();
            if (count > 0) {
                fp.s0 = B.block(0, 1, b, m).colwise().sum().transpose() / count;
                if (sh.weighted) {
                    B.block(0, 1, b, m).noalias() -= keep * fp.s0.transpose();   // sqrt(w) (v - s0)
                } else {
                    B.block(0, 1, b, m).rowwise() -= fp.s0.transpose();
                    B.block(0, 1, b, m).array().colwise() *= keep.array();
                }
                shifted = true;
            }
        }
        B.col(0).head(b) = keep;
        if (k >= sample_blocks)
            start_residuals(sh, fp, B, b);
        else
            B.col(m + 1).head(b).setZero();
        fp.SE.selfadjointView<Eigen::Lower>().rankUpdate(B.topRows(b).transpose());
        if (k + 1 == sample_blocks) sample_start(reader, sh, k, B, fp);
    }
    fp.h += fp.SE.row(m + 1).head(m + 1).transpose();
    return fp;
}

// Weighted: the intercept's scale and the means' divisor become sum w (the Gram
// matrix's count, the sum of the squared weight column sqrt(w)), and the largest w is
// kept for the fd threshold test.
void weighted_count(const BlockReader& reader, const FirstPass& fp, LeanShape& sh) {
    sh.n_d = fp.SE(0, 0);
    sh.max_w = reader.max_root_weight() * reader.max_root_weight();
}

// The working system of the accumulated sums, or empty when the full route must
// decide: values near the limits of double, a term near a dropping threshold, a design
// near or above the Gram route's condition limit. R: its Cholesky factor.
std::optional<WorkingSystem> lean_system(const LeanShape& sh, const FirstPass& fp, MatrixXd& R) {
    const Index k_reg = sh.k_reg, m = sh.m;
    const MatrixXd S = fp.SE.topLeftCorner(m + 1, m + 1).selfadjointView<Eigen::Lower>();
    const VectorXd sums = S.col(0).tail(m);                 // sum (v - s0)
    const MatrixXd S_v = S.bottomRightCorner(m, m);         // sum (v - s0)(v - s0)'
    // raw sums of squares (thresholds and range checks only)
    VectorXd raw(m);
    for (Index j = 0; j < m; ++j) raw[j] = S_v(j, j) + 2.0 * fp.s0[j] * sums[j] + sh.n_d * fp.s0[j] * fp.s0[j];
    if (!raw.allFinite() || raw.maxCoeff() > 1e290) return std::nullopt;
    for (Index j = 0; j < k_reg; ++j)
        if (!(raw[j] > 1e-290)) return std::nullopt;
    WorkingSystem sys = working_system(S, fp.s0, sh.intercept, k_reg);
    if (!sys.usable) return std::nullopt;
    for (Index j = 0; j < k_reg; ++j) {
        // fd, within: a column whose differences or deviations from the unit means
        // vanish (no variation within units) (weighted: raw / max w bounds the
        // unweighted sum the full route tests)
        if ((sh.fd || sh.within) && !(std::sqrt(sh.weighted ? raw[j] / sh.max_w : raw[j]) > kLeanDropMargin * kConstantTolerance * std::sqrt(fp.levels[j]))) return std::nullopt;
        // a column that centring reduces to noise (a multiple of the intercept)
        if (!(sys.scale[j] > kLeanDropMargin * kConstantTolerance * std::sqrt(raw[j]))) return std::nullopt;
    }
    if (!gram_factor(sys.G, R, kLeanConditionLimit)) return std::nullopt;
    return sys;
}

// The lean equation's terms, working basis and factor (no rows).
Equation lean_shell(const LeanInput& in, const LeanShape& sh, const WorkingSystem& sys, const MatrixXd& R) {
    Equation eq;
    const Index k_reg = sh.k_reg, p = sh.p;
    eq.estimator = in.spec.estimator;
    if (sh.intercept) eq.terms.push_back("intercept");
    for (const std::string& name : in.regressor_names) eq.terms.push_back(name);
    eq.intercept_column = sh.intercept ? 0 : -1;
    eq.X.resize(0, p);
    eq.shift = VectorXd::Zero(p);
    eq.scale = VectorXd::Zero(p);
    if (sh.intercept) eq.scale[0] = std::sqrt(sh.n_d);
    eq.shift.tail(k_reg) = sys.shift.head(k_reg);
    eq.scale.tail(k_reg) = sys.scale.head(k_reg);
    eq.r_factor = R;
    eq.lean_rows = static_cast<std::size_t>(sh.N);
    eq.lean_weighted = sh.weighted;
    return eq;
}

// c + (R'R)^-1 g
VectorXd correction(const MatrixXd& R, const VectorXd& g) {
    return VectorXd(R.triangularView<Eigen::Upper>().solve(R.transpose().triangularView<Eigen::Lower>().solve(g)));
}

// Stage "solve", streaming: the first refinement step (corrected semi-normal equations,
// as the solver's Gram route) from the start, in the working basis: the start is
// c_j = slope_j scale_j, c_0 = sqrt(N) (constant + t_x' slopes - t_y); its gradient
// Z'e follows from the sums h as g_j = (h_j + (s0_j - t_j) h_0) / scale_j,
// g_0 = h_0 / sqrt(N).
VectorXd first_step(const LeanShape& sh, const FirstPass& fp, const WorkingSystem& sys, const MatrixXd& R) {
    const Index k_reg = sh.k_reg, c0 = sh.c0;
    const double scale_c = std::sqrt(sh.n_d);
    const double shift_y = sys.shift[k_reg];
    VectorXd c(sh.p), g(sh.p);
    c.tail(k_reg) = fp.start_slopes.cwiseProduct(sys.scale.head(k_reg));
    if (sh.intercept) {
        c[0] = scale_c * (fp.start_constant + sys.shift.head(k_reg).dot(fp.start_slopes) - shift_y);
        g[0] = fp.h[0] / scale_c;
    }
    for (Index j = 0; j < k_reg; ++j) g[c0 + j] = (fp.h[1 + j] + (fp.s0[j] - sys.shift[j]) * fp.h[0]) / sys.scale[j];
    return c + correction(R, g);
}

// Stage "scores", streaming: one pass at the working solution c for the second
// refinement step's gradient, the residuals and fitted values (aligned to the input
// rows), SSR, the outcome's sums, and the score sums of the covariance (per row for
// hc0/hc1, per unit for cluster/cluster0, per grid period for cluster-period/dk).
class ScorePass {
public:
    ScorePass(const LeanInput& in, const LeanShape& sh, const WorkingSystem& sys, const VectorXd& c)
        : in_(in), sh_(sh), c_(c), scale_c_(std::sqrt(sh.n_d)), shift_y_(sys.shift[sh.k_reg]),
          kind_(in.spec.covariance), shift_(sys.shift) {
        const Index p = sh.p, block = sh.block;
        by_unit_ = kind_ == Covariance::cluster || kind_ == Covariance::cluster0;
        by_period_ = kind_ == Covariance::cluster_period || kind_ == Covariance::dk;
        per_row_ = kind_ == Covariance::hc0 || kind_ == Covariance::hc1;
        periods_ = in.index.n_periods();   // by period: the grid periods
        // units out of order (a sheet sorted by period): one window over every unit
        window_size_ = in.units_in_order ? kUnitWindow : std::max<Index>(1, static_cast<Index>(in.index.n_units()));
        if (by_unit_) window_ = MatrixXd::Zero(p, window_size_);
        if (by_period_) period_sums_ = MatrixXd::Zero(static_cast<Index>(periods_), p);
        ids_.resize(static_cast<std::size_t>(block));
        id_of_row_ = by_unit_ ? in.index.unit_of_row.data() : in.index.period_of_row.data();
        meat_ = MatrixXd::Zero(p, p);
        W_.resize(block, p);
        g_ = VectorXd::Zero(p);
        no_unit_ = VectorXd::Zero(p);
        u_.resize(block);
        if (sh.weighted) ru_.resize(block);
    }

    // The whole pass; false when the full route must take over (units out of order).
    bool run(BlockReader& reader, MatrixXd& B, const VectorXd& mult, LeanResult& out) {
        prepare_series(out);
        reader.restart();
        for (Index k = 0; k < reader.blocks(); ++k) {
            const Block blk = reader.read(k, B, 0, shift_, mult);
            const Index b = blk.rows;
            residual(blk, B);
            if (sh_.weighted) root_residual(blk);
            // by unit, the gradient is the sum of the unit score sums (taken below)
            if (!by_unit_) add_gradient(b, B);
            // per block in double (vectorised; a block's sum of 512 squares loses at most
            // a few units in the 14th digit), across blocks in long double
            ssr += static_cast<long double>(u_.head(b).squaredNorm());
            y_sum += static_cast<long double>(sh_.weighted ? B.col(sh_.k_reg).head(b).dot(
                                                                  Eigen::Map<const VectorXd>(blk.keep, b))
                                                            : B.col(sh_.k_reg).head(b).sum());
            y_squares += static_cast<long double>(B.col(sh_.k_reg).head(b).squaredNorm());
            if (sh_.weighted)
                write_weighted_series(blk, B, out);
            else
                write_series(blk, B, out);
            if (kind_ == Covariance::classical) continue;
            if (per_row_)
                add_row_scores(b, B);
            else if (by_period_)
                add_period_scores(blk, B);
            else
                add_unit_scores(blk, B);
        }
        if (by_unit_) {
            if (!units_in_order_) return false;
            flush_window();
            g_ += no_unit_;
        }
        return true;
    }

    const VectorXd& gradient() const { return g_; }
    // The meat of kind_ in the working basis with its cluster count and lag, or empty
    // when there are fewer than 2 clusters (the full route words that).
    std::optional<MatrixXd> meat(const Equation& eq, std::size_t& clusters, int& lag) {
        clusters = 0;
        lag = -1;
        if (per_row_) return MatrixXd(meat_.selfadjointView<Eigen::Lower>());
        if (by_unit_) {
            clusters = eq.n_units;
            if (clusters < 2) return std::nullopt;
            return MatrixXd(meat_.selfadjointView<Eigen::Lower>());   // the windows' rank updates
        }
        if (kind_ == Covariance::cluster_period) {
            clusters = eq.n_periods;
            if (clusters < 2) return std::nullopt;
            return MatrixXd(period_sums_.transpose() * period_sums_);
        }
        if (kind_ == Covariance::dk) {
            clusters = eq.n_periods;
            if (clusters < 2) return std::nullopt;
            lag = in_.spec.dk_lag < 0 ? dk_default_lag(clusters) : in_.spec.dk_lag;
            return dk_meat(period_sums_, lag);
        }
        return meat_;
    }

    long double ssr = 0, y_sum = 0, y_squares = 0;   // y here is y - t_y (weighted: sums of w y, w y^2)

private:
    void prepare_series(LeanResult& out) const {
        const std::size_t n_rows = in_.data.outcome.size();
        assign_large(out.residuals.value, n_rows, 0.0);
        assign_large(out.fitted.value, n_rows, 0.0);
        if (in_.is_row != nullptr) {
            // sorted input: the defined rows are the equation rows, as marked
            reserve_large(out.residuals.defined, n_rows);
            out.residuals.defined = *in_.is_row;
            reserve_large(out.fitted.defined, n_rows);
            out.fitted.defined = *in_.is_row;
        } else {
            assign_large(out.residuals.defined, n_rows, std::uint8_t{0});
            assign_large(out.fitted.defined, n_rows, std::uint8_t{0});
        }
    }

    // u = y - t_y - Z c, the residual of working solution c (0 in rows that are not
    // equation rows)
    // weighted: the intercept's column is sqrt(w) / sqrt(sum w) and the rows of B are
    // already times sqrt(w) (0 in rows that are not equation rows)
    void residual(const Block& blk, const MatrixXd& B) {
        const Index b = blk.rows, k_reg = sh_.k_reg;
        const Eigen::Map<const Eigen::ArrayXd> keep(blk.keep, b);
        const double constant = sh_.intercept ? c_[0] / scale_c_ : 0.0;
        if (sh_.weighted)
            u_.head(b) = B.col(k_reg).head(b).array() - constant * keep;
        else
            u_.head(b) = B.col(k_reg).head(b).array() - constant;
        u_.head(b).noalias() -= B.topLeftCorner(b, k_reg) * c_.tail(k_reg);
        if (!sh_.weighted) u_.head(b).array() *= keep;
    }

    // weighted: ru_ = sqrt(w) u, what the intercept's column takes of each residual
    void root_residual(const Block& blk) {
        const Index b = blk.rows;
        ru_.head(b) = u_.head(b).cwiseProduct(Eigen::Map<const VectorXd>(blk.keep, b));
    }
    const double* intercept_u() const { return sh_.weighted ? ru_.data() : u_.data(); }

    // weighted: residuals in the outcome's units, u / sqrt(w), fitted y - u / sqrt(w)
    // (as unweigh_series does on the full route)
    void write_weighted_series(const Block& blk, const MatrixXd& B, LeanResult& out) const {
        const Index b = blk.rows, k_reg = sh_.k_reg;
        if (blk.input == nullptr) {
            // consecutive input rows (a select: 0 / 0 in a row of weight 0 is dropped)
            const Eigen::Map<const Eigen::ArrayXd> root(blk.keep, b);
            const auto u = u_.head(b).array();
            Eigen::Map<Eigen::ArrayXd>(out.residuals.value.data() + blk.first, b) = (root != 0.0).select(u / root, 0.0);
            Eigen::Map<Eigen::ArrayXd>(out.fitted.value.data() + blk.first, b) =
                (root != 0.0).select((B.col(k_reg).head(b).array() - u) / root + shift_y_, 0.0);
            return;
        }
        for (Index i = 0; i < b; ++i) {   // every listed row is an equation row
            const double root = blk.keep[i];
            const std::size_t row = blk.input[i];
            out.residuals.value[row] = u_[i] / root;
            out.fitted.value[row] = (B(i, k_reg) - u_[i]) / root + shift_y_;
            out.residuals.defined[row] = out.fitted.defined[row] = 1;
        }
    }

    void add_gradient(Index b, const MatrixXd& B) {
        if (sh_.intercept) g_[0] += Eigen::Map<const VectorXd>(intercept_u(), b).sum() / scale_c_;
        g_.tail(sh_.k_reg).noalias() += B.topLeftCorner(b, sh_.k_reg).transpose() * u_.head(b);
    }

    void write_series(const Block& blk, const MatrixXd& B, LeanResult& out) const {
        const Index b = blk.rows, k_reg = sh_.k_reg;
        if (blk.input == nullptr) {
            // consecutive input rows; rows of weight 0 have u = 0 and stay undefined
            // (the defined marks were copied above)
            const Eigen::Map<const Eigen::ArrayXd> keep(blk.keep, b);
            Eigen::Map<Eigen::ArrayXd>(out.residuals.value.data() + blk.first, b) = u_.head(b).array();
            Eigen::Map<Eigen::ArrayXd>(out.fitted.value.data() + blk.first, b) =
                (keep != 0.0).select(B.col(k_reg).head(b).array() + shift_y_ - u_.head(b).array(), 0.0);
            return;
        }
        for (Index i = 0; i < b; ++i) {
            const std::size_t row = blk.input[i];
            out.residuals.value[row] = u_[i];
            out.fitted.value[row] = B(i, k_reg) + shift_y_ - u_[i];
            out.residuals.defined[row] = out.fitted.defined[row] = 1;
        }
    }

    // hc0/hc1: scores z_i u_i in the working basis (0 in rows of weight 0)
    void add_row_scores(Index b, const MatrixXd& B) {
        if (sh_.intercept) W_.col(0).head(b) = Eigen::Map<const VectorXd>(intercept_u(), b) / scale_c_;
        W_.block(0, sh_.c0, b, sh_.k_reg) = B.topLeftCorner(b, sh_.k_reg).array().colwise() * u_.head(b).array();
        meat_.selfadjointView<Eigen::Lower>().rankUpdate(W_.topRows(b).transpose());
    }

    // by period: few groups (the grid periods), rows of one period seldom adjacent: add
    // each row's score into its period's sum, column by column
    void add_period_scores(const Block& blk, const MatrixXd& B) {
        const Index b = blk.rows, c0 = sh_.c0, k_reg = sh_.k_reg;
        double* sums_t = period_sums_.data();
        const double* iu = intercept_u();
        for (Index i = 0; i < b; ++i) ids_[static_cast<std::size_t>(i)] = id_of_row_[blk.input_row(i)];
        for (Index col = -c0; col < k_reg; ++col) {
            double* target = sums_t + (col + c0) * static_cast<Index>(periods_);
            const double* z = col >= 0 ? B.col(col).data() : nullptr;
            for (Index i = 0; i < b; ++i) {
                const std::int32_t id = ids_[static_cast<std::size_t>(i)];
                if (id < 0) continue;
                target[id] += z != nullptr ? z[i] * u_[i] : (1.0 / scale_c_) * iu[i];
            }
        }
    }

    // By unit: the score sums of a window of kUnitWindow consecutive unit ids, from
    // window_base_ on. The equation rows come in unit order (ids never decrease), so when
    // a row's unit lies past the window every unit in it is complete: its sums go into
    // the meat (one rank update for the window) and the gradient, and the window moves
    // on. The sums of all units are never held at once. Score sums over runs of rows
    // with one id, sum z_i u_i = Z_run' u_run (a row of weight 0 adds a zero score
    // wherever it goes; a row without an id adds to no unit's sum, only to the gradient).
    void add_unit_scores(const Block& blk, const MatrixXd& B) {
        const Index b = blk.rows;
        for (Index i = 0; i < b;) {
            const std::int32_t id = id_of_row_[blk.input_row(i)];
            Index j = i + 1;
            while (j < b && id_of_row_[blk.input_row(j)] == id) ++j;
            double* sum = no_unit_.data();
            if (id >= 0) {
                if (id < window_base_) units_in_order_ = false;   // not expected: see above
                if (id >= window_base_ + window_size_) {
                    flush_window();
                    window_base_ = id;
                }
                if (id >= window_base_) {
                    window_used_ = std::max(window_used_, id - window_base_ + 1);
                    sum = window_.col(id - window_base_).data();
                }
            }
            add_run(B, i, j - i, sum);
            i = j;
        }
    }

    // sum += [1/sqrt(N), z] u over block rows [i, i + len)
    void add_run(const MatrixXd& B, Index i, Index len, double* sum) const {
        const Index c0 = sh_.c0, k_reg = sh_.k_reg;
        const double* ui = u_.data() + i;
        if (sh_.intercept) {
            const double* iu = intercept_u() + i;
            double t = 0;
            for (Index r = 0; r < len; ++r) t += iu[r];
            sum[0] += t / scale_c_;
        }
        // four columns at a time: four independent sums keep the adder busy
        Index col = 0;
        for (; col + 4 <= k_reg; col += 4) {
            const double* z0 = B.col(col).data() + i;
            const double* z1 = B.col(col + 1).data() + i;
            const double* z2 = B.col(col + 2).data() + i;
            const double* z3 = B.col(col + 3).data() + i;
            double t0 = 0, t1 = 0, t2 = 0, t3 = 0;
            for (Index r = 0; r < len; ++r) {
                t0 += z0[r] * ui[r];
                t1 += z1[r] * ui[r];
                t2 += z2[r] * ui[r];
                t3 += z3[r] * ui[r];
            }
            sum[c0 + col] += t0;
            sum[c0 + col + 1] += t1;
            sum[c0 + col + 2] += t2;
            sum[c0 + col + 3] += t3;
        }
        for (; col < k_reg; ++col) {
            const double* z = B.col(col).data() + i;
            double t = 0;
            for (Index r = 0; r < len; ++r) t += z[r] * ui[r];
            sum[c0 + col] += t;
        }
    }

    void flush_window() {
        if (window_used_ == 0) return;
        const auto done = window_.leftCols(window_used_);
        meat_.selfadjointView<Eigen::Lower>().rankUpdate(done);
        g_.noalias() += done * VectorXd::Ones(window_used_);
        window_.leftCols(window_used_).setZero();
        window_used_ = 0;
    }

    static constexpr Index kUnitWindow = 256;

    const LeanInput& in_;
    const LeanShape& sh_;
    const VectorXd& c_;
    const double scale_c_;
    const double shift_y_;
    const Covariance kind_;
    const VectorXd& shift_;
    bool by_unit_ = false, by_period_ = false, per_row_ = false;
    std::size_t periods_ = 0;
    Index window_size_ = kUnitWindow;
    MatrixXd window_;       // p x window_size_
    std::int32_t window_base_ = 0, window_used_ = 0;   // ids window_base_ .. window_base_ + window_used_ - 1
    MatrixXd period_sums_;  // periods x p: score sums per grid period
    std::vector<std::int32_t> ids_;
    const std::int32_t* id_of_row_ = nullptr;
    MatrixXd meat_;
    MatrixXd W_;
    VectorXd g_;
    VectorXd no_unit_;      // by unit: score sums of rows without a unit
    VectorXd u_;
    VectorXd ru_;           // weighted: sqrt(w) u
    bool units_in_order_ = true;
};

}  // namespace

// The streaming route's stages: accumulate (accumulate_gram), the working system and
// its factor (lean_system), the first refinement step (first_step), the score pass
// (ScorePass), and the finish: the second step's correction delta applied to the
// coefficients and, exactly, to SSR: SSR(c + delta) = SSR(c) - 2 delta'g + |R delta|^2.
// Residuals and scores stay at c: they differ by Z delta, of the order of rounding.
std::optional<LeanResult> lean_equation(const LeanInput& in) {
    LeanShape sh;
    sh.fd = in.spec.estimator == Estimator::fd;
    sh.within = in.unit_means != nullptr;
    // within reads its rows by input row marks only
    if (sh.within && in.is_row == nullptr) return std::nullopt;
    sh.k_reg = static_cast<Index>(in.regressor_names.size());
    sh.weighted = in.weights != nullptr;
    if (sh.k_reg == 0) return std::nullopt;
    sh.N = static_cast<Index>(in.count);
    sh.m = sh.k_reg + 1;
    sh.intercept = in.spec.intercept && !sh.within;   // within: the unit means take its place
    sh.p = sh.k_reg + (sh.intercept ? 1 : 0);
    sh.c0 = sh.intercept ? 1 : 0;
    if (sh.N <= sh.p + static_cast<Index>(in.absorbed)) return std::nullopt;
    sh.n_d = static_cast<double>(sh.N);
    BlockReader reader(in, sh.block);
    MatrixXd B = MatrixXd::Zero(sh.block, (sh.m + 2 + 3) / 4 * 4);

    const FirstPass fp = accumulate_gram(reader, sh, B);
    // a NaN or infinity outside the masks: the full route words the message
    if (!reader.values_finite()) return std::nullopt;
    if (sh.weighted) weighted_count(reader, fp, sh);
    MatrixXd R;
    const std::optional<WorkingSystem> sys = lean_system(sh, fp, R);
    if (!sys) return std::nullopt;
    LeanResult out;
    Equation& eq = out.equation;
    eq = lean_shell(in, sh, *sys, R);
    eq.absorbed = in.absorbed;
    VectorXd c = first_step(sh, fp, *sys, R);

    // Blocks of the working design: columns 0..k_reg-1 the slopes' Z = (x - t) / scale,
    // column k_reg the shifted outcome y - t_y; the intercept's column is 1/sqrt(N).
    VectorXd mult = sys->scale.cwiseInverse();
    mult[sh.k_reg] = 1.0;
    ScorePass pass(in, sh, *sys, c);
    if (!pass.run(reader, B, mult, out)) return std::nullopt;
    const VectorXd& g = pass.gradient();
    const VectorXd delta = correction(R, g);
    c += delta;
    const double shift_y = sys->shift[sh.k_reg];
    eq.coef = original_coefficients(eq, c.cast<long double>(), shift_y);
    eq.xtx_inverse = xtx_inverse(eq);
    {
        const long double dg = delta.cast<long double>().dot(g.cast<long double>());
        const long double rd = (R.triangularView<Eigen::Upper>() * delta).cast<long double>().squaredNorm();
        const long double corrected = pass.ssr - 2.0L * dg + rd;
        eq.ssr = static_cast<double>(corrected > 0 ? corrected : pass.ssr);
    }
    eq.n_units = in.units;
    eq.n_periods = in.periods;
    {
        const long double n_l = static_cast<long double>(sh.n_d);   // N exactly; weighted: sum w
        const long double shift_y_l = shift_y;
        const long double mean = pass.y_sum / n_l;           // of y - t_y
        out.outcome.sum = pass.y_sum + n_l * shift_y_l;
        out.outcome.centred = pass.y_squares - n_l * mean * mean;
        out.outcome.raw = pass.y_squares + 2.0L * shift_y_l * pass.y_sum + n_l * shift_y_l * shift_y_l;
    }
    std::size_t clusters = 0;
    int lag = -1;
    const std::optional<MatrixXd> meat = pass.meat(eq, clusters, lag);
    if (!meat) return std::nullopt;
    out.covariance = covariance_from_meat(eq, in.spec.covariance, *meat, clusters, lag);
    return out;
}

}  // namespace weft::detail
