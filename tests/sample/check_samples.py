#!/usr/bin/python3
"""Sample workbooks (label sample): each sample-sheets/*.fods, opened headless with the
add-in installed and recalculated, must show no error value and no "weft:" message in
any cell, and its first-difference estimates must recover the true parameters that
sample-sheets/generate.py used to make the data (the truth lies inside the 95%
interval of each slope). The staggered-adoption workbook (event_workbook.py) is checked
by check_event_workbook: true effects inside the group-time intervals, group-time
estimates equal to mean changes computed here, the two-way regression's bias.

    /usr/bin/python3 tests/sample/check_samples.py WORKBOOK.fods [--dump]

Expected values: the true parameters in sample-sheets/generate.py (SCENARIOS[...]
["true"]), the numbers the data were generated with; the slope estimates are also
compared with an ordinary least-squares fit of the same differences computed here
with numpy's lstsq (an independent route, not weft).
"""

import argparse
import os
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
REPO = os.path.normpath(os.path.join(HERE, "..", ".."))
sys.path.insert(0, os.path.join(REPO, "tests", "calc"))
sys.path.insert(0, os.path.join(REPO, "sample-sheets"))

from office import Office  # noqa: E402  (tests/calc/office.py)
import generate  # noqa: E402  (sample-sheets/generate.py: the true parameters)
import event_workbook  # noqa: E402  (sample-sheets/event_workbook.py: the true effects)

FORMULA_RESULT_STRING = 2   # com.sun.star.sheet.FormulaResult
FORMULA_RESULT_ERROR = 4

failures = []


def check(cond, what):
    print(("ok   " if cond else "FAIL ") + what)
    if not cond:
        failures.append(what)


def named_block(doc, name):
    return doc.NamedRanges.getByName(name).getReferredCells().getDataArray()


def error_cells(doc):
    """Addresses of formula cells whose result is an error, and of cells whose text
    starts with 'weft:' (a message from the add-in)."""
    bad = []
    for i in range(doc.Sheets.getCount()):
        sheet = doc.Sheets.getByIndex(i)
        errs = sheet.queryFormulaCells(FORMULA_RESULT_ERROR)
        if errs.getCount():
            bad.append(f"{sheet.Name}: error values in {errs.getRangeAddressesAsString()}")
        texts = sheet.queryFormulaCells(FORMULA_RESULT_STRING)
        for block in texts.getRangeAddresses():
            cells = sheet.getCellRangeByPosition(block.StartColumn, block.StartRow,
                                                 block.EndColumn, block.EndRow)
            for r, row in enumerate(cells.getDataArray()):
                for c, v in enumerate(row):
                    if isinstance(v, str) and v.strip().lower().startswith("weft:"):
                        bad.append(f"{sheet.Name} row {block.StartRow + r + 1} col "
                                   f"{block.StartColumn + c + 1}: {v}")
    return bad


def independent_fd(sc, rows):
    """OLS of the first differences on [1, differenced regressors, period indicators
    of the later period omitting the first two] (CONVENTIONS.md), by numpy lstsq."""
    import numpy as np
    cols = sc["columns"]
    iu, it, iy = cols.index(sc["unit"]), cols.index(sc["period"]), cols.index(sc["outcome"])
    ix = [cols.index(x) for x in sc["regressors"]]
    grid = sorted({r[it] for r in rows})
    pos = {t: i for i, t in enumerate(grid)}
    by_key = {(r[iu], r[it]): r for r in rows}
    later = grid[2:]
    X, y = [], []
    for r in rows:
        j = pos[r[it]]
        if j == 0:
            continue
        prev = by_key.get((r[iu], grid[j - 1]))
        if prev is None:
            continue
        y.append(r[iy] - prev[iy])
        X.append([1.0] + [r[c] - prev[c] for c in ix] + [1.0 if r[it] == t else 0.0
                                                          for t in later])
    b, *_ = np.linalg.lstsq(np.array(X), np.array(y), rcond=None)
    return dict(zip(sc["regressors"], b[1:1 + len(ix)])), len(y)


