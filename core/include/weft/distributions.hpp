// weft/distributions.hpp -- tail probabilities and quantiles (Boost.Math).
//
// Contract: upper tails are computed as complements (boost::math::cdf(complement(...)))
// so tiny p-values are not rounded to zero (CONVENTIONS.md "Distributions"). Degrees of
// freedom may be non-integer. A non-positive df or a NaN argument gives NaN (callers
// check with std::isfinite and report "not computable"; they never show NaN as a number).
#pragma once

namespace weft {

double t_two_sided_p(double t, double df);      // P(|T| > |t|)
double t_upper(double t, double df);            // P(T > t)
double t_quantile(double probability, double df);  // q with P(T <= q) = probability
double f_upper(double f, double df1, double df2);  // P(F > f)
double chi2_upper(double x, double df);          // P(X > x)
double normal_two_sided_p(double z);             // P(|Z| > |z|)

}  // namespace weft
