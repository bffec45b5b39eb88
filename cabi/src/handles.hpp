// handles.hpp -- what the opaque C handles hold.
#pragma once

#include "weft.h"

#include <weft/model.hpp>
#include <weft/panel.hpp>

#include <memory>
#include <mutex>
#include <string>
#include <vector>

// The caller's columns. Held through a shared pointer so that a later holder (a cache,
// a model that keeps its data) never sees them change: writable() copies first.
struct weft_panel {
    std::size_t n_rows = 0;
    std::shared_ptr<weft::PanelData> data;
    bool has_units = false;
    bool has_periods = false;
    bool has_outcome = false;
    bool has_weights = false;

    weft::PanelData& writable() {
        if (data.use_count() > 1) data = std::make_shared<weft::PanelData>(*data);
        return *data;
    }
};

struct SummaryEntry {
    std::string label;
    int kind = WEFT_ITEM_NUMBER;
    double number = 0;
    std::string text;
};

struct weft_model {
    weft::Fit fit;                                 // may be lean (Equation::rows_held() false)
    std::shared_ptr<const weft::PanelData> data;   // kept only for a lean fit
    mutable std::mutex full_mutex;                 // guards `full`
    mutable std::shared_ptr<const weft::Fit> full; // the full refit, made on first need
    weft_options options{};
    std::vector<double> table;                     // K x WEFT_COEF_COLUMNS, row-major
    std::vector<SummaryEntry> summary;
    bool partitioned = false;                      // made over partitions (weft_partial_finish): no rows
};

namespace weft_cabi {
// The panel's data after checking that the columns a use needs are set.
void require_units(const weft_panel* panel, const char* function);
void require_periods(const weft_panel* panel, const char* function);
void require_model_columns(const weft_panel* panel, const char* function);
void require_model(const weft_model* model, const char* function);
// The model's fit with the estimated equation's rows: the fit itself, or (for a lean
// fit) a full refit of the same data and options, made once and kept.
const weft::Fit& full_fit(const weft_model* model);
// A model of a fit made elsewhere (weft_partial_finish): table and summary built.
weft_model* package_fit(weft::Fit fit);
// Refuses (WEFT_ECOMPUTE) what a model fitted over partitions cannot give.
void require_rows_here(const weft_model* model, const char* what);
}  // namespace weft_cabi
