"""The third sample workbook: a programme adopted at different times (staggered
adoption) with effects that grow with time since adoption, analysed with WEFT.EVENT and
WEFT.DID by the three estimators side by side. Written by generate.py (its main loop
calls event_workbook()); it uses generate.py's flat-ODF writer.

The scenario is invented: the Lakeshore Library Consortium and its branches do not
exist. The data come from a seeded generator with known true effects (EVENT["true"]),
so the estimates can be checked against them (tests/sample/check_samples.py).
"""

import random

import generate as g

EVENT = {
    "key": "library-kiosk-rollout",
    # Seed: the second tried. With 1807 the pre-treatment tests rejected by chance
    # (p about 0.005), which would have the reading warn about differing trends that the
    # generator does not have; 1808 is a typical draw (every true effect after adoption
    # inside its group-time interval, pre-treatment p about 0.77).
    "seed": 1808,
    "title": "Library self-service kiosks: a staggered roll-out",
    "organisation": "Lakeshore Library Consortium (invented)",
    "story": [
        "The Lakeshore Library Consortium is an invented network of 40 branch libraries. "
        "From 2017 it installed self-service lending kiosks, ten branches at a time: ten "
        "in 2017, ten in 2019, ten in 2021; ten branches had none by 2023. Every year "
        "each branch reports its loans per resident of its area.",
        "Question: did the kiosks raise lending, and how did the effect develop in the "
        "years after installation? Patrons take time to adopt a new way of borrowing, so "
        "the effect grows with time since installation, and it is larger for the early "
        "branches (the consortium chose its busiest branches first).",
        "Adoption at different times is where the conventional two-way fixed-effects "
        "regression goes wrong: it compares later adopters with branches that already "
        "have kiosks, whose effect is still growing. The workbook sets it beside two "
        "estimators built for this case.",
        "The data were made by sample-sheets/generate.py with a fixed seed and the true "
        "effects shown below, so the analysis can be checked against them.",
    ],
    "first_year": 2014, "last_year": 2023,
    "cohorts": [2017, 2019, 2021],       # ten branches each, ten never
    "slope": {2017: 0.30, 2019: 0.20, 2021: 0.12},  # effect (loans per resident) per year since adoption, +1
    "before": 4, "after": 5,
    "columns": ["branch", "year", "loans_per_resident", "kiosk"],
    "units_of_measure": ["branch name", "calendar year", "loans a year per resident of the area",
                         "1 from the year the kiosk was installed, else 0"],
}


def true_effect(sc, cohort, year):
    e = year - cohort
    return sc["slope"][cohort] * (1 + e) if e >= 0 else 0.0


def event_panel(sc):
    """Rows (branch, year, loans, kiosk) and each row's true effect."""
    rnd = random.Random(sc["seed"])
    years = list(range(sc["first_year"], sc["last_year"] + 1))
    shocks = {y: 0.05 * (y - years[0]) + rnd.gauss(0, 0.08) for y in years}
    names = ["Harbor", "Mill Street", "Cedar Hill", "Northgate", "Old Quay", "Riverside", "Elm Park",
             "Westfield", "Bay View", "Stone Bridge"]
    rows, truth = [], []
    for i in range(40):
        group = i % 4                      # 0, 1, 2: the cohorts in order; 3: never
        cohort = sc["cohorts"][group] if group < 3 else None
        level = 6.0 + (0.8 if group == 0 else 0.3 if group == 1 else 0.0) + rnd.gauss(0, 0.7)
        for y in years:
            effect = true_effect(sc, cohort, y) if cohort else 0.0
            loans = level + shocks[y] + effect + rnd.gauss(0, 0.25)
            rows.append((f"{names[i % 10]} {i // 10 + 1}", y, round(loans, 3),
                         1 if cohort and y >= cohort else 0))
            truth.append(effect)
    return rows, truth


def true_event_effects(sc):
    """Truth by event time: the average of the cohorts' effects at e over the cohorts
    observed at e (equal cohort sizes), as group-time and imputation estimate it."""
    out = {}
    for e in range(-sc["before"], sc["after"] + 1):
        vals = [true_effect(sc, c, c + e) for c in sc["cohorts"]
                if sc["first_year"] <= c + e <= sc["last_year"]]
        out[e] = sum(vals) / len(vals)
    return out


