// weft/event.hpp -- difference in differences and event studies under staggered adoption.
//
// Contract (CONVENTIONS.md "Difference in differences and event studies" is the
// statistical specification; FUNCTIONS.md WEFT.EVENT and WEFT.DID the cells):
// - Inputs: an outcome, a 0/1 treatment column, optional control columns, units and
//   periods (EventData). A row is used when all of them are present; other rows are
//   dropped and counted. The panel index (build_index) is built over the used rows.
// - Timing (treatment_timing): a unit's cohort is its first period with treatment 1 on
//   the panel's grid; never-treated units have none; event time e = grid steps from the
//   cohort. Errors (weft::Error, messages name the row or unit): a treatment value other
//   than 0 or 1, a unit that goes back to 0 after its first treated period, a treatment
//   that differs between two rows of one unit-period (any repeated unit-period is an
//   error of the panel index). A unit treated in its own first observed period (for
//   example a cohort treated in the first period of the panel) has no untreated period
//   to compare with: it is left out of every estimate, counted, and named in a warning.
// - Estimators (estimate_event): group-time (Callaway and Sant'Anna 2021, outcome
//   regression of Sant'Anna and Zhao 2020 with controls, influence-function standard
//   errors clustered by unit, normal inference), imputation (Borusyak, Jaravel and
//   Spiess 2024, conservative clustered variance, normal inference) and twfe (the
//   conventional two-way fixed-effects event-study regression, CR1 by unit with the
//   absorbed unit effects not counted, t with G-1 df; it warns under staggered adoption).
// - Outputs are plain numbers; an effect that cannot be estimated has estimated = false
//   and its numbers must not be shown. The pre-treatment test is a Wald chi-square on
//   the estimated effects with e < -anticipation inside the window; when there are none
//   it is not available (available = false, with the reason) and the rest stands.
//
// Stability: fields may be added at the end of structs; names and meanings stay.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "weft/panel.hpp"

namespace weft {

enum class EventEstimator { group_time, imputation, twfe };
enum class Comparison { never, not_yet };

// The design text of WEFT.EVENT / WEFT.DID. before/after -1: every event time found in
// the data (no binning).
struct EventDesign {
    EventEstimator estimator = EventEstimator::group_time;
    Comparison comparison = Comparison::never;
    int anticipation = 0;
    int before = -1;
    int after = -1;
    double level = 0.95;
};

// Words: group-time imputation twfe, never not-yet, anticipation=K before=L after=M
// (K, L, M integers >= 0), level=0.90; spaces or commas, any order, case-insensitive.
// Unknown or conflicting words raise weft::Error naming the word and listing the words.
EventDesign parse_design_text(std::string_view text);
// Canonical text (fixed order, every group spelled out) for cache keys.
std::string describe(const EventDesign& design);
const char* to_word(EventEstimator estimator);
const char* to_word(Comparison comparison);

struct EventData {
    Column outcome;
    Column treatment;
    std::vector<Column> controls;
    UnitColumn units;
    Column periods;
    std::size_t first_row_number = 1;
};

inline constexpr std::int32_t kNeverTreated = -1;
inline constexpr std::int32_t kTreatedFromStart = -2;  // no untreated period: left out

struct TreatmentTiming {
    PanelIndex index;                        // over the used rows only
    std::vector<std::uint8_t> used;          // per input row
    std::vector<std::int32_t> cohort_of_unit;  // grid position, kNeverTreated or kTreatedFromStart
    std::vector<std::int32_t> cohorts;       // distinct cohort grid positions, ascending
    std::size_t rows_used = 0;
    std::size_t rows_dropped = 0;
    std::size_t units_never = 0;
    std::size_t units_treated = 0;           // with a cohort (not kTreatedFromStart)
    std::size_t units_from_start = 0;
    int min_event = 0;                       // smallest and largest event time of a used
    int max_event = 0;                       // row of a treated unit
    std::vector<std::string> warnings;

    // Event time of an input row (only for rows of units with a cohort).
    int event_time(std::size_t row) const {
        const auto u = static_cast<std::size_t>(index.unit_of_row[row]);
        return index.period_of_row[row] - cohort_of_unit[u];
    }
};

TreatmentTiming treatment_timing(const EventData& data);

// One estimated effect with its inference (df infinite = normal).
struct Effect {
    bool estimated = false;
    double estimate = 0, se = 0, t = 0, p = 1, ci_low = 0, ci_high = 0;
    std::size_t treated_units = 0;
};

struct EventTimeEffect {
    int event_time = 0;
    bool reference = false;      // twfe: the omitted event time (estimate 0, no se)
    Effect effect;
};

struct CohortEffect {
    double cohort_period = 0;    // the grid value of the cohort's first treated period
    Effect effect;
};

struct PreTest {
    bool available = false;
    double statistic = 0;        // Wald chi-square
    double df = 0;               // number of pre-treatment effects tested
    double p = 1;
    std::string reason;          // why not available
};

struct EventResult {
    EventDesign design;
    std::vector<EventTimeEffect> event_times;  // -before .. after, one per event time
    Effect overall;                            // average effect on the treated, e >= 0
    std::vector<CohortEffect> cohorts;         // ascending cohort period
    PreTest pre_test;
    std::size_t units = 0;                     // units in the analysis
    std::size_t treated_units = 0;
    std::size_t comparison_units = 0;
    std::size_t rows_used = 0, rows_dropped = 0;
    double df = 0;                             // inference df (0: normal)
    std::string inference;                     // e.g. "normal", "t with G-1 = 39 df"
    std::vector<std::string> warnings;
};

EventResult estimate_event(const EventData& data, const EventDesign& design);

}  // namespace weft
