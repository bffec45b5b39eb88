// event.cpp -- the event-study handle (weft_event_*): estimation through
// weft::estimate_event, the event-time table and the label/value items of WEFT.DID.
#include "boundary.hpp"
#include "handles.hpp"

#include <weft/event.hpp>

#include <cmath>
#include <memory>
#include <string>
#include <vector>

struct weft_event {
    weft::EventResult result;
    std::vector<double> table;           // rows x WEFT_EVENT_COLUMNS, row-major
    std::vector<SummaryEntry> summary;
    std::vector<std::string> warnings;
};

using namespace weft_cabi;

namespace {

const char* estimator_text(weft::EventEstimator e) {
    switch (e) {
        case weft::EventEstimator::imputation: return "imputation (Borusyak, Jaravel and Spiess 2024)";
        case weft::EventEstimator::twfe: return "two-way fixed-effects regression (conventional, for comparison)";
        default: return "group-time (Callaway and Sant'Anna 2021)";
    }
}

std::vector<double> build_table(const weft::EventResult& r) {
    std::vector<double> t;
    for (const weft::EventTimeEffect& row : r.event_times) {
        const weft::Effect& e = row.effect;
        const bool shown = e.estimated;
        t.push_back(row.event_time);
        t.push_back(row.reference ? 0.0 : shown ? e.estimate : nan_value);
        for (double v : {e.se, e.t, e.p, e.ci_low, e.ci_high}) t.push_back(shown && !row.reference ? v : nan_value);
        t.push_back(static_cast<double>(e.treated_units));
    }
    return t;
}

std::vector<SummaryEntry> build_summary(const weft::EventResult& r) {
    std::vector<SummaryEntry> items;
    auto number = [&](std::string label, double v) { items.push_back(SummaryEntry{std::move(label), WEFT_ITEM_NUMBER, v, ""}); };
    auto text = [&](std::string label, std::string v) {
        items.push_back(SummaryEntry{std::move(label), WEFT_ITEM_TEXT, nan_value, std::move(v)});
    };
    auto effect_number = [&](std::string label, bool estimated, double v) {
        if (estimated) number(std::move(label), v);
        else text(std::move(label), "not estimated");
    };
    text("estimator", estimator_text(r.design.estimator));
    text("comparison group", r.design.estimator == weft::EventEstimator::group_time
                                 ? (r.design.comparison == weft::Comparison::never ? "never-treated units"
                                                                                   : "not-yet-treated and never-treated units")
                                 : "untreated rows (never-treated units and units before adoption)");
    text("design", weft::describe(r.design));
    number("units", static_cast<double>(r.units));
    number("treated units", static_cast<double>(r.treated_units));
    number("comparison units", static_cast<double>(r.comparison_units));
    number("cohorts", static_cast<double>(r.cohorts.size()));
    number("rows used", static_cast<double>(r.rows_used));
    number("rows dropped", static_cast<double>(r.rows_dropped));
    const weft::Effect& o = r.overall;
    effect_number("average effect on the treated", o.estimated, o.estimate);
    effect_number("std error", o.estimated, o.se);
    effect_number("t", o.estimated, o.t);
    effect_number("p-value", o.estimated, o.p);
    effect_number("interval low", o.estimated, o.ci_low);
    effect_number("interval high", o.estimated, o.ci_high);
    text("inference", r.inference);
    for (const weft::CohortEffect& c : r.cohorts) {
        const std::string label = "cohort " + weft::format_number(c.cohort_period);
        effect_number(label, c.effect.estimated, c.effect.estimate);
        effect_number(label + " std error", c.effect.estimated, c.effect.se);
    }
    if (r.pre_test.available) {
        number("pre-treatment test chi-square", r.pre_test.statistic);
        number("pre-treatment test df", r.pre_test.df);
        number("pre-treatment test p-value", r.pre_test.p);
    } else {
        text("pre-treatment test", "not available: " + r.pre_test.reason);
    }
    for (const std::string& w : r.warnings) text("warning", w);
    return items;
}

void require_event(const weft_event* event, const char* function) { require(event, function, "event"); }

}  // namespace

