// weft/options.hpp -- the model specification and the model text of FUNCTIONS.md.
//
// Contract:
// - ModelSpec is a plain value; its defaults are the defaults of the model text
//   (pooled, classical, no period effects, intercept on, level 0.95, dk lag default).
// - parse_model_text() accepts the words of FUNCTIONS.md, separated by spaces and/or
//   commas, in any order, case-insensitive:
//     estimator: pooled fd within random between
//     standard errors: classical hc0 hc1 hc2 hc3 cluster cluster0 cluster-period
//                      cluster-both dk dk=L (L >= 0 integer) cr2
//     periods        (add period indicators)
//     level=0.90     (0 < level < 1)
//     no-intercept
//     weights=NAME   (observation weights: the regressor column named NAME, matched to
//                     its header exactly, else ignoring case, else x<k>; NAME keeps its
//                     case and holds no spaces, commas or semicolons)
//   Repeating the same word is harmless; two different words of one group (e.g.
//   "fd within", "hc1 cluster") are a conflict. Unknown or conflicting words raise
//   weft::Error naming the word and listing the accepted words.
// - describe() returns the canonical text (fixed order, every group spelled out), so
//   that two texts meaning the same model give the same string: use it in cache keys.
//   parse_model_text(describe(s)) == s.
#pragma once

#include <string>
#include <string_view>

namespace weft {

enum class Estimator { pooled, fd, within, between, random };

enum class Covariance {
    classical,       // s^2 (X'X)^-1
    hc0, hc1, hc2, hc3,  // MacKinnon & White (1985); within: hc1 counts the unit effects
    cluster,         // by unit, CR1
    cluster0,        // by unit, CR0 (no finite-sample factor)
    cluster_period,  // by period, CR1
    cluster_both,    // unit and period (Cameron, Gelbach & Miller 2011), clipped to PSD
    dk,              // Driscoll & Kraay (1998), Bartlett lag dk_lag
    cr2              // by unit, Bell & McCaffrey (2002) CR2, Satterthwaite df per term
};

struct ModelSpec {
    Estimator estimator = Estimator::pooled;
    Covariance covariance = Covariance::classical;
    int dk_lag = -1;            // -1: default floor(T^(1/4)), T = periods in the equation
    bool period_effects = false;
    bool intercept = true;      // ignored by within (unit effects absorb it)
    double level = 0.95;        // confidence level of the intervals
    std::string weights;        // weights=NAME: the regressor column used as observation
                                // weights (empty: unweighted; CONVENTIONS.md "Observation weights")

    bool operator==(const ModelSpec& o) const {
        return estimator == o.estimator && covariance == o.covariance &&
               dk_lag == o.dk_lag && period_effects == o.period_effects &&
               intercept == o.intercept && level == o.level && weights == o.weights;
    }
    bool operator!=(const ModelSpec& o) const { return !(*this == o); }
};

// Parse the model text; the empty text gives the defaults.
ModelSpec parse_model_text(std::string_view text);

// Canonical text: "<estimator> <covariance>[=L] [periods] [no-intercept] level=<g>
// [weights=NAME]",
// e.g. "fd cluster periods level=0.95", "within dk=2 level=0.9". Only accepted words
// are used, so parse_model_text(describe(s)) == s.
std::string describe(const ModelSpec& spec);

// The model-text word of each enum value ("fd", "cluster-period", ...).
const char* to_word(Estimator e);
const char* to_word(Covariance c);

}  // namespace weft
