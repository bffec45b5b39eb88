// tests.cpp -- the specification tests: Wald, heteroskedasticity, serial correlation,
// Hausman and unit effects. The statistics live in core (weft/spec.hpp); this file
// checks arguments, maps errors to status codes and copies results.
#include "boundary.hpp"
#include "convert.hpp"
#include "handles.hpp"

#include <weft/spec.hpp>

#include <cmath>
#include <string>
#include <vector>

using namespace weft_cabi;

namespace weft_cabi {
weft_model* new_model(const weft_panel* panel, const weft::ModelSpec& spec, const char* fn, bool lean);
}

namespace {

// Warnings of the last test call on this thread (weft_test_warnings).
thread_local std::string test_warnings;

void keep_warnings(const std::vector<std::string>& warnings) {
    test_warnings.clear();
    for (const std::string& w : warnings) test_warnings += (test_warnings.empty() ? "" : "; ") + w;
}

}  // namespace

namespace weft_cabi {
// For the other test files of the C interface (bootstrap.cpp).
void keep_test_warnings(const std::vector<std::string>& warnings) { keep_warnings(warnings); }
}  // namespace weft_cabi

namespace {

weft_wald_result to_c(const weft::WaldResult& r) {
    weft_wald_result out;
    out.f = r.f;
    out.f_df1 = r.f_df1;
    out.f_df2 = r.f_df2;
    out.f_p = r.f_p;
    out.chi2 = r.chi2;
    out.chi2_df = r.chi2_df;
    out.chi2_p = r.chi2_p;
    return out;
}

weft_wald_result nan_wald() {
    return weft_wald_result{nan_value, nan_value, nan_value, nan_value, nan_value, nan_value, nan_value};
}

// Names are checked here, before core, so that a name the model lacks is WEFT_ERANGE
// and a repeated name WEFT_EINVAL; what core then refuses is a computation problem.
void check_terms(const weft_model* model, const std::vector<std::string>& names) {
    if (names.empty())
        fail(WEFT_EINVAL, "no term is named; give one or more terms, e.g. \"" +
                              (model->fit.equation.terms.empty() ? std::string("x1") : model->fit.equation.terms.back()) + "\"");
    for (std::size_t i = 0; i < names.size(); ++i) {
        for (std::size_t j = 0; j < i; ++j)
            if (names[j] == names[i])
                fail(WEFT_EINVAL, "term \"" + names[i] +
                                      "\" is named twice; name each term once");
        if (model->fit.term_position(names[i])) continue;
        for (const weft::DroppedTerm& d : model->fit.dropped)
            if (d.name == names[i])
                fail(WEFT_ERANGE, "term \"" + names[i] + "\" was dropped from the model (" +
                                      d.message + "), so it cannot be tested");
        std::string known;
        for (const std::string& t : model->fit.equation.terms) known += (known.empty() ? "" : ", ") + t;
        fail(WEFT_ERANGE, "the model has no term \"" + names[i] + "\"; its terms are: " + known);
    }
}

int joint(const weft_model* model, const std::vector<std::string>& names, weft_wald_result* out) {
    *out = nan_wald();
    check_terms(model, names);
    *out = to_c(weft::wald_test_terms(model->fit, names));
    return WEFT_OK;
}

// Fit the two models a comparison needs. A failure here is about the data (EDATA);
// the caller's comparison itself maps core's errors to WEFT_ECOMPUTE.
std::unique_ptr<weft_model> fit_for_test(const weft_panel* panel, weft::ModelSpec spec,
                                         weft::Estimator estimator, const char* fn) {
    spec.estimator = estimator;
    spec.covariance = weft::Covariance::classical;
    spec.dk_lag = -1;
    std::unique_ptr<weft_model> model;
    const int status = guarded(WEFT_EDATA, [&] {
        model.reset(new_model(panel, spec, fn, false));
        return WEFT_OK;
    });
    if (status != WEFT_OK) {
        std::string message = weft_last_error();
        fail(status, message.substr(6));  // drop "weft: ": fail() adds it again
    }
    return model;
}

}  // namespace

