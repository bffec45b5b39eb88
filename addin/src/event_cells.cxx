#include "event_cells.hpp"

#include "sheet_checks.hpp"

#include "functions.hpp"

#include <weft.h>

#include <cmath>
#include <memory>
#include <string>
#include <vector>

namespace weft_addin {

namespace {

void check(int status) {
    if (status != WEFT_OK) throw UserError(UserError::FullText{}, weft_last_error());
}

struct EventDeleter {
    void operator()(weft_event* e) const { weft_event_free(e); }
};
using EventPtr = std::unique_ptr<weft_event, EventDeleter>;

// The controls argument: omitted, a blank cell (Calc passes a reference to a blank cell
// as 0) or a blank range mean no controls.
bool controls_given(const Arg& controls) {
    if (!controls.given) return false;
    if (!controls.is_scalar()) return true;
    const Cell& c = controls.scalar();
    return !(c.is_blank() || (c.is_number() && c.number == 0.0));
}

// The treatment column below the header: numbers as given, blanks missing, text refused.
void read_treatment(const CellGrid& t, const PanelRead& p, std::vector<double>& values,
                    std::vector<unsigned char>& missing) {
    if (t.col_count() != 1)
        throw UserError("treatment has " + std::to_string(t.col_count()) +
                        " columns; give one column of 0 and 1 (1 from a unit's first treated period on)");
    const std::size_t start = p.header ? 1 : 0;
    values.assign(p.n, 0.0);
    missing.assign(p.n, 1);
    for (std::size_t i = 0; i < p.n && start + i < t.row_count(); ++i) {
        const Cell c = t.cell(start + i, 0);
        TextCells::note_error({"treatment", &t}, start + i, 0, c);
        if (c.is_number()) {
            values[i] = c.number;
            missing[i] = 0;
        } else if (c.is_text()) {
            throw UserError(located({"treatment", &t}, start + i, 0) + " holds the text \"" +
                            c.text + "\"; give 0 (untreated) or 1 (treated)");
        }
    }
}

EventPtr estimate(const EventRanges& in, const Arg& controls, const Arg& design) {
    Table none;  // no control columns
    const bool with_controls = controls_given(controls);
    const CellGrid& control_grid = with_controls ? static_cast<const CellGrid&>(controls.table) : none;
    require_same_start({{"outcome", &in.outcome}, {"treatment", &in.treatment}, {"units", &in.units},
                        {"periods", &in.periods}});
    if (in.treatment.given_row_count() != in.outcome.given_row_count())
        throw UserError("treatment has " + std::to_string(in.treatment.given_row_count()) + " rows but outcome has " +
                        std::to_string(in.outcome.given_row_count()) +
                        "; give all ranges the same rows (the same first and last row)");
    const PanelRead panel = read_panel_ranges({in.outcome, control_grid, in.units, in.periods}, true);
    std::vector<double> treatment;
    std::vector<unsigned char> missing;
    read_treatment(in.treatment, panel, treatment, missing);
    weft_event* raw = nullptr;
    const std::string text = words_text(design, "design", "\"group-time not-yet after=4\"");
    check(weft_event_new(&raw, panel.panel.get(), treatment.data(), missing.data(), text.c_str()));
    return EventPtr(raw);
}

}  // namespace

OutTable fn_event(const EventRanges& in, const Arg& controls, const Arg& design) {
    const EventPtr e = estimate(in, controls, design);
    size_t rows = 0, needed = 0;
    check(weft_event_row_count(e.get(), &rows));
    std::vector<double> table(rows * WEFT_EVENT_COLUMNS);
    check(weft_event_table(e.get(), table.data(), table.size(), &needed));
    static const char* const header[WEFT_EVENT_COLUMNS] = {"event time",    "estimate",      "std error",
                                                           "t",             "p-value",       "interval low",
                                                           "interval high", "treated units"};
    OutTable out(rows + 1, WEFT_EVENT_COLUMNS);
    for (std::size_t c = 0; c < WEFT_EVENT_COLUMNS; ++c) out.set(0, c, std::string(header[c]));
    for (std::size_t r = 0; r < rows; ++r) {
        const double* row = &table[r * WEFT_EVENT_COLUMNS];
        int reference = 0;
        check(weft_event_reference(e.get(), r, &reference));
        for (std::size_t c = 0; c < WEFT_EVENT_COLUMNS; ++c) out.set_number_or_blank(r + 1, c, row[c]);
        if (reference) out.set(r + 1, 2, std::string("reference"));
        else if (!std::isfinite(row[1])) out.set(r + 1, 1, std::string("not estimated"));
    }
    return out;
}

OutTable fn_did(const EventRanges& in, const Arg& controls, const Arg& design) {
    const EventPtr e = estimate(in, controls, design);
    size_t n = 0;
    check(weft_event_summary_count(e.get(), &n));
    OutTable out(n, 2);
    for (std::size_t k = 0; k < n; ++k) {
        weft_summary_item item;
        check(weft_event_summary_item(e.get(), k, &item));
        out.set(k, 0, std::string(item.label));
        if (item.kind == WEFT_ITEM_NUMBER) out.set_number_or_blank(k, 1, item.number);
        else out.set(k, 1, std::string(item.text));
    }
    return out;
}

}  // namespace weft_addin
