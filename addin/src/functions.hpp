// The WEFT.* cell functions over plain tables (cells.hpp): read the ranges, call
// weft.h, lay the result out as cells. Every failure is thrown as UserError with
// a "weft: " text; component.cxx turns it into the first cell of the result.
#pragma once

#include "cells.hpp"

#include <string>

namespace weft_addin {

// The four panel ranges of every model function, as Calc passed them (already
// trimmed of trailing empty rows common to all four).
struct PanelRanges {
    const Table& outcome;
    const Table& regressors;
    const Table& units;
    const Table& periods;
};

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

// When the environment variable WEFT_ADDIN_LOG names a file, every model fit
// and every cache hit appends one line to it ("fit <hash>" / "hit <hash>"), so a
// test can count fits, and every call its conversion time ("convert <ms> <rows>");
// without the variable nothing is written.
void log_line(const std::string& line);

}  // namespace weft_addin
