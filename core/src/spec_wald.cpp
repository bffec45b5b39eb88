// Joint Wald tests on a fitted model (CONVENTIONS.md "Tests", Wald).
#include <algorithm>
#include <cmath>
#include <string>
#include <vector>

#include <Eigen/Dense>

#include "weft/distributions.hpp"
#include "weft/error.hpp"
#include "weft/spec.hpp"
#include "internal.hpp"
#include "scaled.hpp"
#include "weft/tolerances.hpp"

namespace weft {

namespace {

std::string join_terms(const std::vector<std::string>& terms) {
    std::string out;
    for (const auto& t : terms) {
        if (!out.empty()) out += ", ";
        out += t;
    }
    return out.empty() ? "(none)" : out;
}

}  // namespace

WaldResult wald_test(const Eigen::VectorXd& coef, const Eigen::MatrixXd& covariance,
                     double df, const Eigen::MatrixXd& restriction,
                     const Eigen::VectorXd& value) {
    const Eigen::Index k = coef.size();
    const Eigen::Index q = restriction.rows();
    if (q < 1)
        throw Error("joint test: no restriction given; name at least one term to test");
    if (restriction.cols() != k || covariance.rows() != k || covariance.cols() != k ||
        value.size() != q)
        throw Error("joint test: the restriction has " + std::to_string(restriction.cols()) +
                    " columns and " + std::to_string(value.size()) +
                    " right-hand values, but the model has " + std::to_string(k) +
                    " terms and " + std::to_string(q) + " restrictions were given");
    const Eigen::VectorXd discrepancy = restriction * coef - value;
    Eigen::MatrixXd middle = restriction * covariance * restriction.transpose();
    middle = 0.5 * (middle + middle.transpose());
    // An eigen-decomposition of the small q x q matrix in its scaled basis both decides
    // whether it can be inverted (independently of units: tolerances.hpp) and gives the
    // quadratic form accurately.
    const detail::ScaledEigen eig = detail::scaled_eigen(middle);
    if (!eig.positive_definite(kSingularTolerance))
        throw Error("joint test: the covariance of the tested combination is singular "
                    "(no estimated variance in some tested direction, e.g. after clipping a "
                    "two-way cluster covariance, or a term tested twice); test fewer terms "
                    "or use another standard-error choice");
    const double w = eig.quadratic_form(discrepancy, kSingularTolerance);

    WaldResult r;
    const double qd = static_cast<double>(q);
    r.chi2 = w;
    r.chi2_df = qd;
    r.chi2_p = chi2_upper(w, qd);
    r.f = w / qd;
    r.f_df1 = qd;
    r.f_df2 = df;
    r.f_p = f_upper(r.f, qd, df);
    if (!std::isfinite(r.f_p))
        throw Error("joint test: the residual degrees of freedom (" + std::to_string(df) +
                    ") leave no room for an F test; use more rows or fewer terms");
    return r;
}

WaldResult wald_test(const Fit& fit, const Eigen::MatrixXd& restriction,
                     const Eigen::VectorXd& value) {
    if (fit.covariance.kind == Covariance::cr2) {
        WaldResult r = detail::cr2_wald_test(fit.equation, fit.equation.coef, fit.covariance.matrix,
                                             restriction, value);
        r.covariance_label = fit.covariance.label;
        return r;
    }
    WaldResult r = wald_test(fit.equation.coef, fit.covariance.matrix, fit.covariance.df,
                             restriction, value);
    r.covariance_label = fit.covariance.label;
    r.df_rule = fit.covariance.df_rule;
    return r;
}

WaldResult wald_test_terms(const Fit& fit, const std::vector<std::string>& terms) {
    if (terms.empty())
        throw Error("joint test: no terms named; give one or more of: " +
                    join_terms(fit.equation.terms));
    const auto k = static_cast<Eigen::Index>(fit.equation.n_terms());
    Eigen::MatrixXd restriction = Eigen::MatrixXd::Zero(static_cast<Eigen::Index>(terms.size()), k);
    std::vector<std::size_t> seen;
    for (std::size_t i = 0; i < terms.size(); ++i) {
        const std::string& name = terms[i];
        const auto pos = fit.term_position(name);
        if (!pos) {
            for (const auto& d : fit.dropped)
                if (d.name == name)
                    throw Error("joint test: term \"" + name +
                                "\" is not estimated by this model (" + d.message +
                                "); remove it from the terms to test");
            throw Error("joint test: term \"" + name +
                        "\" is not in the model; the model's terms are: " +
                        join_terms(fit.equation.terms));
        }
        if (std::find(seen.begin(), seen.end(), *pos) != seen.end())
            throw Error("joint test: term \"" + name + "\" is named twice; name each term once");
        seen.push_back(*pos);
        restriction(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(*pos)) = 1.0;
    }
    WaldResult r = wald_test(fit, restriction,
                             Eigen::VectorXd::Zero(static_cast<Eigen::Index>(terms.size())));
    r.terms = terms;
    return r;
}

std::vector<std::string> split_term_list(std::string_view text) {
    std::vector<std::string> out;
    std::size_t start = 0;
    while (start <= text.size()) {
        std::size_t end = text.find(',', start);
        if (end == std::string_view::npos) end = text.size();
        std::string_view piece = text.substr(start, end - start);
        const auto first = piece.find_first_not_of(" \t\r\n");
        if (first != std::string_view::npos) {
            const auto last = piece.find_last_not_of(" \t\r\n");
            out.emplace_back(piece.substr(first, last - first + 1));
        }
        start = end + 1;
    }
    return out;
}

}  // namespace weft