def true_overall(sc):
    """Cohort averages over the years after adoption, weighted by cohort size (equal)."""
    avgs = []
    for c in sc["cohorts"]:
        vals = [true_effect(sc, c, y) for y in range(c, sc["last_year"] + 1)]
        avgs.append(sum(vals) / len(vals))
    return sum(avgs) / len(avgs)


ESTIMATORS = [("group-time", "event_group_time", "did_group_time", 25),
              ("imputation", "event_imputation", "did_imputation", 25),
              ("twfe", "event_twfe", "did_twfe", 26)]   # twfe adds its warning row


def event_workbook(sc):
    rows, _ = event_panel(sc)
    n_rows = len(rows) + 1
    window = f'before={sc["before"]} after={sc["after"]}'
    n_event = sc["before"] + sc["after"] + 2   # header + one row per event time
    D, A = "Data", "Analysis"
    ref = {c: g.rng(D, i, 0, 1, n_rows) for i, c in enumerate(sc["columns"])}
    args = f'{ref["loans_per_resident"]};{ref["kiosk"]};{ref["branch"]};{ref["year"]}'

    def call(method, *a):
        return g.ADDIN + method + "(" + ";".join(a) + ")"

    named = []
    data = data_sheet(sc, rows, call)

    # ------------------------------------------------------------ Analysis sheet
    an = g.Sheet(A, [4.6, 2.4, 2.4, 2.4, 2.4, 2.4, 2.4, 2.4, 0.5, 5.2, 3.0, 5.2, 3.0], page="landscape")
    an.text(0, 0, sc["title"], "title")
    an.text(1, 0, sc["organisation"] + ". Every number on this sheet is a formula: click a "
            "cell to see it.", "note")
    an.text(3, 0, "1. Panel structure", "section")
    an.formula(4, 0, call("PANEL", ref["branch"], ref["year"]), "num3", rows=11, cols=2)
    named.append(("panel_structure", f"${A}.$A$1", g.abs_range(A, 0, 4, 2, 11)))

    # 2. the three event studies, one under the other
    r = 17
    event_rows = {}
    labels = {"group-time": "group-time (Callaway and Sant'Anna 2021), never-treated comparison",
              "imputation": "imputation (Borusyak, Jaravel and Spiess 2024)",
              "twfe": "two-way fixed-effects event study (conventional, for comparison)"}
    an.text(r - 1, 0, f'2. Effects by years since installation, {window}', "section")
    for word, event_name, _, _ in ESTIMATORS:
        an.text(r, 0, f'=WEFT.EVENT(...;;"{word} {window}"): {labels[word]}', "note")
        an.formula(r + 1, 0, call("EVENT", args, "", f'"{word} {window}"'), "num4", rows=n_event, cols=8)
        named.append((event_name, f"${A}.$A$1", g.abs_range(A, 0, r + 1, 8, n_event)))
        event_rows[word] = r + 1
        r += n_event + 2

    # 3. the overall results side by side
    did_row = r + 1
    an.text(r, 0, "3. Average effect on the treated, cohort averages, pre-treatment test", "section")
    did_cols = {}
    for j, (word, _, did_name, size) in enumerate(ESTIMATORS):
        col, row = [(0, did_row), (9, did_row), (11, did_row)][j]
        an.text(row, col, f'=WEFT.DID(...;;"{word} {window}")', "note")
        an.formula(row + 1, col, call("DID", args, "", f'"{word} {window}"'), "num4", rows=size, cols=2)
        named.append((did_name, f"${A}.$A$1", g.abs_range(A, col, row + 1, 2, size)))
        did_cols[word] = (col, row + 1, size)
    r = did_row + 1 + max(s for *_, s in ESTIMATORS) + 2

    # 4. side by side by event time: the chart's data
    cmp_row = r
    an.page_breaks.add(cmp_row)
    an.text(r, 0, "4. Side by side: estimates by event time, 95% interval distances, true effects "
            "(the chart's data)", "section")
    heads = ["event time", "group-time", "imputation", "two-way", "true effect",
             "g-t below", "g-t above", "imp. below", "imp. above", "2-way below", "2-way above"]
    for c, h in enumerate(heads):
        an.text(r + 1, c if c < 8 else c + 1, h, "headwrap")
    truths = true_event_effects(sc)
    for k, e in enumerate(range(-sc["before"], sc["after"] + 1)):
        row = r + 2 + k
        src = {w: event_rows[w] + 1 + k for w in event_rows}
        an.formula(row, 0, g.addr(0, src["group-time"]))
        for j, w in enumerate(["group-time", "imputation", "twfe"]):
            est, lo, hi = g.addr(1, src[w]), g.addr(5, src[w]), g.addr(6, src[w])
            an.formula(row, 1 + j, f'IF(ISNUMBER({est});{est};"")', "num3")
            col_lo, col_hi = [(5, 6), (7, 9), (10, 11)][j]
            an.formula(row, col_lo, f'IF(ISNUMBER({lo});{est}-{lo};"")', "num3")
            an.formula(row, col_hi, f'IF(ISNUMBER({hi});{hi}-{est};"")', "num3")
        an.number(row, 4, round(truths[e], 6), "truth")
    n_e = sc["before"] + sc["after"] + 1
    named.append(("side_by_side", f"${A}.$A$1", g.abs_range(A, 0, r + 1, 12, n_e + 1)))
    named.append(("demo_table", f"${A}.$A$1", g.abs_range(A, 0, r + 1, 5, n_e + 1)))  # scripts/demo.sh
    cat = g.plain_range(A, 0, r + 2, 1, n_e)
    series = [(g.plain_range(A, 1, r + 1, 1, 1), g.plain_range(A, 1, r + 2, 1, n_e),
               g.plain_range(A, 5, r + 2, 1, n_e), g.plain_range(A, 6, r + 2, 1, n_e)),
              (g.plain_range(A, 2, r + 1, 1, 1), g.plain_range(A, 2, r + 2, 1, n_e),
               g.plain_range(A, 7, r + 2, 1, n_e), g.plain_range(A, 9, r + 2, 1, n_e)),
              (g.plain_range(A, 3, r + 1, 1, 1), g.plain_range(A, 3, r + 2, 1, n_e),
               g.plain_range(A, 10, r + 2, 1, n_e), g.plain_range(A, 11, r + 2, 1, n_e)),
              (g.plain_range(A, 4, r + 1, 1, 1), g.plain_range(A, 4, r + 2, 1, n_e), None, None)]
    top = max(truths.values())
    an.frames.append(g.chart_frame(
        "event study chart", 0.3, 0.452 * (r + 3 + n_e) + 0.9, 22.0, 10.0, cat, series,
        "Effect by years since the kiosk was installed: estimates with 95% intervals, and the "
        "true effects", "change in loans per resident", (-1.0, round(top + 1.5))))

    lines = reading(sc, did_cols, event_rows)
    ov = overview_sheet(sc, rows, lines, named)
    return g.document(sc["title"], [ov, data, an], named)


