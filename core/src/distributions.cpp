// Tail probabilities and quantiles from Boost.Math, upper tails as complements.
#include "weft/distributions.hpp"

#include <cmath>
#include <limits>

#include <boost/math/distributions/chi_squared.hpp>
#include <boost/math/distributions/fisher_f.hpp>
#include <boost/math/distributions/normal.hpp>
#include <boost/math/distributions/students_t.hpp>
#include <boost/math/policies/policy.hpp>

namespace weft {

namespace {
// Errors become NaN instead of exceptions; callers turn NaN into "not computable".
using Policy = boost::math::policies::policy<
    boost::math::policies::domain_error<boost::math::policies::ignore_error>,
    boost::math::policies::overflow_error<boost::math::policies::ignore_error>,
    boost::math::policies::evaluation_error<boost::math::policies::ignore_error>,
    boost::math::policies::pole_error<boost::math::policies::ignore_error>>;
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
}  // namespace

double t_upper(double t, double df) {
    if (!(df > 0) || std::isnan(t)) return kNaN;
    boost::math::students_t_distribution<double, Policy> dist(df);
    return boost::math::cdf(boost::math::complement(dist, t));
}

double t_two_sided_p(double t, double df) {
    if (!(df > 0) || std::isnan(t)) return kNaN;
    boost::math::students_t_distribution<double, Policy> dist(df);
    return 2.0 * boost::math::cdf(boost::math::complement(dist, std::fabs(t)));
}

double t_quantile(double probability, double df) {
    if (!(df > 0) || !(probability > 0) || !(probability < 1)) return kNaN;
    boost::math::students_t_distribution<double, Policy> dist(df);
    if (probability > 0.5) return boost::math::quantile(boost::math::complement(dist, 1.0 - probability));
    return boost::math::quantile(dist, probability);
}

double f_upper(double f, double df1, double df2) {
    if (!(df1 > 0) || !(df2 > 0) || std::isnan(f)) return kNaN;
    if (f <= 0) return 1.0;
    boost::math::fisher_f_distribution<double, Policy> dist(df1, df2);
    return boost::math::cdf(boost::math::complement(dist, f));
}

double chi2_upper(double x, double df) {
    if (!(df > 0) || std::isnan(x)) return kNaN;
    if (x <= 0) return 1.0;
    boost::math::chi_squared_distribution<double, Policy> dist(df);
    return boost::math::cdf(boost::math::complement(dist, x));
}

double normal_two_sided_p(double z) {
    if (std::isnan(z)) return kNaN;
    boost::math::normal_distribution<double, Policy> dist(0.0, 1.0);
    return 2.0 * boost::math::cdf(boost::math::complement(dist, std::fabs(z)));
}

}  // namespace weft
