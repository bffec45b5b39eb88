// Heteroskedasticity tests by auxiliary regression of the squared residuals
// (Breusch & Pagan 1979; Koenker 1981; White 1980), CONVENTIONS.md "Tests".
#include <algorithm>
#include <cctype>
#include <cmath>
#include <string>
#include <vector>

#include "weft/distributions.hpp"
#include "weft/error.hpp"
#include "internal.hpp"
#include "weft/spec.hpp"

namespace weft {

namespace {

std::string lower(std::string_view s) {
    std::string out(s);
    for (auto& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
    return out;
}

}  // namespace

HeteroForm parse_hetero_form(std::string_view word) {
    std::string w = lower(word);
    const auto first = w.find_first_not_of(" \t");
    if (first == std::string::npos) return HeteroForm::koenker;
    w = w.substr(first, w.find_last_not_of(" \t") - first + 1);
    if (w == "koenker") return HeteroForm::koenker;
    if (w == "bp") return HeteroForm::bp;
    if (w == "white-special") return HeteroForm::white_special;
    if (w == "white-full") return HeteroForm::white_full;
    throw Error("heteroskedasticity test: unknown form \"" + std::string(word) +
                "\"; use one of: koenker, bp, white-special, white-full");
}

const char* to_word(HeteroForm form) {
    switch (form) {
        case HeteroForm::koenker: return "koenker";
        case HeteroForm::bp: return "bp";
        case HeteroForm::white_special: return "white-special";
        case HeteroForm::white_full: return "white-full";
    }
    return "koenker";
}

HeteroResult hetero_test(const Equation& equation, HeteroForm form) {
    detail::require_rows(equation, "the heteroskedasticity test");
    detail::refuse_weighted(equation, "heteroskedasticity test",
                            "its auxiliary regression has no agreed weighted form; the weighted fit's hc1 or "
                            "cluster standard errors already allow for heteroskedasticity");
    const auto n = static_cast<Eigen::Index>(equation.nobs());
    const auto k = static_cast<Eigen::Index>(equation.n_terms());

    // Z: the estimated equation's columns without its intercept column.
    std::vector<Eigen::Index> z_cols;
    for (Eigen::Index j = 0; j < k; ++j)
        if (j != equation.intercept_column) z_cols.push_back(j);

    std::vector<Eigen::VectorXd> columns;
    std::vector<std::string> names;
    if (form == HeteroForm::white_special) {
        columns.push_back(equation.fitted);
        names.emplace_back("fitted");
        columns.push_back(equation.fitted.array().square().matrix());
        names.emplace_back("fitted^2");
    } else {
        for (auto j : z_cols) {
            columns.push_back(equation.X.col(j));
            names.push_back(equation.terms[static_cast<std::size_t>(j)]);
        }
        if (form == HeteroForm::white_full) {
            for (std::size_t a = 0; a < z_cols.size(); ++a)
                for (std::size_t b = a; b < z_cols.size(); ++b) {
                    columns.push_back(equation.X.col(z_cols[a]).cwiseProduct(equation.X.col(z_cols[b])));
                    names.push_back(equation.terms[static_cast<std::size_t>(z_cols[a])] + "*" +
                                    equation.terms[static_cast<std::size_t>(z_cols[b])]);
                }
        }
    }
    if (columns.empty())
        throw Error(std::string("heteroskedasticity test (") + to_word(form) +
                    "): the model has no regressor besides the intercept to test against; "
                    "add a regressor or use white-special");
    const auto m = static_cast<Eigen::Index>(columns.size());
    if (m + 2 > n)
        throw Error(std::string("heteroskedasticity test (") + to_word(form) + "): the auxiliary "
                    "regression has " + std::to_string(m + 1) + " columns but only " +
                    std::to_string(n) + " rows" +
                    (form == HeteroForm::white_full
                         ? "; use white-special, which needs only 3 columns"
                         : "; use more rows"));

    EquationInput aux;
    aux.estimator = equation.estimator;
    aux.X.resize(n, m + 1);
    aux.X.col(0).setOnes();
    for (Eigen::Index j = 0; j < m; ++j) aux.X.col(j + 1) = columns[static_cast<std::size_t>(j)];
    aux.y = equation.residual.array().square().matrix();
    aux.terms.reserve(static_cast<std::size_t>(m + 1));
    aux.terms.emplace_back("intercept");
    for (auto& s : names) aux.terms.push_back(s);
    aux.intercept_column = 0;
    aux.input_row = equation.input_row;

    long double mean = 0;
    for (Eigen::Index i = 0; i < n; ++i) mean += aux.y(i);
    mean /= static_cast<long double>(n);
    long double tss = 0;
    for (Eigen::Index i = 0; i < n; ++i) {
        const long double d = aux.y(i) - mean;
        tss += d * d;
    }
    if (!(tss > 0))
        throw Error(std::string("heteroskedasticity test (") + to_word(form) +
                    "): the squared residuals do not vary (a perfect fit or equal residuals); "
                    "there is nothing to test");

    const Equation fitted_aux = solve_equation(std::move(aux));

    HeteroResult r;
    r.form = form;
    r.aux_terms = static_cast<std::size_t>(m);
    r.aux_dropped = fitted_aux.dropped.size();
    const double q = static_cast<double>(fitted_aux.n_terms()) - 1.0;
    if (q < 1)
        throw Error(std::string("heteroskedasticity test (") + to_word(form) +
                    "): every auxiliary column is constant or collinear; there is nothing to test");
    const double nd = static_cast<double>(n);
    const double r2 = static_cast<double>(1.0L - static_cast<long double>(fitted_aux.ssr) / tss);
    r.aux_r2 = r2;
    if (form == HeteroForm::bp) {
        // Half the explained sum of squares of g = u^2/(SSR/N) - 1: ESS_g = R^2 TSS_g and
        // TSS_g = TSS(u^2) / (SSR/N)^2, since g is an affine map of u^2.
        const long double s2 = static_cast<long double>(equation.ssr) / static_cast<long double>(n);
        r.lm = static_cast<double>(static_cast<long double>(r2) * tss / (s2 * s2) / 2.0L);
    } else {
        r.lm = nd * r2;
    }
    r.lm_df = q;
    r.lm_p = chi2_upper(r.lm, q);
    r.f_df1 = q;
    r.f_df2 = nd - q - 1.0;
    r.f = (r2 / q) / ((1.0 - r2) / r.f_df2);
    r.f_p = f_upper(r.f, q, r.f_df2);
    if (!std::isfinite(r.f) || !std::isfinite(r.lm) || !(r.f_df2 >= 1))
        throw Error(std::string("heteroskedasticity test (") + to_word(form) +
                    "): the auxiliary regression fits the squared residuals exactly, so no F "
                    "form exists; use more rows or fewer auxiliary columns");
    if (r.aux_dropped > 0)
        r.warnings.push_back(std::to_string(r.aux_dropped) +
                             " auxiliary column(s) dropped as collinear; df counts the " +
                             std::to_string(static_cast<long>(q)) + " kept");
    return r;
}

HeteroResult hetero_test(const Fit& fit, HeteroForm form) {
    return hetero_test(fit.equation, form);
}

}  // namespace weft