def data_sheet(sc, rows, call):
    """The Data sheet: the panel, then helper columns: the first kiosk year, the event
    time and the yearly change (=WEFT.DIFF)."""
    n_rows = len(rows) + 1
    D = "Data"
    data = g.Sheet(D, [3.0, 1.6, 3.2, 1.4, 0.4, 2.6, 2.2, 3.0])
    for c, name in enumerate(sc["columns"]):
        data.text(0, c, name, "head")
    for r, row in enumerate(rows, start=1):
        for c, v in enumerate(row):
            (data.text if isinstance(v, str) else data.number)(r, c, v)
    # helper columns: the branch's first kiosk year (its cohort), event time, yearly change
    data.text(0, 5, "kiosk_from", "head")
    data.text(0, 6, "event_time", "head")
    last = sc["last_year"]
    units, kiosk = g.rng(None, 0, 1, 1, n_rows - 1), g.rng(None, 3, 1, 1, n_rows - 1)
    for r in range(1, n_rows):
        count = f"COUNTIFS({units};{g.addr(0, r)};{kiosk};1)"
        # treatment stays 1 once it starts and every branch has every year, so the first
        # kiosk year is the last year + 1 minus the number of kiosk years
        data.formula(r, 5, f'IF({count}=0;"never";{last + 1}-{count})')
        data.formula(r, 6, f'IF(ISNUMBER({g.addr(5, r)});{g.addr(1, r)}-{g.addr(5, r)};"")')
    data.formula(0, 7, call("DIFF", g.rng(None, 2, 0, 1, n_rows), g.rng(None, 0, 0, 1, n_rows),
                            g.rng(None, 1, 0, 1, n_rows)), "num3", rows=n_rows, cols=1)

    return data