def independent_group_time(sc, rows):
    """Group-time effects by event time e >= 0 from mean changes (Callaway and
    Sant'Anna 2021 with never-treated comparison units and base year g - 1): for each
    cohort observed at g + e, the treated branches' mean change from g - 1 to g + e minus
    the never-treated branches' mean change, averaged over cohorts by cohort size.
    Computed here in plain Python, not by weft."""
    y = {(r[0], r[1]): r[2] for r in rows}
    first = {}
    for r in rows:
        if r[3] == 1:
            first[r[0]] = min(first.get(r[0], 9999), r[1])
    units = sorted({r[0] for r in rows})
    never = [u for u in units if u not in first]
    out = {}
    for e in range(0, sc["after"] + 1):
        total, weight = 0.0, 0
        for c in sc["cohorts"]:
            t, b = c + e, c - 1
            if t > sc["last_year"]:
                continue
            treated = [u for u in units if first.get(u) == c]
            att = (sum(y[(u, t)] - y[(u, b)] for u in treated) / len(treated)
                   - sum(y[(u, t)] - y[(u, b)] for u in never) / len(never))
            total += len(treated) * att
            weight += len(treated)
        out[e] = total / weight
    return out


def check_event_workbook(doc, key):
    """The staggered-adoption workbook (sample-sheets/event_workbook.py): true effects
    (the generator's) inside the group-time intervals, group-time point estimates equal
    to the mean-change computation above, the two-way regression further from the true
    overall effect than group-time (what the reading says), and the chart."""
    sc = event_workbook.EVENT
    rows, _ = event_workbook.event_panel(sc)
    truth = event_workbook.true_event_effects(sc)
    gt = named_block(doc, "event_group_time")
    check(list(gt[0][:3]) == ["event time", "estimate", "std error"], f"{key}: WEFT.EVENT header")
    check(len(gt) == 2 + sc["before"] + sc["after"], f"{key}: one row per event time")
    reference = independent_group_time(sc, rows)
    for row in gt[1:]:
        e = int(row[0])
        if e < 0:
            continue
        lo, hi = row[5], row[6]
        check(isinstance(lo, float) and lo <= truth[e] <= hi,
              f"{key}: true effect {truth[e]:.3f} at e={e} lies in the group-time interval [{lo}, {hi}]")
        check(abs(row[1] - reference[e]) <= 1e-9 * max(1.0, abs(reference[e])),
              f"{key}: group-time estimate at e={e} {row[1]} equals the mean-change computation {reference[e]}")
    for name in ("event_imputation", "event_twfe"):
        block = named_block(doc, name)
        check(len(block) == 2 + sc["before"] + sc["after"] and block[0][0] == "event time",
              f"{key}: {name} fills its block")
    twfe = named_block(doc, "event_twfe")
    check(any(r[2] == "reference" for r in twfe), f"{key}: twfe shows its reference event time")
    true_overall = named_block(doc, "true_overall")[0][1]
    did = {w: {r[0]: r[1] for r in named_block(doc, f"did_{w}")} for w in ("group_time", "imputation", "twfe")}
    for w, d in did.items():
        check(isinstance(d.get("pre-treatment test p-value"), float), f"{key}: {w} shows the pre-treatment test")
        last = named_block(doc, f"did_{w}")[-1][0]
        check(last in ("pre-treatment test p-value", "warning"), f"{key}: did_{w} ends where its result ends ({last!r})")
    err = {w: abs(d["average effect on the treated"] - true_overall) for w, d in did.items()}
    check(err["twfe"] > 2 * err["group_time"] and err["twfe"] > 2 * did["group_time"]["std error"],
          f"{key}: the two-way regression is far from the true overall effect {true_overall} "
          f"(errors: {err})")
    analysis = doc.Sheets.getByName("Analysis")
    check(analysis.Charts.getCount() >= 1, f"{key}: the Analysis sheet holds the event-study chart")
    if analysis.Charts.getCount():
        chart = analysis.Charts.getByIndex(0).EmbeddedObject
        series = chart.getFirstDiagram().getCoordinateSystems()[0].getChartTypes()[0].getDataSeries()
        with_bars = [s for s in series if s.ErrorBarY is not None and s.ErrorBarY.ShowPositiveError]
        check(len(series) == 4 and len(with_bars) == 3,
              f"{key}: the chart shows three estimators with interval bars and the true effects")
        axis = chart.getDiagram().getYAxis()
        ends = [v for name in ("event_group_time", "event_imputation", "event_twfe")
                for r in named_block(doc, name)[1:] for v in (r[5], r[6]) if isinstance(v, float)]
        check(all(axis.Min <= v <= axis.Max for v in ends),
              f"{key}: the chart's value axis [{axis.Min}, {axis.Max}] holds every interval")
    reading = [r[0] for r in named_block(doc, "reading")]
    check(all(isinstance(t, str) and len(t) > 20 for t in reading), f"{key}: the reading is written out in words")
    check(any("Why the two-way regression differs" in t for t in reading), f"{key}: the reading explains the two-way result")