extern "C" {

int weft_event_new(weft_event** out, const weft_panel* panel, const double* treatment,
                   const unsigned char* treatment_missing, const char* design_text) {
    return guarded(WEFT_EDATA, [&] {
        const char* fn = "weft_event_new";
        require(out, fn, "out");
        *out = nullptr;
        require_model_columns(panel, fn);
        require(treatment, fn, "treatment");
        weft::EventDesign design;
        try {
            design = weft::parse_design_text(design_text == nullptr ? "" : design_text);
        } catch (const weft::Error& e) {
            fail(WEFT_EMODEL, e.what());
        }
        const weft::PanelData& data = *panel->data;
        weft::EventData input;
        input.outcome = data.outcome;
        input.treatment.name = "treatment";
        input.treatment.values.assign(treatment, treatment + panel->n_rows);
        if (treatment_missing != nullptr) input.treatment.missing.assign(treatment_missing, treatment_missing + panel->n_rows);
        input.controls = data.regressors;
        input.units = data.units;
        input.periods = data.periods;
        input.first_row_number = data.first_row_number;
        auto event = std::make_unique<weft_event>();
        event->result = weft::estimate_event(input, design);
        event->table = build_table(event->result);
        event->summary = build_summary(event->result);
        event->warnings = event->result.warnings;
        *out = event.release();
        return WEFT_OK;
    });
}

void weft_event_free(weft_event* event) { delete event; }

int weft_event_table(const weft_event* event, double* buf, size_t capacity, size_t* needed) {
    return guarded(WEFT_EINVAL, [&] {
        require_event(event, "weft_event_table");
        if (buffer_ready("weft_event_table", buf, capacity, needed, event->table.size()))
            std::copy(event->table.begin(), event->table.end(), buf);
        return WEFT_OK;
    });
}

int weft_event_row_count(const weft_event* event, size_t* n_rows) {
    return guarded(WEFT_EINVAL, [&] {
        require_event(event, "weft_event_row_count");
        require(n_rows, "weft_event_row_count", "n_rows");
        *n_rows = event->result.event_times.size();
        return WEFT_OK;
    });
}

int weft_event_reference(const weft_event* event, size_t row, int* is_reference) {
    return guarded(WEFT_EINVAL, [&] {
        const char* fn = "weft_event_reference";
        require_event(event, fn);
        require(is_reference, fn, "is_reference");
        if (row >= event->result.event_times.size())
            fail(WEFT_ERANGE, std::string(fn) + ": row " + std::to_string(row) + " is past the last row (the table has " +
                                  std::to_string(event->result.event_times.size()) + " rows)");
        *is_reference = event->result.event_times[row].reference ? 1 : 0;
        return WEFT_OK;
    });
}

int weft_event_summary_count(const weft_event* event, size_t* n_items) {
    return guarded(WEFT_EINVAL, [&] {
        require_event(event, "weft_event_summary_count");
        require(n_items, "weft_event_summary_count", "n_items");
        *n_items = event->summary.size();
        return WEFT_OK;
    });
}

int weft_event_summary_item(const weft_event* event, size_t index, weft_summary_item* out) {
    return guarded(WEFT_EINVAL, [&] {
        const char* fn = "weft_event_summary_item";
        require_event(event, fn);
        require(out, fn, "out");
        if (index >= event->summary.size())
            fail(WEFT_ERANGE, std::string(fn) + ": index " + std::to_string(index) + " is past the last item (there are " +
                                  std::to_string(event->summary.size()) + ")");
        const SummaryEntry& e = event->summary[index];
        out->label = e.label.c_str();
        out->kind = e.kind;
        out->number = e.kind == WEFT_ITEM_NUMBER ? e.number : nan_value;
        out->text = e.text.c_str();
        return WEFT_OK;
    });
}

int weft_event_warning_count(const weft_event* event, size_t* n_warnings) {
    return guarded(WEFT_EINVAL, [&] {
        require_event(event, "weft_event_warning_count");
        require(n_warnings, "weft_event_warning_count", "n_warnings");
        *n_warnings = event->warnings.size();
        return WEFT_OK;
    });
}

int weft_event_warning(const weft_event* event, size_t index, const char** text) {
    return guarded(WEFT_EINVAL, [&] {
        const char* fn = "weft_event_warning";
        require_event(event, fn);
        require(text, fn, "text");
        if (index >= event->warnings.size())
            fail(WEFT_ERANGE, std::string(fn) + ": index " + std::to_string(index) + " is past the last warning (there are " +
                                  std::to_string(event->warnings.size()) + ")");
        *text = event->warnings[index].c_str();
        return WEFT_OK;
    });
}

}  // extern "C"
