// model.cpp -- the model handle: fitting, the coefficient table, summary items,
// single values, residuals and fitted values.
#include "boundary.hpp"
#include "convert.hpp"
#include "handles.hpp"

#include <weft/model.hpp>
#include <weft/options.hpp>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <optional>
#include <string>

namespace weft_cabi {

void require_model(const weft_model* model, const char* function) {
    require(model, function, "model");
}

const weft::Fit& full_fit(const weft_model* model) {
    if (model->fit.equation.rows_held()) return model->fit;
    std::lock_guard<std::mutex> lock(model->full_mutex);
    if (!model->full) model->full = std::make_shared<const weft::Fit>(weft::fit_model(*model->data, model->fit.spec));
    return *model->full;
}

namespace {

const char* estimator_text(weft::Estimator e) {
    switch (e) {
        case weft::Estimator::pooled: return "pooled OLS";
        case weft::Estimator::fd: return "first differences";
        case weft::Estimator::within: return "within (unit fixed effects)";
        case weft::Estimator::random: return "random effects (Swamy-Arora)";
        case weft::Estimator::between: return "between (unit means)";
    }
    return "unknown";
}

bool is_cluster(weft::Covariance c) {
    return c == weft::Covariance::cluster || c == weft::Covariance::cluster0 ||
           c == weft::Covariance::cluster_period || c == weft::Covariance::cluster_both ||
           c == weft::Covariance::cr2;
}

// The three fit measures of within and random, by what each number is.
constexpr const char* fit_label_rows = "squared correlation of outcome and slope prediction, all rows";
constexpr const char* fit_label_means = "squared correlation of outcome and slope prediction, unit means";
constexpr const char* fit_label_deviations =
    "squared correlation of outcome and slope prediction, deviations from unit means";

// The rows of WEFT.SUMMARY (FUNCTIONS.md), built once at fit time so that every
// borrowed label and text lives as long as the model.
std::vector<SummaryEntry> build_summary(const weft::Fit& fit) {
    std::vector<SummaryEntry> items;
    auto number = [&](const char* label, double value) {
        items.push_back(SummaryEntry{label, WEFT_ITEM_NUMBER, value, ""});
    };
    auto optional_number = [&](const char* label, const std::optional<double>& value) {
        if (value) number(label, *value);
    };
    auto text = [&](const char* label, std::string value) {
        items.push_back(SummaryEntry{label, WEFT_ITEM_TEXT, nan_value, std::move(value)});
    };
    const weft::CovarianceResult& cov = fit.covariance;
    text("estimator", estimator_text(fit.spec.estimator));
    text("model", weft::describe(fit.spec));
    // The finite-sample factor is named only when one is applied (CONVENTIONS.md).
    std::string se = cov.label;
    if (!cov.factor_rule.empty() && cov.factor != 1.0) {
        char factor[32];
        std::snprintf(factor, sizeof factor, "%.6g", cov.factor);
        se += ", factor " + cov.factor_rule + " = " + factor;
    }
    if (cov.kind == weft::Covariance::dk && cov.dk_lag >= 0 && se.find("lag") == std::string::npos)
        se += ", lag " + std::to_string(cov.dk_lag);
    text("standard errors", se);
    if (fit.equation.weights.size() != 0) {
        text("weights", fit.spec.weights.empty() ? std::string("the panel's weight column")
                                                 : "regressor column " + fit.spec.weights);
        number("rows with weight 0", static_cast<double>(fit.rows_zero_weight));
    }
    number("observations used", static_cast<double>(fit.nobs));
    number("rows used", static_cast<double>(fit.rows_used));
    number("rows dropped", static_cast<double>(fit.rows_dropped));
    number("units", static_cast<double>(fit.n_units));
    number("periods", static_cast<double>(fit.n_periods));
    number("terms", static_cast<double>(fit.n_terms));
    number("residual df", fit.df_residual);
    if (cov.term_df.empty()) {
        text("df of t, F and intervals", weft::format_number(cov.df) + " (" + cov.df_rule + ")");
    } else {
        const auto range = std::minmax_element(cov.term_df.begin(), cov.term_df.end());
        text("df of t, F and intervals", weft::format_number(*range.first) + " to " +
                                             weft::format_number(*range.second) + " (" + cov.df_rule + ")");
    }
    if (is_cluster(cov.kind) || cov.kind == weft::Covariance::dk)
        number(cov.kind == weft::Covariance::dk ? "periods in the covariance" : "clusters",
               static_cast<double>(cov.clusters));
    number("confidence level", fit.spec.level);
    optional_number("R-squared", fit.r2);
    optional_number("adjusted R-squared", fit.adj_r2);
    // within and random: how well the slopes' prediction (regressors times slopes, no
    // unit effects) tracks the outcome, read three ways (labels: FUNCTIONS.md "Labels").
    optional_number(fit_label_rows, fit.corr2_rows);
    optional_number(fit_label_means, fit.corr2_means);
    optional_number(fit_label_deviations, fit.corr2_deviations);
    number("residual std deviation", fit.sigma);
    // The model's joint test of all regressors under its own covariance and df
    // (CONVENTIONS.md), then the classical F of all terms under its own label.
    if (fit.joint && fit.joint->available) {
        number("joint test of all regressors, F", fit.joint->f);
        number("joint test of all regressors, df1", fit.joint->df1);
        number("joint test of all regressors, df2", fit.joint->df2);
        number("joint test of all regressors, p-value", fit.joint->p);
    } else if (fit.joint) {
        text("joint test of all regressors", "not available: " + fit.joint->reason);
    }
    if (fit.f) {
        number("classical F of all terms", *fit.f);
        optional_number("classical F df1", fit.f_df1);
        optional_number("classical F df2", fit.f_df2);
        optional_number("classical F p-value", fit.f_p);
    }
    if (fit.random_effects) {
        number("idiosyncratic variance", fit.random_effects->sigma2_idiosyncratic);
        number("unit effect variance", fit.random_effects->sigma2_unit);
    }
    for (const weft::DroppedTerm& d : fit.dropped) text("term dropped", d.message);
    for (const std::string& w : fit.warnings) text("warning", w);
    for (const std::string& w : cov.warnings)
        if (std::find(fit.warnings.begin(), fit.warnings.end(), w) == fit.warnings.end())
            text("warning", w);
    return items;
}

std::vector<double> build_table(const weft::Fit& fit) {
    const std::size_t k = static_cast<std::size_t>(fit.coef.size());
    std::vector<double> table(k * WEFT_COEF_COLUMNS);
    for (std::size_t r = 0; r < k; ++r) {
        const Eigen::Index i = static_cast<Eigen::Index>(r);
        double* row = &table[r * WEFT_COEF_COLUMNS];
        row[WEFT_COEF_ESTIMATE] = fit.coef[i];
        row[WEFT_COEF_SE] = fit.se[i];
        row[WEFT_COEF_T] = fit.t[i];
        row[WEFT_COEF_P] = fit.p[i];
        row[WEFT_COEF_CI_LOW] = fit.ci_low[i];
        row[WEFT_COEF_CI_HIGH] = fit.ci_high[i];
    }
    return table;
}

int write_aligned(const weft::Series& series, double* buf, unsigned char* unused, size_t capacity,
                  size_t* needed, const char* fn) {
    if (!buffer_ready(fn, buf, capacity, needed, series.size())) return WEFT_OK;
    write_series(series, buf, unused);
    return WEFT_OK;
}

// A term named in a request that the model does not estimate: say whether it was
// dropped, else list the terms there are.
[[noreturn]] void unknown_term(const weft_model* model, const std::string& term) {
    for (const weft::DroppedTerm& d : model->fit.dropped)
        if (d.name == term)
            fail(WEFT_ERANGE, "term \"" + term + "\" was dropped from the model (" +
                                  d.message + "), so it has no estimate");
    std::string known;
    for (const std::string& t : model->fit.equation.terms) known += (known.empty() ? "" : ", ") + t;
    fail(WEFT_ERANGE, "the model has no term \"" + term + "\"; its terms are: " + known);
}

// The df of term k's t, p and interval (cr2: its own Satterthwaite df).
double term_df_of(const weft::Fit& fit, std::size_t k) {
    const std::vector<double>& per_term = fit.covariance.term_df;
    return per_term.empty() ? fit.covariance.df : per_term.at(k);
}

std::optional<double> value_of(const weft::Fit& fit, const std::string& what) {
    if (what == "n") return static_cast<double>(fit.nobs);
    if (what == "units") return static_cast<double>(fit.n_units);
    if (what == "periods") return static_cast<double>(fit.n_periods);
    if (what == "r2") return fit.r2;
    if (what == "adj-r2") return fit.adj_r2;
    if (what == "corr2-rows") return fit.corr2_rows;
    if (what == "corr2-means") return fit.corr2_means;
    if (what == "corr2-deviations") return fit.corr2_deviations;
    if (what == "sigma") return fit.sigma;
    if (what == "df") return fit.covariance.df;
    if (what == "df-residual") return fit.df_residual;
    if (what == "f" || what == "f-df1" || what == "f-df2" || what == "f-p") {
        if (!fit.joint || !fit.joint->available) return std::nullopt;
        const weft::JointTest& j = *fit.joint;
        return what == "f" ? j.f : what == "f-df1" ? j.df1 : what == "f-df2" ? j.df2 : j.p;
    }
    if (what == "classical-f") return fit.f;
    if (what == "classical-f-df1") return fit.f_df1;
    if (what == "classical-f-df2") return fit.f_df2;
    if (what == "classical-f-p") return fit.f_p;
    if (what == "ssr") return fit.ssr;
    if (what == "clusters")
        return is_cluster(fit.covariance.kind) ? std::optional<double>(static_cast<double>(fit.covariance.clusters))
                                               : std::nullopt;
    if (what == "rows-dropped") return static_cast<double>(fit.rows_dropped);
    if (what == "weighted") return fit.equation.weights.size() != 0 ? 1.0 : 0.0;
    if (what == "rows-zero-weight") return static_cast<double>(fit.rows_zero_weight);
    if (what == "sigma2-idiosyncratic" || what == "sigma2-unit" || what == "theta") {
        if (!fit.random_effects) return std::nullopt;
        const weft::RandomEffectsInfo& re = *fit.random_effects;
        if (what == "sigma2-idiosyncratic") return re.sigma2_idiosyncratic;
        if (what == "sigma2-unit") return re.sigma2_unit;
        if (!re.balanced || fit.equation.unit.empty()) return std::nullopt;
        return re.theta_by_unit.at(static_cast<std::size_t>(fit.equation.unit.front()));
    }
    throw std::out_of_range(what);
}

constexpr const char* value_words =
    "estimate, se, t, p, ci-low, ci-high (with a term), n, units, periods, r2, adj-r2, corr2-rows, "
    "corr2-means, corr2-deviations, sigma, df (a term's with a term), df-residual, f, f-df1, f-df2, f-p, "
    "classical-f, classical-f-df1, classical-f-df2, classical-f-p, ssr, "
    "clusters, rows-dropped, weighted, rows-zero-weight, "
    "sigma2-idiosyncratic, sigma2-unit, theta";

}  // namespace

// Fit and package a model; shared by weft_model_new and the tests that fit their own.
// lean: the fit may be lean (weft::fit_model_lean); the model then keeps the panel's
// data so that a test needing the equation's rows can refit it in full (full_fit).
weft_model* new_model(const weft_panel* panel, const weft::ModelSpec& spec, const char* fn, bool lean) {
    require_model_columns(panel, fn);
    // Term names are how every result is addressed, so they must be unambiguous.
    const std::vector<weft::Column>& regressors = panel->data->regressors;
    for (std::size_t i = 0; i < regressors.size(); ++i) {
        const std::string& name = regressors[i].name;
        if (name == "intercept")
            throw weft::Error("regressor " + std::to_string(i + 1) +
                              " is named \"intercept\", the name of the constant term; rename that column");
        for (std::size_t j = 0; j < i; ++j)
            if (regressors[j].name == name)
                throw weft::Error("regressors " + std::to_string(j + 1) + " and " + std::to_string(i + 1) +
                                  " are both named \"" + name + "\"; give each regressor its own name");
    }
    auto model = std::make_unique<weft_model>();
    model->fit = lean ? weft::fit_model_lean(*panel->data, spec) : weft::fit_model(*panel->data, spec);
    if (!model->fit.equation.rows_held()) model->data = panel->data;
    model->options = from_spec(model->fit.spec);
    model->table = build_table(model->fit);
    model->summary = build_summary(model->fit);
    return model.release();
}

}  // namespace weft_cabi