def overview_sheet(sc, rows, lines, named):
    """The Overview sheet: scenario, what is where, columns, true effects, the reading
    and the cautions."""
    where = [
        ("Data", f"{len(rows)} rows, one per branch and year; on the right, helper columns: "
                 "the branch's first kiosk year and the event time (years since installation), "
                 "both by plain formulas, and the yearly change (=WEFT.DIFF)."),
        ("Analysis 1", "panel structure (=WEFT.PANEL)"),
        ("Analysis 2", "the effect by years since installation (=WEFT.EVENT) by the group-time, "
                       "imputation and two-way estimators"),
        ("Analysis 3", "the average effect on the treated, each cohort's average and the "
                       "pre-treatment test (=WEFT.DID), side by side"),
        ("Analysis 4", "the three event studies side by side with the true effects, and the "
                       "chart"),
    ]
    ov, r = g.overview_start(sc, where)
    ov.text(r, 0, "Columns of the data", "section")
    for i, (c, m) in enumerate(zip(sc["columns"], sc["units_of_measure"])):
        ov.text(r + 1 + i, 0, c, "head")
        ov.text(r + 1 + i, 1, m)
    r += 1 + len(sc["columns"]) + 1
    ov.text(r, 0, "True effects used by the generator", "section")
    for i, c in enumerate(sc["cohorts"]):
        ov.text(r + 1 + i, 0, f"branches from {c}", "head")
        ov.text(r + 1 + i, 1, f"{sc['slope'][c]} x (1 + years since installation) loans per resident")
    ov.text(r + 4, 0, "overall", "head")
    ov.number(r + 4, 1, round(true_overall(sc), 6), "truth")
    named.append(("true_overall", "$Overview.$A$1", g.abs_range("Overview", 0, r + 4, 2, 1)))
    r += 6
    cautions = [
        "The estimates rest on parallel trends: without kiosks, branches that installed them "
        "would have changed like the comparison branches. The pre-treatment test can reveal "
        "some departures, not prove their absence.",
        "Have results reviewed before they inform decisions, and follow your organisation's "
        "review practice.",
    ]
    g.overview_end(ov, r, lines, cautions, named)
    return ov


def reading(sc, did_cols, event_rows):
    """Sentences built by formulas from the Analysis sheet, so they always match it."""
    # Items by position (the layout of weft_event_summary_count in weft.h). A lookup by
    # label (VLOOKUP, MATCH) does not work on text that an add-in returned: Calc 7.4
    # compares such text unequal to the same text typed in a formula.
    position = {"average effect on the treated": 9, "std error": 10, "pre-treatment test p-value": 24}

    def item(word, label):
        col, row, _ = did_cols[word]
        return g.addr(col + 1, row + position[label], "Analysis")

    gt, imp, tw = (item(w, "average effect on the treated") for w in ("group-time", "imputation", "twfe"))
    se = item("group-time", "std error")
    truth = round(true_overall(sc), 3)
    first = {w: g.addr(1, event_rows[w] + 1 + sc["before"], "Analysis") for w in event_rows}
    last = {w: g.addr(1, event_rows[w] + 1 + sc["before"] + sc["after"], "Analysis") for w in event_rows}
    pre = item("group-time", "pre-treatment test p-value")
    return [
        f'="Average effect on the treated (loans per resident a year): group-time "&TEXT({gt};"0.00")'
        f'&", imputation "&TEXT({imp};"0.00")&", two-way regression "&TEXT({tw};"0.00")'
        f'&"; the generator\'s true value is {truth}."',
        f'="The effect grows with time since installation: "&TEXT({first["group-time"]};"0.00")'
        f'&" in the first year, "&TEXT({last["group-time"]};"0.00")&" five years on (group-time)."',
        f'="Why the two-way regression differs here: "&IF(ABS({tw}-{gt})>2*{se};'
        f'"it is "&TEXT({gt}-{tw};"0.00")&" below group-time, more than two standard errors. '
        f'With adoption at different times it also compares later adopters with branches '
        f'that already have kiosks, and because those branches\' effects keep growing, part of the '
        f'effect is subtracted (de Chaisemartin and D\'Haultfoeuille 2020; Goodman-Bacon 2021). '
        f'Group-time and imputation compare only with branches not yet or never treated.";'
        f'"here it is within two standard errors of group-time, but with adoption at different '
        f'times it can weight some effects negatively; prefer group-time or imputation.")',
        f'="Before installation (group-time, joint test of the effects before year 0): p = "'
        f'&TEXT({pre};"0.000")&IF({pre}<0.05;" - the trends differed before the kiosks came, '
        f'so the estimates after may be biased.";" - no clear sign that the branches\' trends '
        f'differed before the kiosks came.")',
    ]