def independent_within_fit(sc, rows):
    """The three squared correlations of outcome and slope prediction of the within fit
    with period effects, from their definitions: OLS of the unit-demeaned outcome on
    the unit-demeaned regressors and period indicators (all periods but the first), by
    numpy lstsq; the slope prediction is the levels of those columns times the slopes
    (leaving out a different period moves it by a constant, which no correlation
    sees). Returns {"all rows", "unit means", "deviations from unit means"}."""
    import numpy as np
    cols = sc["columns"]
    iu, it, iy = cols.index(sc["unit"]), cols.index(sc["period"]), cols.index(sc["outcome"])
    ix = [cols.index(x) for x in sc["regressors"]]
    grid = sorted({r[it] for r in rows})
    X = np.array([[r[c] for c in ix] + [1.0 if r[it] == t else 0.0 for t in grid[1:]]
                  for r in rows])
    y = np.array([r[iy] for r in rows])
    units = np.array([r[iu] for r in rows])

    def unit_means(v):
        out = np.empty_like(v)
        for u in set(units.tolist()):
            out[units == u] = v[units == u].mean(axis=0)
        return out

    b, *_ = np.linalg.lstsq(X - unit_means(X), y - unit_means(y), rcond=None)
    xb = X @ b

    def corr2(a, c):
        return float(np.corrcoef(a, c)[0, 1] ** 2)

    first = {u: i for i, u in reversed(list(enumerate(units.tolist())))}
    one = sorted(first.values())
    return {"all rows": corr2(y, xb),
            "unit means": corr2(unit_means(y)[one], unit_means(xb)[one]),
            "deviations from unit means": corr2(y - unit_means(y), xb - unit_means(xb))}


