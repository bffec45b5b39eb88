// Stage "weights" of a fit (fit_stages.hpp; CONVENTIONS.md "Observation weights"):
// where the weights come from, which rows they leave out, the weight of each equation
// row, and the scaling of the estimated equation by sqrt(w).
//
// Weighted least squares as ordinary least squares on the rows sqrt(w_i) [x_i, y_i]:
// the solver, every covariance (hc*, cluster*, dk, cr2: the scores become
// sqrt(w_i) x_i * sqrt(w_i) u_i = w_i x_i u_i; hc2/hc3: the leverage of the scaled row is
// w_i x_i'(X'WX)^-1 x_i; cr2: the cluster blocks of the scaled design, see
// covariance_cr2.cpp) and the Wald tests then need nothing of their own. This is the
// computation of R's lm(weights = ) (lm.wfit) that sandwich reads back through
// estfun.lm and hatvalues; tests/data/weights_reference.R checks it.
//
// Equation-row weights of each estimator:
//   pooled, within: the row's weight (within demeans with weighted unit means, the
//     weighted regression on unit indicators by Frisch-Waugh-Lovell);
//   fd: the weight of the later row of each difference (common practice, no source);
//   between: the unit's mean of its rows' weights, the unit means themselves weighted
//     within the unit (common practice, no source; the mean, not the sum, so that weights
//     all 1 give the unweighted between exactly).
// A row with weight 0 is left out like a missing row: it is in no equation row, no
// unit mean and not in N (fd: no difference is formed across it).
#include <cctype>
#include <cmath>
#include <string>

#include "weft/error.hpp"
#include "fit_stages.hpp"

