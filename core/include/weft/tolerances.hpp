// The relative tolerances of every rank, singularity, clipping and "is this zero"
// decision in core, in one place (CONVENTIONS.md "Decisions that must not depend on
// units of measure"). Each is relative to a scaled basis, never to a raw magnitude, so
// multiplying a regressor or the outcome by 10^k changes no decision.
//
// The scaled basis of a symmetric matrix M (a covariance, R V R', a difference of two
// covariances) is D M D with D = diag(|M_jj|)^-1/2 (a zero diagonal entry gives
// D_jj = 1): a regressor measured in other units rescales row and column j of M by the
// same factor, which D removes exactly. Its eigenvalues are compared with the largest
// of them. A design column is judged after centring and scaling to unit length.
#pragma once

namespace weft {

// Collinearity in the solver: after centring and scaling every working column to unit
// length, a column whose distance from the span of the kept columns before it (|R_kk|
// when the small R of the tall-skinny QR is re-triangularised in term order) is at most
// kRankTolerance times its length is collinear and dropped. 1e-10 keeps NIST Filip (all
// 11 terms, condition number near 1e15 in raw units but its scaled columns are
// separated by more than this) while exact collinearity in double (distances of order
// 1e-15) is caught with five orders of magnitude to spare.
inline constexpr double kRankTolerance = 1e-10;

// A column that centring (or demeaning within units, or differencing) reduces to at most
// kConstantTolerance of its raw length is a multiple of the intercept (has no variation
// within units, no variation over time): the subtraction of a constant leaves only
// rounding, about 1e-16 of the raw length times a few for the sums, so 1e-13 separates
// rounding from the smallest real variation a double column can carry next to a large
// level. Both lengths scale with the column's units, so the ratio does not.
inline constexpr double kConstantTolerance = 1e-13;

// Joint Wald tests (and linear restrictions): R V R' is judged in its scaled basis; the
// test is refused when its smallest eigenvalue is at most kSingularTolerance times the
// largest. A term tested twice, or a direction a clipped covariance left without
// variance, gives an eigenvalue of rounding size (1e-16 times q), far below; a real
// combination whose scaled covariance is this close to singular has a condition number
// above 1e12, where the statistic would carry no correct digit anyway.
inline constexpr double kSingularTolerance = 1e-12;

// Hausman comparison: the rank (and df) of V_within - V_random is the number of its
// eigenvalues, in the scaled basis, with |lambda| > kHausmanRankTolerance * max|lambda|.
// The difference of two covariances computed from different equations carries rounding
// of about 1e-15 of their size in a direction the two agree on; 1e-10 counts such a
// direction as null with room for the differencing to lose five more digits, and is the
// rule the comparison used before in raw units (now scale-free).
inline constexpr double kHausmanRankTolerance = 1e-10;

// Two-way clustering (Cameron, Gelbach and Miller 2011): V_unit + V_period - V_cells is
// clipped only when its smallest eigenvalue in the scaled basis is below
// -kClipTolerance times the largest. The sums of scores behind the three parts round at
// about N * 1e-16 relative (recursive sums of up to 1e6 rows), so a negative eigenvalue
// smaller than 1e-10 of the largest cannot be told from rounding, and clipping it would
// change no reported digit but would make the decision depend on units.
inline constexpr double kClipTolerance = 1e-10;

// Leverage: a row with 1 - h_ii at most this is fitted exactly (hc2, hc3, cr2). h_ii is
// itself a scale-free number (a diagonal entry of a projection), computed to about
// 1e-15, so 1e-10 leaves five digits of room.
inline constexpr double kFullLeverage = 1e-10;

// Symmetric inverse square roots (cr2's A_g, pseudo-inverse over the non-null part):
// eigenvalues of I - H_gg, scale-free, at most kPseudoInverseTolerance times the largest
// count as null. Rounding in a projection is about 1e-15; 1e-12 keeps three digits of room.
inline constexpr double kPseudoInverseTolerance = 1e-12;

// An exact fit: SSR at most kExactFitTolerance times the sum of squares of the outcome
// (a ratio, so scale-free): the residuals are rounding (1e-14 relative in size, 1e-28
// in squares) and their standard errors would be noise.
inline constexpr long double kExactFitTolerance = 1e-28L;

}  // namespace weft
