#include "texts.hpp"

#include <algorithm>
#include <cctype>

namespace weft_addin {

const char* const programmatic_category = "Add-In";
const char* const display_category = "weft panel data";

namespace {

const ArgumentText outcome_arg{
    "outcome",
    "One column: the dependent variable. If its first cell is text, row 1 of all four ranges "
    "is a header row that names the variables."};
const ArgumentText regressors_arg{
    "regressors",
    "One or more adjacent columns, one explanatory variable each; header cells give the term "
    "names (else x1, x2, ...)."};
const ArgumentText units_arg{
    "units", "One column: the unit (entity) id of each row, text or number."};
const ArgumentText periods_arg{
    "periods", "One column: the period of each row, a number (year, quarter index) or a date."};
const ArgumentText model_arg{
    "model",
    "Optional model words, e.g. \"within cluster\": pooled, fd, within, random, between; "
    "classical, hc0-hc3, cluster, cluster0, cluster-period, cluster-both, dk or dk=L, cr2 "
    "(few clusters: bias-reduced, each term on its own df); periods; level=0.90; no-intercept; "
    "weights=NAME (the regressor column headed NAME holds observation weights)."};

const ArgumentText what_arg{
    "what",
    "Which number: estimate, se, t, p, ci-low, ci-high (these need term), n, units, r2, "
    "corr2-rows, corr2-means, corr2-deviations (within, random), sigma, df (with term: that "
    "term's df, its own under cr2), f, f-df1, f-df2, f-p (the joint test of all regressors "
    "under the model's standard errors), classical-f, classical-f-p (classical F of all terms)."};
const ArgumentText term_arg{
    "term",
    "The term's name (a regressor header, x1, intercept, period 1990) for estimate, se, t, p, "
    "ci-low, ci-high, and optionally df."};
const ArgumentText terms_arg{
    "terms", "The terms to test: a text list such as \"value, capital\" or a range of term names."};
const ArgumentText form_arg{
    "form", "Optional: koenker (studentized Breusch-Pagan, default), bp, white-special or "
            "white-full."};
const ArgumentText fit_arg{
    "fit", "The cell that holds =WEFT.FIT(...): the fitted model, so the ranges are not read or "
           "fitted again."};

const ArgumentText tested_term_arg{
    "term", "Name of the one term to test, as in WEFT.ESTIMATES, e.g. \"x1\"."};
const ArgumentText boot_settings_arg{
    "settings",
    "Optional words: draws=N (99 to 1000000, default 9999), seed=S (default 1), rademacher or "
    "webb (weights), null=V (tested value, default 0). Same words, same numbers."};

std::vector<ArgumentText> event_args() {
    return {{"outcome", "One column: the outcome of each row. If its first cell is text, row 1 of the ranges is a "
                        "header row."},
            {"treatment", "One column of 0 and 1: 1 from a unit's first treated period on, 0 before; never-treated "
                          "units are 0 throughout."},
            units_arg,
            periods_arg,
            {"controls", "Optional: one or more adjacent columns of covariates (group-time reads them at the base "
                         "period)."},
            {"design", "Optional words, e.g. \"not-yet after=4\": group-time (default), imputation or twfe; never "
                       "(default) or not-yet; anticipation=K; before=L; after=M; level=0.90."}};
}

std::vector<ArgumentText> panel_args() {
    return {outcome_arg, regressors_arg, units_arg, periods_arg, model_arg};
}

std::vector<ArgumentText> panel_args_plus(std::vector<ArgumentText> extra) {
    std::vector<ArgumentText> all = panel_args();
    all.insert(all.end(), extra.begin(), extra.end());
    return all;
}

// The wizard texts, in the order the wizard lists them: the functions that take ranges,
// then those that read a fit cell (data, not logic).
std::vector<FunctionText> range_texts() {
    std::vector<FunctionText> t;
    t.push_back({"estimates", "WEFT.ESTIMATES",
                 "Estimates a panel regression. Returns a table: header row, then one row per term "
                 "with its coefficient, standard error, t ratio, two-sided p and the interval at "
                 "the model's level.",
                 panel_args()});
    t.push_back({"summary", "WEFT.SUMMARY",
                 "Summary of a panel regression in two columns, label and value: estimator, standard "
                 "errors, observations, rows dropped, units, periods, R-squared (within, random: how "
                 "closely the slope prediction follows the outcome), the joint test of all regressors "
                 "under the model's standard errors, the classical F of all terms, warnings.",
                 panel_args()});
    t.push_back({"value", "WEFT.VALUE",
                 "One number from a panel regression, e.g. the estimate or p-value of one term, "
                 "or n, r2, sigma.",
                 panel_args_plus({what_arg, term_arg})});
    t.push_back({"residuals", "WEFT.RESIDUALS",
                 "Residuals of a panel regression, one per input row in input order; blank where "
                 "the row was not used.",
                 panel_args()});
    t.push_back({"fitted", "WEFT.FITTED",
                 "Fitted values of the estimated equation, one per input row in input order; blank "
                 "where the row was not used.",
                 panel_args()});
    t.push_back({"joint", "WEFT.JOINT",
                 "Wald test that the named terms are all zero, with the model's standard errors: "
                 "F, df1, df2, p-value, then chi-square, df, p-value.",
                 panel_args_plus({terms_arg})});
    t.push_back({"hetero", "WEFT.HETERO",
                 "Heteroskedasticity test on the model's residuals: LM, df, p-value, then the F "
                 "form with its df and p-value.",
                 panel_args_plus({form_arg})});
    t.push_back({"serial", "WEFT.SERIAL",
                 "AR(1) check of the residuals within units: slope, std error, t, p-value, then the "
                 "test of serially uncorrelated level errors (fd, within).",
                 panel_args()});
    t.push_back({"hausman", "WEFT.HAUSMAN",
                 "Fixed versus random effects: statistic, df (the rank of the covariance "
                 "difference, judged in units-free form), p-value, that rank, then the cluster-robust auxiliary-regression version (read it when "
                 "a warning says the classical one is unreliable).",
                 panel_args()});
    t.push_back({"effects", "WEFT.EFFECTS",
                 "Do the units differ in level? F test of within against pooled OLS: F, df1, df2, "
                 "p-value; a small p-value says keep unit effects (within, fd or random).",
                 panel_args()});
    t.push_back({"diff", "WEFT.DIFF",
                 "Change within each unit over k periods: the value minus the unit's value k "
                 "periods earlier (k = 1: adjacent periods; not a second difference), aligned to "
                 "the input rows; blank where that earlier period is absent.",
                 {{"values", "One column of numbers to difference."},
                  units_arg,
                  periods_arg,
                  {"k", "Optional: the two values compared are k periods apart, x(t) - x(t-k) "
                        "(default 1); the header shows k."}}});
    t.push_back({"lag", "WEFT.LAG",
                 "The value k periods earlier within the unit (negative k: later), aligned to the "
                 "input rows; blank where that period is absent.",
                 {{"values", "One column of numbers."},
                  units_arg,
                  periods_arg,
                  {"k", "Optional: how many periods back (default 1; negative looks ahead)."}}});
    t.push_back({"demean", "WEFT.DEMEAN",
                 "Deviation of each value from its unit's mean, aligned to the input rows.",
                 {{"values", "One column of numbers."}, units_arg}});
    t.push_back({"dummies", "WEFT.DUMMIES",
                 "Period indicator block: a header row of period labels, then one 0/1 row per input "
                 "row.",
                 {periods_arg,
                  {"omit_first", "Optional: TRUE (or 1) leaves out the first period's column."}}});
    t.push_back({"panel", "WEFT.PANEL",
                 "Structure of the panel in two columns, label and value: units, periods, rows, "
                 "balanced, periods per unit, gaps, duplicates, single-row units.",
                 {units_arg, periods_arg}});
    t.push_back({"version", "WEFT.VERSION", "The versions of the weft library and of this add-in.",
                 {}});
    // The fit cell, and the model functions that take it instead of the ranges.
    return t;
}

std::vector<FunctionText> fit_cell_texts() {
    std::vector<FunctionText> t;
    t.push_back({"fit", "WEFT.FIT",
                 "Fits a panel regression once and names the fit in one cell; give that cell to "
                 "WEFT.FIT.ESTIMATES, WEFT.FIT.VALUE and the other WEFT.FIT functions.",
                 panel_args()});
    t.push_back({"fitEstimates", "WEFT.FIT.ESTIMATES",
                 "WEFT.ESTIMATES of a fit cell: header row, then one row per term with its "
                 "coefficient, standard error, t ratio, two-sided p and the interval at the "
                 "model's level.",
                 {fit_arg}});
    t.push_back({"fitSummary", "WEFT.FIT.SUMMARY",
                 "WEFT.SUMMARY of a fit cell: label and value of estimator, standard errors, "
                 "observations, R-squared and related fit measures, the joint test of all regressors, "
                 "the classical F of all terms, warnings.",
                 {fit_arg}});
    t.push_back({"fitValue", "WEFT.FIT.VALUE",
                 "One number of a fit cell, e.g. the estimate or p-value of one term, or n, r2, "
                 "sigma.",
                 {fit_arg, what_arg, term_arg}});
    t.push_back({"fitResiduals", "WEFT.FIT.RESIDUALS",
                 "Residuals of a fit cell's model, one per input row in input order; blank where "
                 "the row was not used.",
                 {fit_arg}});
    t.push_back({"fitFitted", "WEFT.FIT.FITTED",
                 "Fitted values of a fit cell's model, one per input row in input order; blank "
                 "where the row was not used.",
                 {fit_arg}});
    t.push_back({"fitJoint", "WEFT.FIT.JOINT",
                 "Wald test that the named terms of a fit cell's model are all zero: F, df1, df2, "
                 "p-value, then chi-square, df, p-value.",
                 {fit_arg, terms_arg}});
    t.push_back({"fitHetero", "WEFT.FIT.HETERO",
                 "Heteroskedasticity test on a fit cell's residuals: LM, df, p-value, then the F "
                 "form with its df and p-value.",
                 {fit_arg, form_arg}});
    t.push_back({"fitSerial", "WEFT.FIT.SERIAL",
                 "AR(1) check of a fit cell's residuals within units, then the test of serially "
                 "uncorrelated level errors (fd, within).",
                 {fit_arg}});
    t.push_back({"fitHausman", "WEFT.FIT.HAUSMAN",
                 "WEFT.HAUSMAN on a fit cell's data: within versus random effects with the fit's "
                 "periods and no-intercept words; statistic, df, p-value, then the robust form.",
                 {fit_arg}});
    t.push_back({"fitEffects", "WEFT.FIT.EFFECTS",
                 "WEFT.EFFECTS on a fit cell's data: do the units differ in level? F test of within "
                 "against pooled OLS: F, df1, df2, p-value.",
                 {fit_arg}});
    t.push_back({"bootstrap", "WEFT.BOOTSTRAP",
                 "Wild cluster bootstrap test of one term (restricted, CR1 t in every draw; clusters "
                 "as in the model's standard errors, units if not clustered): term, estimate, value "
                 "tested, p-value, interval, draws, weights, every sign pattern used, clusters.",
                 panel_args_plus({tested_term_arg, boot_settings_arg})});
    t.push_back({"fitBootstrap", "WEFT.FIT.BOOTSTRAP",
                 "WEFT.BOOTSTRAP on a fit cell's model: wild cluster bootstrap p-value and interval "
                 "of one term.",
                 {fit_arg, tested_term_arg, boot_settings_arg}});
    t.push_back({"event", "WEFT.EVENT",
                 "Event study under staggered adoption: a header row, then one row per event time from "
                 "-before to after: event time, estimate, std error, t, p-value, interval low and high, "
                 "treated units.",
                 event_args()});
    t.push_back({"did", "WEFT.DID",
                 "Difference in differences under staggered adoption: label and value rows with the "
                 "average effect on the treated, each cohort's average and the pre-treatment test.",
                 event_args()});
    return t;
}

std::vector<FunctionText> make_texts() {
    std::vector<FunctionText> t = range_texts();
    std::vector<FunctionText> fits = fit_cell_texts();
    t.insert(t.end(), fits.begin(), fits.end());
    return t;
}

bool equal_ignoring_case(const std::string& a, const char* b) {
    std::size_t i = 0;
    for (; i < a.size() && b[i] != '\0'; ++i) {
        if (std::tolower(static_cast<unsigned char>(a[i])) !=
            std::tolower(static_cast<unsigned char>(b[i])))
            return false;
    }
    return i == a.size() && b[i] == '\0';
}

}  // namespace

const std::vector<FunctionText>& function_texts() {
    static const std::vector<FunctionText> texts = make_texts();
    return texts;
}

const FunctionText* find_by_method(const std::string& method) {
    for (const FunctionText& f : function_texts())
        if (method == f.method) return &f;
    // A cell-range twin (sheetEstimates) shows the texts of its value-array method.
    const std::string twin = "sheet";
    if (method.size() > twin.size() && method.compare(0, twin.size(), twin) == 0) {
        std::string base = method.substr(twin.size());
        base[0] = static_cast<char>(std::tolower(static_cast<unsigned char>(base[0])));
        for (const FunctionText& f : function_texts())
            if (base == f.method) return &f;
    }
    return nullptr;
}

const FunctionText* find_by_display(const std::string& display) {
    for (const FunctionText& f : function_texts())
        if (equal_ignoring_case(display, f.display)) return &f;
    return nullptr;
}

}  // namespace weft_addin