namespace weft::detail {

namespace {

std::string regressor_label(const Column& c, std::size_t j) {
    return c.name.empty() ? "x" + std::to_string(j + 1) : c.name;
}

// Position of the regressor named `name`: its header exactly, else ignoring case, else
// x<k> (the default name of column k).
std::size_t find_weight_column(const PanelData& data, const std::string& name) {
    auto lower = [](std::string s) {
        for (char& ch : s) ch = static_cast<char>(std::tolower(static_cast<unsigned char>(ch)));
        return s;
    };
    const std::size_t K = data.regressors.size();
    for (std::size_t j = 0; j < K; ++j)
        if (data.regressors[j].name == name) return j;
    for (std::size_t j = 0; j < K; ++j)
        if (lower(data.regressors[j].name) == lower(name)) return j;
    for (std::size_t j = 0; j < K; ++j)
        if (lower(regressor_label(data.regressors[j], j)) == lower(name)) return j;
    std::string names;
    for (std::size_t j = 0; j < K; ++j) names += (j ? ", " : "") + regressor_label(data.regressors[j], j);
    throw Error("weights=" + name + ": no regressor column is named \"" + name +
                "\"; put the weights among the regressors and give their header (the columns are: " + names + ")");
}

// Estimators that have no weighted definition in weft, in words.
void refuse_unsupported(const ModelSpec& spec) {
    if (spec.estimator == Estimator::random)
        throw Error("random: observation weights are not supported with random effects (the variance "
                    "components have no agreed weighted definition); use within with weights, or pooled "
                    "with weights and cluster");
}

}  // namespace

WeightSource weight_source(const PanelData& data, const ModelSpec& spec) {
    WeightSource ws;
    std::size_t skip = data.regressors.size();
    if (!spec.weights.empty()) {
        if (data.weights.size() != 0)
            throw Error("weights=" + spec.weights +
                        ": the panel already has a weight column; give weights one way, not both");
        skip = find_weight_column(data, spec.weights);
        ws.column = &data.regressors[skip];
        ws.label = "weights \"" + regressor_label(*ws.column, skip) + "\"";
        if (data.regressors.size() == 1)
            throw Error("weights=" + spec.weights +
                        ": the weight column is the only regressor; give the regressors beside it");
    } else if (data.weights.size() != 0) {
        ws.column = &data.weights;
        ws.label = data.weights.name.empty() ? std::string("weights") : "weights \"" + data.weights.name + "\"";
    }
    if (ws.column != nullptr) refuse_unsupported(spec);
    for (std::size_t j = 0; j < data.regressors.size(); ++j) {
        if (j == skip) continue;
        ws.regressors.push_back(&data.regressors[j]);
        ws.names.push_back(regressor_label(data.regressors[j], j));
    }
    return ws;
}

std::size_t weigh_rows(const Column& weights, const std::string& label, std::size_t first_row_number,
                       std::vector<std::uint8_t>& used) {
    std::size_t zero = 0;
    for (std::size_t i = 0; i < used.size(); ++i) {
        if (weights.is_missing(i)) {
            used[i] = 0;  // a blank weight drops the row (counted with the missing rows)
            continue;
        }
        const double w = weights.value(i);
        if (!std::isfinite(w) || w < 0)
            throw Error(label + ", row " + std::to_string(first_row_number + i) + ": the weight " +
                        (std::isfinite(w) ? format_number(w) + " is negative" : std::string("is not a finite number")) +
                        "; a weight must be a number of 0 or more (0 leaves the row out, a blank cell drops it)");
        if (w == 0 && used[i]) {
            used[i] = 0;
            ++zero;
        }
    }
    return zero;
}

Eigen::VectorXd equation_weights(const Context& ctx, const std::vector<std::size_t>& rows, const UnitRuns& runs,
                                 const EquationInput& in) {
    const Column& w = *ctx.weights;
    if (ctx.spec.estimator == Estimator::between) {
        Eigen::VectorXd out(static_cast<Eigen::Index>(runs.begin.size()));
        for (std::size_t r = 0; r < runs.begin.size(); ++r) {
            long double sum = 0;
            for (std::size_t k = runs.begin[r]; k < runs.end[r]; ++k) sum += w.value(rows[k]);
            out[static_cast<Eigen::Index>(r)] =
                static_cast<double>(sum / static_cast<long double>(runs.end[r] - runs.begin[r]));
        }
        return out;
    }
    // pooled, within: the row itself; fd: input_row is the later row of the difference
    Eigen::VectorXd out(static_cast<Eigen::Index>(in.input_row.size()));
    for (std::size_t i = 0; i < in.input_row.size(); ++i) out[static_cast<Eigen::Index>(i)] = w.value(in.input_row[i]);
    return out;
}

void weigh_equation(const Context& ctx, const std::vector<std::size_t>& rows, const UnitRuns& runs,
                    Design& design) {
    if (ctx.weights == nullptr) return;
    EquationInput& in = design.input;
    design.weights = equation_weights(ctx, rows, runs, in);
    const Eigen::ArrayXd root = design.weights.array().sqrt();
    if (in.X.cols() > 0) in.X.array().colwise() *= root;  // no columns: Eigen would offset a null pointer
    in.y.array() *= root;
}

OutcomeSums weighted_outcome_sums(const Equation& eq) {
    // eq.y holds sqrt(w) y: sum w y = sum sqrt(w) (sqrt(w) y), sum w = sum sqrt(w)^2
    OutcomeSums s;
    long double sum_w = 0;
    for (Eigen::Index i = 0; i < eq.y.size(); ++i) {
        const long double root = std::sqrt(static_cast<long double>(eq.weights[i]));
        s.sum += root * eq.y[i];
        sum_w += static_cast<long double>(eq.weights[i]);
        s.raw += static_cast<long double>(eq.y[i]) * eq.y[i];
    }
    const long double mean = sum_w > 0 ? s.sum / sum_w : 0.0L;
    for (Eigen::Index i = 0; i < eq.y.size(); ++i) {
        const long double d = eq.y[i] - std::sqrt(static_cast<long double>(eq.weights[i])) * mean;
        s.centred += d * d;  // sum w (y - weighted mean)^2
    }
    return s;
}

void unweigh_series(const std::vector<std::size_t>& rows, const UnitRuns& runs, Fit& fit) {
    const Equation& eq = fit.equation;
    if (eq.weights.size() == 0) return;
    auto divide = [&](std::size_t row, double w) {
        const double root = std::sqrt(w);
        fit.residuals.value[row] /= root;
        fit.fitted.value[row] /= root;
    };
    if (fit.spec.estimator == Estimator::between) {
        for (std::size_t r = 0; r < runs.begin.size(); ++r)
            for (std::size_t k = runs.begin[r]; k < runs.end[r]; ++k)
                divide(rows[k], eq.weights[static_cast<Eigen::Index>(r)]);
        return;
    }
    for (std::size_t i = 0; i < eq.input_row.size(); ++i) divide(eq.input_row[i], eq.weights[static_cast<Eigen::Index>(i)]);
}

void refuse_weighted(const Equation& eq, const char* what, const char* instead) {
    if (eq.weights.size() != 0)
        throw Error(std::string(what) + ": not defined for a weighted fit in weft; " + instead);
}

}  // namespace weft::detail
