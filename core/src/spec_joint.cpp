// The model's joint test of all regressors (CONVENTIONS.md "The model's joint test of all
// regressors"): the Wald test that every regressor's coefficient is 0, the intercept and
// the period indicators not included, under the fit's own covariance and df (so under
// cluster it is F(q, G-1)). It is a consumer of the fitted model: it reads the estimates
// and fit.covariance only.
#include <string>
#include <unordered_set>
#include <vector>

#include <Eigen/Core>

#include "weft/error.hpp"
#include "weft/spec.hpp"
#include "fit_stages.hpp"

namespace weft::detail {

namespace {

bool clustered(Covariance c) {
    return c == Covariance::cluster || c == Covariance::cluster0 || c == Covariance::cluster_period ||
           c == Covariance::cluster_both || c == Covariance::cr2 || c == Covariance::dk;
}

// Why the test cannot be computed, in the analyst's terms.
std::string reason_of(const Fit& fit, std::size_t q, const std::string& error) {
    const CovarianceResult& cov = fit.covariance;
    if (clustered(cov.kind) && cov.clusters > 0 && q + 1 > cov.clusters) {
        const std::string what = cov.kind == Covariance::dk ? "periods" : "clusters";
        return "with " + std::to_string(cov.clusters) + " " + what + " the covariance cannot estimate the "
               "joint variance of " + std::to_string(q) + " regressors (its rank is at most " +
               std::to_string(cov.clusters - 1) + "); test fewer terms with WEFT.JOINT";
    }
    const std::string prefix = "joint test: ";
    return error.compare(0, prefix.size(), prefix) == 0 ? error.substr(prefix.size()) : error;
}

}  // namespace

void joint_statistics(Fit& fit) {
    const Equation& eq = fit.equation;
    std::unordered_set<std::string> periods;
    if (fit.spec.period_effects)
        for (std::size_t g = 0; g < fit.index.grid.size(); ++g)
            periods.insert(period_term(fit.index, static_cast<std::int32_t>(g)));
    JointTest joint;
    for (std::size_t j = 0; j < eq.terms.size(); ++j)
        if (static_cast<int>(j) != eq.intercept_column && !periods.count(eq.terms[j]))
            joint.terms.push_back(eq.terms[j]);
    if (joint.terms.empty()) return;
    const std::size_t q = joint.terms.size();
    if (fit.exact_fit) {
        joint.reason = "the fit is exact (every residual 0), so the estimates have no variance to test against";
        fit.joint = joint;
        return;
    }
    try {
        const WaldResult w = wald_test_terms(fit, joint.terms);
        joint.available = true;
        joint.f = w.f;
        joint.df1 = w.f_df1;
        joint.df2 = w.f_df2;
        joint.p = w.f_p;
        joint.chi2 = w.chi2;
        joint.chi2_p = w.chi2_p;
        joint.df_rule = w.df_rule;
    } catch (const Error& e) {
        joint.reason = reason_of(fit, q, e.what());
    }
    fit.joint = joint;
}

}  // namespace weft::detail
