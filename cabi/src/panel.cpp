// panel.cpp -- the panel handle: copying the caller's columns, the structure report
// and the transforms.
#include "boundary.hpp"
#include "convert.hpp"
#include <weft/buffer.hpp>
#include "handles.hpp"

#include <weft/transforms.hpp>

#include <algorithm>
#include <cmath>
#include <string>

namespace weft_cabi {

namespace {

weft_panel& check_panel(weft_panel* panel, const char* function) {
    require(panel, function, "panel");
    return *panel;
}

void require_unset(bool already, const char* function, const char* what) {
    if (already)
        fail(WEFT_EINVAL, std::string(function) + ": " + what +
                              " are already set on this panel; make a new panel for other " + what);
}

}  // namespace

void require_units(const weft_panel* panel, const char* function) {
    require(panel, function, "panel");
    if (!panel->has_units)
        fail(WEFT_EINVAL, std::string(function) +
                              ": the panel has no units; set them first with "
                              "weft_panel_set_units_text or weft_panel_set_units_number");
}

void require_periods(const weft_panel* panel, const char* function) {
    require(panel, function, "panel");
    if (!panel->has_periods)
        fail(WEFT_EINVAL, std::string(function) +
                              ": the panel has no periods; set them first with weft_panel_set_periods");
}

void require_model_columns(const weft_panel* panel, const char* function) {
    require_units(panel, function);
    require_periods(panel, function);
    if (!panel->has_outcome)
        fail(WEFT_EINVAL, std::string(function) +
                              ": the panel has no outcome; set it first with weft_panel_set_outcome");
}

}  // namespace weft_cabi

using namespace weft_cabi;

namespace {

// Shared checks of the transform entry points.
void check_transform(const weft_panel* panel, const double* values, const double* out,
                     std::size_t capacity, const char* function) {
    require(values, function, "values");
    require(out, function, "out");
    if (capacity < panel->n_rows)
        fail(WEFT_EBUFFER, std::string(function) + ": out holds " + std::to_string(capacity) +
                               " elements but the panel has " + std::to_string(panel->n_rows) +
                               " rows; pass a buffer of at least " + std::to_string(panel->n_rows));
}

void check_k(int k) {
    if (k == 0)
        fail(WEFT_EINVAL, std::string(
                              "k is 0; use 1 for one period back, 2 for two, or a negative k for later periods"));
}

weft::PeriodIndicators indicators(const weft_panel* panel, int omit_first, const char* function) {
    require_periods(panel, function);
    return weft::period_indicators(panel->data->periods, omit_first != 0,
                                   panel->data->first_row_number);
}

}  // namespace

namespace {

// A column copied from, or borrowed from, the caller's arrays.
weft::Column take_column(const char* name, const double* values, const unsigned char* missing, std::size_t n,
                         bool borrow) {
    if (borrow) return weft::Column::borrow(name, values, missing, n);
    return copy_column(name, values, missing, n);
}

int set_periods(weft_panel* panel, const double* periods, const unsigned char* missing, const char* fn,
                bool borrow) {
    return guarded(WEFT_EDATA, [&] {
        weft_panel& p = check_panel(panel, fn);
        require(periods, fn, "periods");
        require_unset(p.has_periods, fn, "periods");
        p.writable().periods = take_column("periods", periods, missing, p.n_rows, borrow);
        p.has_periods = true;
        return WEFT_OK;
    });
}

int set_outcome(weft_panel* panel, const char* name, const double* values, const unsigned char* missing,
                const char* fn, bool borrow) {
    return guarded(WEFT_EDATA, [&] {
        weft_panel& p = check_panel(panel, fn);
        require(values, fn, "values");
        if (p.has_outcome)
            fail(WEFT_EINVAL, std::string(fn) +
                                  ": the outcome is already set on this panel; make a new panel for another outcome");
        p.writable().outcome =
            take_column(name != nullptr && *name != '\0' ? name : "y", values, missing, p.n_rows, borrow);
        p.has_outcome = true;
        return WEFT_OK;
    });
}

int set_weights(weft_panel* panel, const char* name, const double* values, const unsigned char* missing,
                const char* fn, bool borrow) {
    return guarded(WEFT_EDATA, [&] {
        weft_panel& p = check_panel(panel, fn);
        require(values, fn, "values");
        if (p.has_weights)
            fail(WEFT_EINVAL, std::string(fn) +
                                  ": the weights are already set on this panel; make a new panel for other weights");
        p.writable().weights =
            take_column(name != nullptr && *name != '\0' ? name : "weights", values, missing, p.n_rows, borrow);
        p.has_weights = true;
        return WEFT_OK;
    });
}

int add_regressor(weft_panel* panel, const char* name, const double* values, const unsigned char* missing,
                  const char* fn, bool borrow) {
    return guarded(WEFT_EDATA, [&] {
        weft_panel& p = check_panel(panel, fn);
        require(values, fn, "values");
        weft::PanelData& data = p.writable();
        std::string term = name != nullptr ? name : "";
        if (term.empty()) term = "x" + std::to_string(data.regressors.size() + 1);
        data.regressors.push_back(take_column(term.c_str(), values, missing, p.n_rows, borrow));
        return WEFT_OK;
    });
}

}  // namespace

