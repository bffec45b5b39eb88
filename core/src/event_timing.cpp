// Design text and treatment timing of the event-study functions (weft/event.hpp).
#include <algorithm>
#include <cctype>
#include <cstdio>
#include <cmath>
#include <cstdlib>
#include <map>
#include <string>
#include <utility>
#include <vector>

#include "weft/error.hpp"
#include "weft/event.hpp"

namespace weft {

namespace {

const char* const kDesignWords =
    "group-time, imputation, twfe; never, not-yet; anticipation=K; before=L; after=M; level=0.95";

std::string lower(std::string_view s) {
    std::string out(s);
    for (char& ch : out) ch = static_cast<char>(std::tolower(static_cast<unsigned char>(ch)));
    return out;
}

[[noreturn]] void bad_word(const std::string& word, const std::string& why) {
    throw Error("design: " + why + " \"" + word + "\"; accepted words are: " + kDesignWords);
}

int parse_count(const std::string& word, std::size_t at) {
    const std::string digits = word.substr(at);
    if (digits.empty() || digits.size() > 6) bad_word(word, "expected a whole number 0 or more in");
    for (char ch : digits)
        if (!std::isdigit(static_cast<unsigned char>(ch))) bad_word(word, "expected a whole number 0 or more in");
    return std::atoi(digits.c_str());
}

std::vector<std::string> split_words(std::string_view text) {
    std::vector<std::string> words;
    std::string current;
    for (char ch : text) {
        if (ch == ' ' || ch == ',' || ch == '\t' || ch == ';') {
            if (!current.empty()) words.push_back(lower(current));
            current.clear();
        } else {
            current += ch;
        }
    }
    if (!current.empty()) words.push_back(lower(current));
    return words;
}

}  // namespace

const char* to_word(EventEstimator estimator) {
    switch (estimator) {
        case EventEstimator::imputation: return "imputation";
        case EventEstimator::twfe: return "twfe";
        default: return "group-time";
    }
}

const char* to_word(Comparison comparison) {
    return comparison == Comparison::not_yet ? "not-yet" : "never";
}

EventDesign parse_design_text(std::string_view text) {
    EventDesign d;
    std::map<std::string, std::string> seen;  // group -> word that set it
    auto set_group = [&](const std::string& group, const std::string& word) {
        auto it = seen.find(group);
        if (it != seen.end() && it->second != word)
            throw Error("design: \"" + it->second + "\" and \"" + word +
                        "\" conflict (choose one of each group); accepted words are: " + kDesignWords);
        seen[group] = word;
    };
    for (const std::string& w : split_words(text)) {
        if (w == "group-time" || w == "imputation" || w == "twfe") {
            set_group("estimator", w);
            d.estimator = w == "twfe" ? EventEstimator::twfe
                          : w == "imputation" ? EventEstimator::imputation : EventEstimator::group_time;
        } else if (w == "never" || w == "not-yet") {
            set_group("comparison", w);
            d.comparison = w == "not-yet" ? Comparison::not_yet : Comparison::never;
        } else if (w.rfind("anticipation=", 0) == 0) {
            set_group("anticipation", w);
            d.anticipation = parse_count(w, 13);
        } else if (w.rfind("before=", 0) == 0) {
            set_group("before", w);
            d.before = parse_count(w, 7);
        } else if (w.rfind("after=", 0) == 0) {
            set_group("after", w);
            d.after = parse_count(w, 6);
        } else if (w.rfind("level=", 0) == 0) {
            set_group("level", w);
            char* end = nullptr;
            const std::string number = w.substr(6);
            const double level = std::strtod(number.c_str(), &end);
            if (number.empty() || *end != '\0' || !(level > 0 && level < 1))
                bad_word(w, "level must be a number between 0 and 1 in");
            d.level = level;
        } else {
            bad_word(w, "unknown word");
        }
    }
    if (d.estimator == EventEstimator::twfe && d.before >= 0 && d.before < d.anticipation + 1)
        throw Error("design: twfe needs before= at least anticipation + 1 = " +
                    std::to_string(d.anticipation + 1) +
                    ", so that its reference event time -1-anticipation lies in the window");
    return d;
}

std::string describe(const EventDesign& d) {
    const std::string level = format_number(d.level);
    return std::string(to_word(d.estimator)) + " " + to_word(d.comparison) +
           " anticipation=" + std::to_string(d.anticipation) +
           (d.before >= 0 ? " before=" + std::to_string(d.before) : std::string()) +
           (d.after >= 0 ? " after=" + std::to_string(d.after) : std::string()) + " level=" + level;
}

namespace {

// Which input rows have every input present.
std::vector<std::uint8_t> used_rows(const EventData& data) {
    const std::size_t n = data.outcome.size();
    auto check = [&](const Column& c, const char* what) {
        if (c.size() != n)
            throw Error(std::string(what) + " has " + std::to_string(c.size()) + " rows but outcome has " +
                        std::to_string(n));
    };
    check(data.treatment, "treatment");
    check(data.periods, "periods");
    for (const Column& c : data.controls) check(c, "controls");
    if (data.units.size() != n)
        throw Error("units has " + std::to_string(data.units.size()) + " rows but outcome has " + std::to_string(n));
    std::vector<std::uint8_t> used(n, 1);
    auto drop_missing = [&](const Column& c) {
        for (std::size_t r = 0; r < n; ++r) {
            if (c.is_missing(r)) { used[r] = 0; continue; }
            if (!std::isfinite(c.value(r)))
                throw Error(c.name + " in row " + std::to_string(data.first_row_number + r) +
                            " is not a finite number");
        }
    };
    drop_missing(data.outcome);
    drop_missing(data.treatment);
    for (const Column& c : data.controls) drop_missing(c);
    for (std::size_t r = 0; r < n; ++r)
        if (data.units.is_missing(r) || data.periods.is_missing(r)) used[r] = 0;
    for (std::size_t r = 0; r < n; ++r) {
        const double v = data.treatment.value(r);
        if (used[r] && v != 0.0 && v != 1.0)
            throw Error("treatment in row " + std::to_string(data.first_row_number + r) + " is " +
                        format_number(v) + ": it must be 0 (untreated) or 1 (treated, from the unit's first "
                        "treated period on)");
    }
    return used;
}

// Called when the index refuses a repeated unit-period: if the treatment differs between
// the two rows, say that (the more useful message); otherwise the index's message stands.
void check_treatment_within_pairs(const EventData& data, const std::vector<std::uint8_t>& used,
                                  const Column& periods) {
    std::map<std::pair<std::string, double>, std::size_t> first_row;
    for (std::size_t r = 0; r < used.size(); ++r) {
        if (!used[r]) continue;
        const std::string unit = data.units.is_text() ? std::string(data.units.id_text(r)) : format_number(data.units.number_data()[r]);
        auto [it, fresh] = first_row.emplace(std::make_pair(unit, periods.value(r)), r);
        if (!fresh && data.treatment.value(it->second) != data.treatment.value(r))
            throw Error("treatment varies inside unit \"" + unit + "\" in period " + format_number(periods.value(r)) +
                        " (rows " + std::to_string(data.first_row_number + it->second) + " and " +
                        std::to_string(data.first_row_number + r) +
                        "): give one row per unit and period, with one treatment value");
    }
}

}  // namespace

TreatmentTiming treatment_timing(const EventData& data) {
    TreatmentTiming out;
    out.used = used_rows(data);
    Column periods = data.periods;
    periods.missing.assign(out.used.size(), 0);
    for (std::size_t r = 0; r < out.used.size(); ++r) periods.missing[r] = out.used[r] ? 0 : 1;
    if (periods.borrowed()) {
        periods.values.assign(periods.data(), periods.data() + periods.size());
        periods.borrowed_values = nullptr;
        periods.borrowed_missing = nullptr;
    }
    try {
        out.index = build_index(data.units, periods, data.first_row_number);
    } catch (const Error&) {
        check_treatment_within_pairs(data, out.used, periods);
        throw;
    }
    for (std::uint8_t u : out.used) out.rows_used += u;
    out.rows_dropped = out.used.size() - out.rows_used;
    if (out.rows_used == 0)
        throw Error("no usable rows: every row misses the outcome, the treatment, a control, the unit or the period");

    const PanelIndex& ix = out.index;
    out.cohort_of_unit.assign(ix.n_units(), kNeverTreated);
    std::vector<std::string> from_start;
    for (std::size_t u = 0; u < ix.n_units(); ++u) {
        std::size_t first_treated_row = 0;
        bool treated = false;
        for (std::size_t k = ix.unit_start[u]; k < ix.unit_start[u + 1]; ++k) {
            const std::size_t r = ix.rows_by_unit[k];
            const bool one = data.treatment.value(r) == 1.0;
            if (one && !treated) {
                treated = true;
                first_treated_row = r;
                out.cohort_of_unit[u] = ix.period_of_row[r];
                if (k == ix.unit_start[u]) out.cohort_of_unit[u] = kTreatedFromStart;
            } else if (!one && treated) {
                throw Error("unit \"" + ix.unit_labels[u] + "\" is treated from period " +
                            format_number(ix.grid[static_cast<std::size_t>(ix.period_of_row[first_treated_row])]) +
                            " (row " + std::to_string(ix.row_number(first_treated_row)) + ") but untreated again in period " +
                            format_number(ix.grid[static_cast<std::size_t>(ix.period_of_row[r])]) + " (row " +
                            std::to_string(ix.row_number(r)) +
                            "): treatment must stay 1 once it starts (a unit that leaves treatment is not supported)");
            }
        }
        if (out.cohort_of_unit[u] == kTreatedFromStart) from_start.push_back(ix.unit_labels[u]);
    }
    std::vector<std::uint8_t> is_cohort(ix.n_periods(), 0);
    for (std::int32_t c : out.cohort_of_unit) {
        if (c == kNeverTreated) ++out.units_never;
        else if (c == kTreatedFromStart) ++out.units_from_start;
        else { ++out.units_treated; is_cohort[static_cast<std::size_t>(c)] = 1; }
    }
    for (std::size_t p = 0; p < is_cohort.size(); ++p)
        if (is_cohort[p]) out.cohorts.push_back(static_cast<std::int32_t>(p));
    if (!from_start.empty()) {
        std::string names;
        for (std::size_t k = 0; k < from_start.size() && k < 3; ++k) names += (k ? ", \"" : "\"") + from_start[k] + "\"";
        if (from_start.size() > 3) names += ", ...";
        out.warnings.push_back(std::to_string(from_start.size()) + " unit(s) treated from their first observed period (" +
                               names + ") have no untreated period to compare with: left out of every estimate");
    }
    bool first = true;
    for (std::size_t r = 0; r < out.used.size(); ++r) {
        if (!out.used[r]) continue;
        const auto u = static_cast<std::size_t>(ix.unit_of_row[r]);
        if (out.cohort_of_unit[u] < 0) continue;
        const int e = out.event_time(r);
        out.min_event = first ? e : std::min(out.min_event, e);
        out.max_event = first ? e : std::max(out.max_event, e);
        first = false;
    }
    if (out.units_treated == 0)
        throw Error("treatment: no unit switches from 0 to 1 inside the panel, so there is no effect to estimate "
                    "(a unit treated in its first observed period has no untreated period to compare with)");
    return out;
}

}  // namespace weft
