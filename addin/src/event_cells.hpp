// WEFT.EVENT and WEFT.DID over plain tables: read the ranges, call weft_event_*, lay
// the result out as cells. Failures are thrown as UserError (component.cxx turns them
// into the result's first cell).
#pragma once

#include "cells.hpp"

namespace weft_addin {

// The ranges of the event functions as the office passed them (trimmed of trailing
// empty rows common to outcome, treatment, units and periods).
struct EventRanges {
    const CellGrid& outcome;
    const CellGrid& treatment;
    const CellGrid& units;
    const CellGrid& periods;
};

// Header row, then one row per event time from -before to after: event time,
// estimate, std error, t, p-value, interval low, interval high, treated units.
OutTable fn_event(const EventRanges& in, const Arg& controls, const Arg& design);
// Label and value rows (weft_event_summary_*).
OutTable fn_did(const EventRanges& in, const Arg& controls, const Arg& design);

}  // namespace weft_addin