extern "C" {

int weft_panel_new(weft_panel** out, size_t n_rows, size_t first_row) {
    return guarded(WEFT_EDATA, [&] {
        require(out, "weft_panel_new", "out");
        *out = nullptr;
        if (n_rows == 0)
            fail(WEFT_EINVAL, "weft_panel_new: n_rows is 0; a panel needs at least one row");
        auto panel = std::make_unique<weft_panel>();
        panel->n_rows = n_rows;
        panel->data = std::make_shared<weft::PanelData>();
        panel->data->first_row_number = first_row;
        *out = panel.release();
        return WEFT_OK;
    });
}

void weft_panel_free(weft_panel* panel) { delete panel; }

int weft_panel_row_count(const weft_panel* panel, size_t* n_rows) {
    return guarded(WEFT_EINVAL, [&] {
        require(panel, "weft_panel_row_count", "panel");
        require(n_rows, "weft_panel_row_count", "n_rows");
        *n_rows = panel->n_rows;
        return WEFT_OK;
    });
}

int weft_panel_set_units_text(weft_panel* panel, const char* const* ids,
                              const unsigned char* missing) {
    return guarded(WEFT_EDATA, [&] {
        const char* fn = "weft_panel_set_units_text";
        weft_panel& p = check_panel(panel, fn);
        require(ids, fn, "ids");
        require_unset(p.has_units, fn, "units");
        weft::UnitColumn units;
        units.name = "units";
        units.text.resize(p.n_rows);
        for (std::size_t i = 0; i < p.n_rows; ++i)
            if (ids[i] != nullptr) units.text[i] = ids[i];  // NULL and "" are both missing
        units.missing = copy_mask(missing, p.n_rows);
        p.writable().units = std::move(units);
        p.has_units = true;
        return WEFT_OK;
    });
}

int weft_panel_set_units_number(weft_panel* panel, const double* ids,
                                const unsigned char* missing) {
    return guarded(WEFT_EDATA, [&] {
        const char* fn = "weft_panel_set_units_number";
        weft_panel& p = check_panel(panel, fn);
        require(ids, fn, "ids");
        require_unset(p.has_units, fn, "units");
        weft::UnitColumn units;
        units.name = "units";
        weft::reserve_large(units.numbers, p.n_rows);
        units.numbers.assign(ids, ids + p.n_rows);
        units.missing = copy_mask(missing, p.n_rows);
        p.writable().units = std::move(units);
        p.has_units = true;
        return WEFT_OK;
    });
}

int weft_panel_borrow_units_number(weft_panel* panel, const double* ids, const unsigned char* missing) {
    return guarded(WEFT_EDATA, [&] {
        const char* fn = "weft_panel_borrow_units_number";
        weft_panel& p = check_panel(panel, fn);
        require(ids, fn, "ids");
        require_unset(p.has_units, fn, "units");
        weft::UnitColumn units;
        units.name = "units";
        units.borrowed_numbers = ids;
        units.borrowed_missing = missing;
        units.borrowed_size = p.n_rows;
        p.writable().units = std::move(units);
        p.has_units = true;
        return WEFT_OK;
    });
}

int weft_panel_borrow_units_text(weft_panel* panel, const char* bytes, const size_t* offsets,
                                 const unsigned char* missing) {
    return guarded(WEFT_EDATA, [&] {
        const char* fn = "weft_panel_borrow_units_text";
        weft_panel& p = check_panel(panel, fn);
        require(offsets, fn, "offsets");
        require_unset(p.has_units, fn, "units");
        // offsets never decrease, so that every id is a range of bytes
        for (std::size_t i = 0; i < p.n_rows; ++i)
            if (offsets[i + 1] < offsets[i])
                throw weft::Error("units: offsets[" + std::to_string(i + 1) + "] is smaller than offsets[" +
                                  std::to_string(i) + "]; give each row's id as bytes[offsets[i] .. offsets[i + 1])");
        if (bytes == nullptr && offsets[p.n_rows] != offsets[0])
            throw weft::Error("units: bytes is NULL but the offsets give ids of nonzero length; pass the id bytes");
        weft::UnitColumn units;
        units.name = "units";
        static const char no_bytes = '\0';
        units.borrowed_bytes = bytes != nullptr ? bytes : &no_bytes;
        units.borrowed_offsets = offsets;
        units.borrowed_missing = missing;
        units.borrowed_size = p.n_rows;
        p.writable().units = std::move(units);
        p.has_units = true;
        return WEFT_OK;
    });
}

int weft_panel_set_periods(weft_panel* panel, const double* periods, const unsigned char* missing) {
    return set_periods(panel, periods, missing, "weft_panel_set_periods", false);
}

int weft_panel_borrow_periods(weft_panel* panel, const double* periods, const unsigned char* missing) {
    return set_periods(panel, periods, missing, "weft_panel_borrow_periods", true);
}

int weft_panel_set_outcome(weft_panel* panel, const char* name, const double* values,
                           const unsigned char* missing) {
    return set_outcome(panel, name, values, missing, "weft_panel_set_outcome", false);
}

int weft_panel_borrow_outcome(weft_panel* panel, const char* name, const double* values,
                              const unsigned char* missing) {
    return set_outcome(panel, name, values, missing, "weft_panel_borrow_outcome", true);
}

int weft_panel_set_weights(weft_panel* panel, const char* name, const double* values,
                           const unsigned char* missing) {
    return set_weights(panel, name, values, missing, "weft_panel_set_weights", false);
}

int weft_panel_borrow_weights(weft_panel* panel, const char* name, const double* values,
                              const unsigned char* missing) {
    return set_weights(panel, name, values, missing, "weft_panel_borrow_weights", true);
}

int weft_panel_add_regressor(weft_panel* panel, const char* name, const double* values,
                             const unsigned char* missing) {
    return add_regressor(panel, name, values, missing, "weft_panel_add_regressor", false);
}

int weft_panel_borrow_regressor(weft_panel* panel, const char* name, const double* values,
                                const unsigned char* missing) {
    return add_regressor(panel, name, values, missing, "weft_panel_borrow_regressor", true);
}

int weft_panel_structure(const weft_panel* panel, weft_structure* out) {
    return guarded(WEFT_EDATA, [&] {
        const char* fn = "weft_panel_structure";
        require_units(panel, fn);
        require_periods(panel, fn);
        require(out, fn, "out");
        const weft::StructureReport r = weft::describe_structure(
            panel->data->units, panel->data->periods, panel->data->first_row_number);
        if (r.rows == 0)
            throw weft::Error("no row has both a unit and a period; check that units and periods are filled in");
        weft_structure s{};
        s.units = r.units;
        s.periods = r.periods;
        s.rows = r.rows;
        s.rows_missing = r.rows_missing;
        s.balanced = r.balanced ? 1 : 0;
        s.min_periods = static_cast<std::size_t>(r.min_periods);
        s.median_periods = r.median_periods;
        s.max_periods = static_cast<std::size_t>(r.max_periods);
        s.gaps = r.gaps;
        s.duplicates = r.duplicate_pairs;
        s.single_row_units = r.single_row_units;
        s.units_with_gaps = r.units_with_gaps;
        s.rows_input = r.rows_input;
        *out = s;
        return WEFT_OK;
    });
}

int weft_panel_period_grid(const weft_panel* panel, double* buf, size_t capacity,
                           size_t* needed) {
    return guarded(WEFT_EDATA, [&] {
        const char* fn = "weft_panel_period_grid";
        require_units(panel, fn);
        require_periods(panel, fn);
        const weft::PanelData& d = *panel->data;
        // Validate as the structure report does (non-finite periods), without refusing
        // repeated pairs: the grid is defined whatever the duplicates.
        weft::describe_structure(d.units, d.periods, d.first_row_number);
        std::vector<double> grid;
        grid.reserve(panel->n_rows);
        for (std::size_t i = 0; i < panel->n_rows; ++i)
            if (!d.units.is_missing(i) && !d.periods.is_missing(i)) grid.push_back(d.periods.value(i));
        std::sort(grid.begin(), grid.end());
        grid.erase(std::unique(grid.begin(), grid.end()), grid.end());
        if (!buffer_ready(fn, buf, capacity, needed, grid.size())) return WEFT_OK;
        std::copy(grid.begin(), grid.end(), buf);
        return WEFT_OK;
    });
}

int weft_panel_diff(const weft_panel* panel, const double* values, const unsigned char* missing,
                    int k, double* out, unsigned char* out_missing, size_t capacity) {
    return guarded(WEFT_EDATA, [&] {
        const char* fn = "weft_panel_diff";
        require_units(panel, fn);
        require_periods(panel, fn);
        check_transform(panel, values, out, capacity, fn);
        check_k(k);
        const weft::PanelData& d = *panel->data;
        write_series(weft::difference(copy_column("values", values, missing, panel->n_rows), d.units,
                                      d.periods, k, d.first_row_number),
                     out, out_missing);
        return WEFT_OK;
    });
}

int weft_panel_lag(const weft_panel* panel, const double* values, const unsigned char* missing,
                   int k, double* out, unsigned char* out_missing, size_t capacity) {
    return guarded(WEFT_EDATA, [&] {
        const char* fn = "weft_panel_lag";
        require_units(panel, fn);
        require_periods(panel, fn);
        check_transform(panel, values, out, capacity, fn);
        check_k(k);
        const weft::PanelData& d = *panel->data;
        write_series(weft::lag(copy_column("values", values, missing, panel->n_rows), d.units,
                               d.periods, k, d.first_row_number),
                     out, out_missing);
        return WEFT_OK;
    });
}

int weft_panel_demean(const weft_panel* panel, const double* values, const unsigned char* missing,
                      double* out, unsigned char* out_missing, size_t capacity) {
    return guarded(WEFT_EDATA, [&] {
        const char* fn = "weft_panel_demean";
        require_units(panel, fn);
        check_transform(panel, values, out, capacity, fn);
        const weft::PanelData& d = *panel->data;
        write_series(weft::demean(copy_column("values", values, missing, panel->n_rows), d.units,
                                  d.first_row_number),
                     out, out_missing);
        return WEFT_OK;
    });
}

int weft_panel_unit_means(const weft_panel* panel, const double* values, const unsigned char* missing,
                          double* out, unsigned char* out_missing, size_t capacity) {
    return guarded(WEFT_EDATA, [&] {
        const char* fn = "weft_panel_unit_means";
        require_units(panel, fn);
        check_transform(panel, values, out, capacity, fn);
        const weft::PanelData& d = *panel->data;
        write_series(weft::unit_means(copy_column("values", values, missing, panel->n_rows), d.units,
                                      d.first_row_number),
                     out, out_missing);
        return WEFT_OK;
    });
}

int weft_panel_dummies(const weft_panel* panel, int omit_first, double* buf, size_t capacity,
                       size_t* needed) {
    return guarded(WEFT_EDATA, [&] {
        const char* fn = "weft_panel_dummies";
        const weft::PeriodIndicators block = indicators(panel, omit_first, fn);
        const std::size_t columns = block.columns.size();
        if (!buffer_ready(fn, buf, capacity, needed, panel->n_rows * columns)) return WEFT_OK;
        for (std::size_t j = 0; j < columns; ++j) {
            const weft::Series& column = block.columns[j];
            for (std::size_t i = 0; i < panel->n_rows; ++i)
                buf[i * columns + j] = column.is_defined(i) ? column.value[i] : nan_value;
        }
        return WEFT_OK;
    });
}

int weft_panel_dummy_periods(const weft_panel* panel, int omit_first, double* buf,
                             size_t capacity, size_t* needed) {
    return guarded(WEFT_EDATA, [&] {
        const char* fn = "weft_panel_dummy_periods";
        const weft::PeriodIndicators block = indicators(panel, omit_first, fn);
        if (!buffer_ready(fn, buf, capacity, needed, block.periods.size())) return WEFT_OK;
        std::copy(block.periods.begin(), block.periods.end(), buf);
        return WEFT_OK;
    });
}

}  // extern "C"
