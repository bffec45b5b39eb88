// The WEFT.* cell functions over plain tables (cells.hpp): read the ranges, call
// weft.h, lay the result out as cells. Every failure is thrown as UserError with
// a "weft: " text; component.cxx turns it into the first cell of the result.
#pragma once

#include "cache.hpp"
#include "cells.hpp"

#include <memory>
#include <string>

#include <weft.h>

namespace weft_addin {

// The four panel ranges of every model function, as Calc passed them (already
// trimmed of trailing empty rows common to all four).
struct PanelRanges {
    const CellGrid& outcome;
    const CellGrid& regressors;
    const CellGrid& units;
    const CellGrid& periods;
};

// The four panel ranges as a model function receives them: a key of the cells
// as the office passed them, and the plain tables, converted only on demand. The
// cache maps (cells_key, model argument) to the fitted model it found last time,
// so a second function over unchanged ranges skips converting and reading them.
class PanelSource {
public:
    virtual ~PanelSource() = default;
    // A 128-bit hash of every cell of the four ranges as passed: the shape of each
    // range and each cell's kind (number, boolean, text, blank, other) and exact
    // value. nullptr when the caller has none (then nothing is skipped).
    virtual const Hash128* cells_key() const = 0;
    // The four ranges converted to tables; the source keeps them alive.
    virtual PanelRanges ranges() const = 0;
};

// Plain tables (the logic tests): no key, so every call reads the ranges.
class TableSource : public PanelSource {
public:
    explicit TableSource(const PanelRanges& in) : in_(in) {}
    const Hash128* cells_key() const override { return nullptr; }
    PanelRanges ranges() const override { return in_; }

private:
    PanelRanges in_;
};

// WEFT.FIT: fits the model and returns one text that names the fit
// ("weft fit <32 hex digits> (<model words>; <n> observations from <rows> rows)"); the
// fn_fit_* functions take that text (the fit cell) instead of the four ranges and
// the model argument, so they neither read the ranges nor fit again.
OutCell fn_fit(const PanelSource& in, const Arg& model);
OutTable fn_fit_estimates(const Arg& fit);
OutTable fn_fit_summary(const Arg& fit);
OutCell fn_fit_value(const Arg& fit, const Arg& what, const Arg& term);
OutTable fn_fit_residuals(const Arg& fit);
OutTable fn_fit_fitted(const Arg& fit);
OutTable fn_fit_joint(const Arg& fit, const Arg& terms);
OutTable fn_fit_hetero(const Arg& fit, const Arg& form);
OutTable fn_fit_serial(const Arg& fit);
OutTable fn_fit_hausman(const Arg& fit);
OutTable fn_fit_effects(const Arg& fit);
OutTable fn_fit_bootstrap(const Arg& fit, const Arg& term, const Arg& settings);
OutTable fn_bootstrap(const PanelSource& in, const Arg& model, const Arg& term, const Arg& settings);
OutTable fn_bootstrap(const PanelRanges& in, const Arg& model, const Arg& term, const Arg& settings);

OutTable fn_estimates(const PanelSource& in, const Arg& model);
OutTable fn_summary(const PanelSource& in, const Arg& model);
OutCell fn_value(const PanelSource& in, const Arg& model, const Arg& what, const Arg& term);
OutTable fn_residuals(const PanelSource& in, const Arg& model);
OutTable fn_fitted(const PanelSource& in, const Arg& model);
OutTable fn_joint(const PanelSource& in, const Arg& model, const Arg& terms);
OutTable fn_hetero(const PanelSource& in, const Arg& model, const Arg& form);
OutTable fn_serial(const PanelSource& in, const Arg& model);
OutTable fn_hausman(const PanelSource& in, const Arg& model);
OutTable fn_effects(const PanelSource& in, const Arg& model);

// The same over plain tables.
OutCell fn_fit(const PanelRanges& in, const Arg& model);
OutTable fn_estimates(const PanelRanges& in, const Arg& model);
OutTable fn_summary(const PanelRanges& in, const Arg& model);
OutCell fn_value(const PanelRanges& in, const Arg& model, const Arg& what, const Arg& term);
OutTable fn_residuals(const PanelRanges& in, const Arg& model);
OutTable fn_fitted(const PanelRanges& in, const Arg& model);
OutTable fn_joint(const PanelRanges& in, const Arg& model, const Arg& terms);
OutTable fn_hetero(const PanelRanges& in, const Arg& model, const Arg& form);
OutTable fn_serial(const PanelRanges& in, const Arg& model);
OutTable fn_hausman(const PanelRanges& in, const Arg& model);
OutTable fn_effects(const PanelRanges& in, const Arg& model);

OutTable fn_diff(const Table& values, const Table& units, const Table& periods, const Arg& k);
OutTable fn_lag(const Table& values, const Table& units, const Table& periods, const Arg& k);
OutTable fn_demean(const Table& values, const Table& units);
OutTable fn_dummies(const Table& periods, const Arg& omit_first);
OutTable fn_panel(const Table& units, const Table& periods);

std::string fn_version();

// The panel of outcome, units, periods and the regressor columns, read as every model
// function reads its ranges (header row, names, blanks, the same checks); with
// regressors_optional a regressors grid of no columns means none. For other cell
// modules (the event functions).
struct PanelRead {
    std::shared_ptr<weft_panel> panel;
    bool header = false;
    std::size_t n = 0;          // data rows
    std::size_t first_row = 1;  // position of the first data row within the ranges
    Hash128 hash;
};
PanelRead read_panel_ranges(const PanelRanges& in, bool regressors_optional);

// The words of a words argument (model text, design): omitted, blank or a 0 from a
// blank reference give ""; a range gives the words of its cells; a number is refused
// with a message naming `what` and showing `example`.
std::string words_text(const Arg& words, const char* what, const char* example);

// When the environment variable WEFT_ADDIN_LOG names a file, every model fit
// and every cache hit appends one line to it ("fit <hash>" / "hit <hash>"), so a
// test can count fits, and every call its conversion time ("convert <ms> <rows>");
// without the variable nothing is written.
void log_line(const std::string& line);

}  // namespace weft_addin