def open_recalculated(office, path, key, dump):
    """The workbook loaded and recalculated, its named blocks printed with dump, and
    the check that no cell shows an error value or a weft: message."""
    doc = office.load_copy(path)
    doc.calculateAll()
    if dump:
        for name in doc.NamedRanges.getElementNames():
            print(f"--- {name}")
            for row in named_block(doc, name):
                print("   ", row)
    bad = error_cells(doc)
    check(not bad, f"{key}: no cell shows an error value or a weft: message"
                   + ("" if not bad else "\n      " + "\n      ".join(bad[:20])))
    return doc


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("workbook")
    ap.add_argument("--oxt", default=os.environ.get("WEFT_OXT"))
    ap.add_argument("--dump", action="store_true", help="print every named block")
    args = ap.parse_args()
    if not args.oxt or not os.path.isfile(args.oxt):
        sys.exit("check_samples: give --oxt or set WEFT_OXT to the built weft.oxt")
    key = os.path.splitext(os.path.basename(args.workbook))[0]
    if key == event_workbook.EVENT["key"]:
        with Office(extensions=[args.oxt], timeout=240) as office:
            doc = open_recalculated(office, args.workbook, key, args.dump)
            check_event_workbook(doc, key)
            doc.close(True)
        print(f"{len(failures)} failed" if failures else "all checks passed")
        return 1 if failures else 0
    if key not in generate.SCENARIOS:
        sys.exit(f"check_samples: {key} is not a scenario of sample-sheets/generate.py")
    sc = generate.SCENARIOS[key]
    rows = sc["make"](sc["seed"])

    with Office(extensions=[args.oxt], timeout=240) as office:
        doc = open_recalculated(office, args.workbook, key, args.dump)

        est = named_block(doc, "fd_estimates")
        check(list(est[0]) == ["term", "coefficient", "standard error", "t ratio",
                               "two-sided p", "95% interval from", "95% interval to"],
              f"{key}: fd_estimates has the estimates header (level 0.95)")
        table = {row[0]: row for row in est[1:]}
        n_period_terms = len({r[sc["columns"].index(sc["period"])] for r in rows}) - 2
        check(len(est) == 1 + 1 + len(sc["regressors"]) + n_period_terms,
              f"{key}: fd_estimates has one row per term and no more")
        # A block smaller than its result would truncate it silently: the last row of
        # every estimates block must be the last period's indicator.
        last_period = max(r[sc["columns"].index(sc["period"])] for r in rows)
        for block in ("fd_estimates", "within_estimates", "random_estimates"):
            last = named_block(doc, block)[-1][0]
            check(last == f"period {last_period}",
                  f"{key}: {block} ends with the last period's term (got {last!r})")
        reference, n_diff = independent_fd(sc, rows)
        truth_cells = {r[0]: r[1] for r in named_block(doc, "true_parameters")}
        for term, true in sc["true"].items():
            check(truth_cells.get(term) == true,
                  f"{key}: the workbook states the generator's true {term} = {true}")
            row = table.get(term)
            check(row is not None, f"{key}: fd_estimates has a row for {term}")
            if row is None:
                continue
            b, lo, hi = row[1], row[5], row[6]
            check(isinstance(lo, float) and lo <= true <= hi,
                  f"{key}: true {term} = {true} lies in the fd 95% interval [{lo}, {hi}]")
            check(abs(b - reference[term]) <= 1e-9 * max(1.0, abs(reference[term])),
                  f"{key}: fd estimate of {term} {b} equals numpy lstsq {reference[term]}")
        # The fit measures are what their labels say (independent numpy computation).
        measures = {r[0]: r[1] for r in named_block(doc, "fit_measures")}
        for words, want in independent_within_fit(sc, rows).items():
            got = measures.get(f"within: {words}")
            check(isinstance(got, float) and abs(got - want) <= 1e-9 * max(1.0, abs(want)),
                  f"{key}: within {words}: squared correlation {got} equals numpy's {want}")
        check(all(isinstance(v, float) and 0 <= v <= 1 for k_, v in measures.items()
                  if k_.startswith("random")),
              f"{key}: random effects' squared correlations lie in [0, 1]")
        n_used = [r for r in named_block(doc, "panel_structure") if r[0] == "rows"]
        check(bool(n_used) and n_used[0][1] == len(rows),
              f"{key}: WEFT.PANEL counts the {len(rows)} data rows")

        analysis = doc.Sheets.getByName("Analysis")
        has_chart = analysis.Charts.getCount() >= 1
        check(has_chart, f"{key}: the Analysis sheet holds the chart of the estimates")
        if has_chart:
            chart = analysis.Charts.getByIndex(0).EmbeddedObject
            kinds = chart.getFirstDiagram().getCoordinateSystems()[0].getChartTypes()
            series = kinds[0].getDataSeries()
            with_bars = [s for s in series if s.ErrorBarY is not None
                         and s.ErrorBarY.ShowPositiveError and s.ErrorBarY.ShowNegativeError]
            check(len(with_bars) == 3,
                  f"{key}: the chart shows fd, within and random with interval bars")
            # The value axis is fixed in the file: every interval end must lie inside it.
            axis = chart.getDiagram().getYAxis()
            ends = [v for block in ("fd_estimates", "within_estimates", "random_estimates")
                    for row in named_block(doc, block) if row[0] in sc["true"]
                    for v in (row[5], row[6])]
            check(all(axis.Min <= v <= axis.Max for v in ends),
                  f"{key}: the chart's value axis [{axis.Min}, {axis.Max}] holds every "
                  f"slope interval ({min(ends):.3f} to {max(ends):.3f})")
        if "few_clusters" in sc:
            # The few-cluster sheet: four kinds of inference side by side, each a
            # p-value and a finite interval, and the reading in words.
            comp = named_block(doc, "few_clusters_comparison")
            check(len(comp) == 4 and all(isinstance(r[1], float) and 0.0 <= r[1] <= 1.0
                                         and isinstance(r[2], float) and r[2] < r[3]
                                         for r in comp),
                  f"{key}: few clusters: cluster, cr2 and two bootstraps each give a p-value "
                  f"and an interval ({comp})")
            words = [r[0] for r in named_block(doc, "few_clusters_reading")]
            check(all(isinstance(t, str) and len(t) > 40 for t in words),
                  f"{key}: few clusters: which to trust is written out in words")
        reading = [r[0] for r in named_block(doc, "reading")]
        check(all(isinstance(t, str) and len(t) > 20 for t in reading),
              f"{key}: the reading is written out in words")
        doc.close(True)

    print(f"{len(failures)} failed" if failures else "all checks passed")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