extern "C" {

const char* weft_test_warnings(void) { return test_warnings.c_str(); }

int weft_hetero_form_parse(const char* word, int* form) {
    return guarded(WEFT_EMODEL, [&] {
        require(form, "weft_hetero_form_parse", "form");
        switch (weft::parse_hetero_form(word == nullptr ? "" : word)) {
            case weft::HeteroForm::koenker: *form = WEFT_HETERO_KOENKER; break;
            case weft::HeteroForm::bp: *form = WEFT_HETERO_BP; break;
            case weft::HeteroForm::white_special: *form = WEFT_HETERO_WHITE_SPECIAL; break;
            case weft::HeteroForm::white_full: *form = WEFT_HETERO_WHITE_FULL; break;
        }
        return WEFT_OK;
    });
}

int weft_test_joint(const weft_model* model, const char* const* terms, size_t n_terms,
                    weft_wald_result* out) {
    return guarded(WEFT_ECOMPUTE, [&] {
        const char* fn = "weft_test_joint";
        test_warnings.clear();
        require_model(model, fn);
        require(terms, fn, "terms");
        require(out, fn, "out");
        std::vector<std::string> names;
        for (std::size_t i = 0; i < n_terms; ++i) {
            if (terms[i] == nullptr)
                fail(WEFT_EINVAL, std::string(fn) + ": terms[" + std::to_string(i) + "] is NULL");
            names.emplace_back(terms[i]);
        }
        return joint(model, names, out);
    });
}

int weft_test_linear(const weft_model* model, const double* restriction, size_t q, const double* value,
                     weft_wald_result* out) {
    return guarded(WEFT_ECOMPUTE, [&] {
        const char* fn = "weft_test_linear";
        test_warnings.clear();
        require_model(model, fn);
        require(restriction, fn, "restriction");
        require(out, fn, "out");
        *out = nan_wald();
        if (q == 0) fail(WEFT_EINVAL, std::string(fn) + ": q is 0; give at least one restriction");
        const std::size_t k = model->fit.equation.terms.size();
        Eigen::MatrixXd r(static_cast<Eigen::Index>(q), static_cast<Eigen::Index>(k));
        Eigen::VectorXd rhs = Eigen::VectorXd::Zero(static_cast<Eigen::Index>(q));
        for (std::size_t i = 0; i < q; ++i) {
            for (std::size_t j = 0; j < k; ++j) {
                const double x = restriction[i * k + j];
                if (!std::isfinite(x))
                    fail(WEFT_EINVAL, std::string(fn) + ": restriction row " + std::to_string(i) + ", column " +
                                          std::to_string(j) + " is not a finite number");
                r(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(j)) = x;
            }
            if (value != nullptr) {
                if (!std::isfinite(value[i]))
                    fail(WEFT_EINVAL, std::string(fn) + ": value[" + std::to_string(i) + "] is not a finite number");
                rhs[static_cast<Eigen::Index>(i)] = value[i];
            }
        }
        *out = to_c(weft::wald_test(model->fit, r, rhs));
        return WEFT_OK;
    });
}

int weft_test_joint_list(const weft_model* model, const char* term_list, weft_wald_result* out) {
    return guarded(WEFT_ECOMPUTE, [&] {
        const char* fn = "weft_test_joint_list";
        test_warnings.clear();
        require_model(model, fn);
        require(term_list, fn, "term_list");
        require(out, fn, "out");
        return joint(model, weft::split_term_list(term_list), out);
    });
}

int weft_test_hetero(const weft_model* model, int form, weft_hetero_result* out) {
    return guarded(WEFT_ECOMPUTE, [&] {
        const char* fn = "weft_test_hetero";
        test_warnings.clear();
        require_model(model, fn);
        require(out, fn, "out");
        weft::HeteroForm core_form = weft::HeteroForm::koenker;
        switch (form) {
            case WEFT_HETERO_KOENKER: core_form = weft::HeteroForm::koenker; break;
            case WEFT_HETERO_BP: core_form = weft::HeteroForm::bp; break;
            case WEFT_HETERO_WHITE_SPECIAL: core_form = weft::HeteroForm::white_special; break;
            case WEFT_HETERO_WHITE_FULL: core_form = weft::HeteroForm::white_full; break;
            default:
                fail(WEFT_EINVAL, std::string(fn) + ": form is " + std::to_string(form) +
                                      ", which is not a weft_hetero_form value (0 to 3)");
        }
        const weft::HeteroResult r = weft::hetero_test(full_fit(model), core_form);
        keep_warnings(r.warnings);
        *out = weft_hetero_result{r.lm, r.lm_df, r.lm_p, r.f, r.f_df1, r.f_df2, r.f_p, r.aux_r2};
        return WEFT_OK;
    });
}

int weft_test_serial(const weft_model* model, weft_serial_result* out) {
    return guarded(WEFT_ECOMPUTE, [&] {
        const char* fn = "weft_test_serial";
        test_warnings.clear();
        require_model(model, fn);
        require(out, fn, "out");
        const weft::SerialResult r = weft::serial_test(full_fit(model));
        keep_warnings(r.warnings);
        weft_serial_result s;
        s.intercept = r.intercept;
        s.slope = r.slope;
        s.se = r.se;
        s.t = r.t;
        s.p = r.p;
        s.df = r.df;
        s.pairs = static_cast<double>(r.pairs);
        s.units = static_cast<double>(r.units);
        s.level_null = r.level ? r.level->null_value : nan_value;
        s.level_se = r.level ? r.level->se : nan_value;
        s.level_f = r.level ? r.level->f : nan_value;
        s.level_df1 = r.level ? r.level->f_df1 : nan_value;
        s.level_df2 = r.level ? r.level->f_df2 : nan_value;
        s.level_p = r.level ? r.level->f_p : nan_value;
        *out = s;
        return WEFT_OK;
    });
}

int weft_test_hausman(const weft_panel* panel, const weft_options* options, weft_hausman_result* out) {
    return guarded(WEFT_ECOMPUTE, [&] {
        const char* fn = "weft_test_hausman";
        test_warnings.clear();
        require(panel, fn, "panel");
        require(out, fn, "out");
        const weft::ModelSpec spec = read_options(options, fn);
        const auto within = fit_for_test(panel, spec, weft::Estimator::within, fn);
        const auto random = fit_for_test(panel, spec, weft::Estimator::random, fn);
        const weft::HausmanResult r = weft::hausman_test(within->fit, random->fit);
        keep_warnings(r.warnings);
        weft_hausman_result h;
        h.statistic = r.statistic;
        h.df = r.df;
        h.p = r.p;
        h.rank = static_cast<double>(r.rank);
        h.positive_definite = r.positive_definite ? 1 : 0;
        h.robust = to_c(r.robust);
        h.auxiliary_classical = to_c(r.auxiliary_classical);
        *out = h;
        return WEFT_OK;
    });
}

int weft_test_effects(const weft_panel* panel, const weft_options* options, weft_effects_result* out) {
    return guarded(WEFT_ECOMPUTE, [&] {
        const char* fn = "weft_test_effects";
        test_warnings.clear();
        require(panel, fn, "panel");
        require(out, fn, "out");
        weft::ModelSpec spec = read_options(options, fn);
        const auto within = fit_for_test(panel, spec, weft::Estimator::within, fn);
        spec.intercept = true;  // the comparator is pooled OLS with an intercept
        const auto pooled = fit_for_test(panel, spec, weft::Estimator::pooled, fn);
        const weft::EffectsResult r = weft::effects_test(within->fit, pooled->fit);
        keep_warnings(r.warnings);
        *out = weft_effects_result{r.f, r.df1, r.df2, r.p, r.ssr_pooled, r.ssr_within};
        return WEFT_OK;
    });
}

}  // extern "C"