using namespace weft_cabi;

extern "C" {

int weft_model_new(weft_model** out, const weft_panel* panel, const weft_options* options) {
    return guarded(WEFT_EDATA, [&] {
        const char* fn = "weft_model_new";
        require(out, fn, "out");
        *out = nullptr;
        require(panel, fn, "panel");
        const weft::ModelSpec spec = read_options(options, fn);
        *out = new_model(panel, spec, fn, true);
        return WEFT_OK;
    });
}

int weft_model_new_text(weft_model** out, const weft_panel* panel, const char* model_text) {
    return guarded(WEFT_EMODEL, [&] {
        const char* fn = "weft_model_new_text";
        require(out, fn, "out");
        *out = nullptr;
        require(panel, fn, "panel");
        const weft::ModelSpec spec = weft::parse_model_text(model_text == nullptr ? "" : model_text);
        return guarded(WEFT_EDATA, [&] {
            *out = new_model(panel, spec, fn, true);
            return WEFT_OK;
        });
    });
}

void weft_model_free(weft_model* model) { delete model; }

int weft_model_options(const weft_model* model, weft_options* out) {
    return guarded(WEFT_EINVAL, [&] {
        const char* fn = "weft_model_options";
        require_model(model, fn);
        require(out, fn, "out");
        if (out->size < offsetof(weft_options, level) + sizeof(double))
            fail(WEFT_EINVAL, std::string(fn) + ": out->size is " + std::to_string(out->size) +
                                  "; set it first, e.g. weft_options o = WEFT_OPTIONS_INIT");
        std::memcpy(out, &model->options, std::min(out->size, sizeof(weft_options)));
        return WEFT_OK;
    });
}

int weft_model_term_count(const weft_model* model, size_t* n_terms) {
    return guarded(WEFT_EINVAL, [&] {
        require_model(model, "weft_model_term_count");
        require(n_terms, "weft_model_term_count", "n_terms");
        *n_terms = model->fit.equation.terms.size();
        return WEFT_OK;
    });
}

int weft_model_term_name(const weft_model* model, size_t index, const char** name) {
    return guarded(WEFT_EINVAL, [&] {
        const char* fn = "weft_model_term_name";
        require_model(model, fn);
        require(name, fn, "name");
        *name = nullptr;
        const auto& terms = model->fit.equation.terms;
        if (index >= terms.size())
            fail(WEFT_ERANGE, std::string(fn) + ": index " + std::to_string(index) + " is past the last term (the model has " +
                                  std::to_string(terms.size()) + " terms, indexes 0 to " +
                                  std::to_string(terms.size()) + " - 1)");
        *name = terms[index].c_str();
        return WEFT_OK;
    });
}

int weft_model_coefficients(const weft_model* model, double* buf, size_t capacity, size_t* needed) {
    return guarded(WEFT_EINVAL, [&] {
        const char* fn = "weft_model_coefficients";
        require_model(model, fn);
        if (!buffer_ready(fn, buf, capacity, needed, model->table.size())) return WEFT_OK;
        std::copy(model->table.begin(), model->table.end(), buf);
        return WEFT_OK;
    });
}

int weft_model_covariance(const weft_model* model, double* buf, size_t capacity, size_t* needed) {
    return guarded(WEFT_EINVAL, [&] {
        const char* fn = "weft_model_covariance";
        require_model(model, fn);
        const Eigen::MatrixXd& v = model->fit.covariance.matrix;
        const std::size_t k = static_cast<std::size_t>(v.rows());
        if (!buffer_ready(fn, buf, capacity, needed, k * k)) return WEFT_OK;
        for (std::size_t r = 0; r < k; ++r)
            for (std::size_t c = 0; c < k; ++c)
                buf[r * k + c] = v(static_cast<Eigen::Index>(r), static_cast<Eigen::Index>(c));
        return WEFT_OK;
    });
}

int weft_model_unit_effects(const weft_model* model, double* buf, unsigned char* unused, size_t capacity,
                            size_t* needed) {
    return guarded(WEFT_ECOMPUTE, [&] {
        const char* fn = "weft_model_unit_effects";
        require_model(model, fn);
        const weft::Fit& fit = model->fit;
        if (fit.spec.estimator != weft::Estimator::within || fit.unit_effects.empty())
            fail(WEFT_ECOMPUTE, std::string("unit effects are estimated by within only; this model is ") +
                                    weft::to_word(fit.spec.estimator) + " (use \"within\" in the model text)");
        const std::size_t n = fit.residuals.size();
        if (!buffer_ready(fn, buf, capacity, needed, n)) return WEFT_OK;
        for (std::size_t i = 0; i < n; ++i) {
            const std::int32_t unit = fit.index.unit_of_row[i];
            const bool defined = fit.residuals.is_defined(i) && unit >= 0;
            buf[i] = defined ? fit.unit_effects.at(static_cast<std::size_t>(unit)) : nan_value;
            if (unused != nullptr) unused[i] = defined ? 0 : 1;
        }
        return WEFT_OK;
    });
}

int weft_model_dropped_count(const weft_model* model, size_t* n_dropped) {
    return guarded(WEFT_EINVAL, [&] {
        require_model(model, "weft_model_dropped_count");
        require(n_dropped, "weft_model_dropped_count", "n_dropped");
        *n_dropped = model->fit.dropped.size();
        return WEFT_OK;
    });
}

int weft_model_dropped(const weft_model* model, size_t index, const char** term, const char** reason) {
    return guarded(WEFT_EINVAL, [&] {
        const char* fn = "weft_model_dropped";
        require_model(model, fn);
        if (term != nullptr) *term = nullptr;
        if (reason != nullptr) *reason = nullptr;
        const auto& dropped = model->fit.dropped;
        if (index >= dropped.size())
            fail(WEFT_ERANGE, std::string(fn) + ": index " + std::to_string(index) + " is past the last dropped term (" +
                                  std::to_string(dropped.size()) + " terms were dropped)");
        if (term != nullptr) *term = dropped[index].name.c_str();
        if (reason != nullptr) *reason = dropped[index].message.c_str();
        return WEFT_OK;
    });
}

int weft_model_warning_count(const weft_model* model, size_t* n_warnings) {
    return guarded(WEFT_EINVAL, [&] {
        require_model(model, "weft_model_warning_count");
        require(n_warnings, "weft_model_warning_count", "n_warnings");
        std::size_t n = 0;
        for (const SummaryEntry& e : model->summary) n += e.label == "warning" ? 1 : 0;
        *n_warnings = n;
        return WEFT_OK;
    });
}

int weft_model_warning(const weft_model* model, size_t index, const char** text) {
    return guarded(WEFT_EINVAL, [&]() -> int {
        const char* fn = "weft_model_warning";
        require_model(model, fn);
        require(text, fn, "text");
        *text = nullptr;
        std::size_t seen = 0;
        for (const SummaryEntry& e : model->summary) {
            if (e.label != "warning") continue;
            if (seen++ == index) {
                *text = e.text.c_str();
                return WEFT_OK;
            }
        }
        fail(WEFT_ERANGE, std::string(fn) + ": index " + std::to_string(index) + " is past the last warning (the model has " +
                              std::to_string(seen) + " warnings)");
    });
}

int weft_model_summary_count(const weft_model* model, size_t* n_items) {
    return guarded(WEFT_EINVAL, [&] {
        require_model(model, "weft_model_summary_count");
        require(n_items, "weft_model_summary_count", "n_items");
        *n_items = model->summary.size();
        return WEFT_OK;
    });
}

int weft_model_summary_item(const weft_model* model, size_t index, weft_summary_item* out) {
    return guarded(WEFT_EINVAL, [&] {
        const char* fn = "weft_model_summary_item";
        require_model(model, fn);
        require(out, fn, "out");
        if (index >= model->summary.size())
            fail(WEFT_ERANGE, std::string(fn) + ": index " + std::to_string(index) + " is past the last summary item (the model has " +
                                  std::to_string(model->summary.size()) + " items)");
        const SummaryEntry& e = model->summary[index];
        out->label = e.label.c_str();
        out->kind = e.kind;
        out->number = e.kind == WEFT_ITEM_NUMBER ? e.number : nan_value;
        out->text = e.text.c_str();
        return WEFT_OK;
    });
}

int weft_model_value(const weft_model* model, const char* what, const char* term, double* value) {
    return guarded(WEFT_EINVAL, [&] {
        const char* fn = "weft_model_value";
        if (value != nullptr) *value = nan_value;
        require_model(model, fn);
        require(what, fn, "what");
        require(value, fn, "value");
        // Words are case-insensitive, like the model text; term names are exact.
        std::string word = what;
        for (char& c : word) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
        if (word == "df" && term != nullptr && *term != '\0') {
            const std::optional<std::size_t> pos = model->fit.term_position(term);
            if (!pos) unknown_term(model, term);
            *value = term_df_of(model->fit, *pos);
            return WEFT_OK;
        }
        static const char* const term_words[] = {"estimate", "se", "t", "p", "ci-low", "ci-high"};
        for (int column = 0; column < WEFT_COEF_COLUMNS; ++column) {
            if (word != term_words[column]) continue;
            if (term == nullptr || *term == '\0')
                fail(WEFT_EINVAL, "\"" + word + "\" needs a term name, e.g. \"" +
                                      (model->fit.equation.terms.empty() ? "x1" : model->fit.equation.terms.back()) + "\"");
            const std::optional<std::size_t> pos = model->fit.term_position(term);
            if (!pos) unknown_term(model, term);
            *value = model->table[*pos * WEFT_COEF_COLUMNS + static_cast<std::size_t>(column)];
            return WEFT_OK;
        }
        try {
            const std::optional<double> v = value_of(model->fit, word);
            if (v) *value = *v;
        } catch (const std::out_of_range&) {
            fail(WEFT_EMODEL, "\"" + word + "\" is not a value weft knows; use one of: " + value_words);
        }
        return WEFT_OK;
    });
}

int weft_model_term_df(const weft_model* model, double* buf, size_t capacity, size_t* needed) {
    return guarded(WEFT_EINVAL, [&] {
        const char* fn = "weft_model_term_df";
        require_model(model, fn);
        const std::size_t k = model->fit.equation.n_terms();
        if (!buffer_ready(fn, buf, capacity, needed, k)) return WEFT_OK;
        for (std::size_t j = 0; j < k; ++j) buf[j] = term_df_of(model->fit, j);
        return WEFT_OK;
    });
}

int weft_model_residuals(const weft_model* model, double* buf, unsigned char* unused, size_t capacity,
                         size_t* needed) {
    return guarded(WEFT_EINVAL, [&] {
        require_model(model, "weft_model_residuals");
        return write_aligned(model->fit.residuals, buf, unused, capacity, needed, "weft_model_residuals");
    });
}

int weft_model_fitted(const weft_model* model, double* buf, unsigned char* unused, size_t capacity,
                      size_t* needed) {
    return guarded(WEFT_EINVAL, [&] {
        require_model(model, "weft_model_fitted");
        return write_aligned(model->fit.fitted, buf, unused, capacity, needed, "weft_model_fitted");
    });
}

}  // extern "C"
