#!/usr/bin/env python3
"""Writes the sample workbooks of weft (flat ODF spreadsheets, .fods) from seeded,
invented data whose true parameters are known.

    python3 sample-sheets/generate.py            rewrite every sample workbook
    python3 sample-sheets/generate.py --check    exit 1 if a committed file differs

Standard library only. The scenarios, places and organisations are invented. Each
workbook is a complete analysis in weft's cell functions: the panel's structure, the
differences and lags as visible helper columns, a first-difference fit with period
effects and cluster-robust standard errors, a joint test, a heteroskedasticity and a
serial-correlation test, within versus random effects with the Hausman comparison, a
chart of the estimates with their intervals and a short reading in words.

Formulas are stored the way Calc stores add-in functions: the add-in's service name
plus the method name, ORG.WEFT.CALCFUNCTIONS.<METHOD> (see addin/idl). The files carry
no cached results, so Calc computes every formula when a workbook is opened.

tests/sample/check_samples.py imports SCENARIOS from here: the true parameters that a
workbook's estimates are checked against come from this file, nowhere else.
"""

import argparse
import math
import os
import random
import sys
from xml.sax.saxutils import escape, quoteattr

HERE = os.path.dirname(os.path.abspath(__file__))
ADDIN = "ORG.WEFT.CALCFUNCTIONS."  # stored name = service name + method name


# ==================================================================== the data

def branch_panel(seed):
    """Service branches of the (invented) Regional Services Agency.

    cost_per_case = 80 + a_i + g_t - 2.0 caseload - 0.40 online_share + u_it
    Branches with a larger caseload have higher fixed costs (a_i rises with the
    branch's typical caseload), so pooled OLS and random effects are biased and the
    Hausman comparison should reject; the idiosyncratic errors are independent over
    time, with a larger spread from 2020 on (a reorganisation), so the
    heteroskedasticity test should reject and the level-error serial test should not.
    """
    rand = random.Random(seed)
    years = list(range(2015, 2025))
    rows = []
    for b in range(1, 37):
        base_caseload = rand.uniform(2.0, 9.0)            # thousand cases a year
        a_i = 4.0 * (base_caseload - 5.5) + rand.gauss(0.0, 4.0)
        online = rand.uniform(5.0, 25.0)                   # percent filed online
        online_step = rand.uniform(2.0, 6.0)
        drift = 0.0
        for t, year in enumerate(years):
            drift += rand.gauss(0.0, 0.5)                  # lasting shifts in demand
            caseload = max(0.5, base_caseload + 0.1 * t + drift + rand.gauss(0.0, 0.8))
            if t > 0:
                online = min(95.0, online + online_step + rand.gauss(0.0, 2.5))
            g_t = 1.2 * t + (4.0 if year >= 2020 else 0.0)
            sd = 2.0 if year < 2020 else 3.5
            cost = (80.0 + a_i + g_t - 2.0 * caseload - 0.40 * online
                    + rand.gauss(0.0, sd))
            rows.append((f"Branch {b:02d}", year, round(cost, 2), round(caseload, 3),
                         round(online, 1)))
    return rows


def clinic_panel(seed):
    """Clinics of the (invented) Community Health Cooperative, by quarter.

    wait_days = 20 + a_i + g_q - 0.90 nurses_per_10k - 0.25 evening_hours + u_iq,
    u_iq = 0.6 u_i,q-1 + e_iq (serially correlated level errors), a_i independent of
    the regressors (random effects consistent: Hausman should not reject).
    Four clinics open in quarter 5 (unbalanced) and two lose one quarter's records
    (gaps): the differences and lags are blank across those gaps.
    """
    rand = random.Random(seed)
    quarters = list(range(1, 17))
    late_openers = {21, 22, 23, 24}
    lost_quarter = {5: 9, 14: 12}   # clinic -> quarter whose records were lost
    rows = []
    for c in range(1, 25):
        a_i = rand.gauss(0.0, 3.0)
        nurses = rand.uniform(6.0, 14.0)                  # nurses per 10,000 patients
        evening = rand.choice([0.0, 4.0, 8.0, 12.0])      # hours open after 6 pm a week
        u = rand.gauss(0.0, 1.5 / math.sqrt(1 - 0.36))
        for q in quarters:
            if q > 1:
                nurses = max(2.0, nurses + rand.gauss(0.0, 0.7))
                if rand.random() < 0.3:
                    evening = min(20.0, max(0.0, evening + rand.choice([-4.0, 4.0])))
                u = 0.6 * u + rand.gauss(0.0, 1.5)
            g_q = 0.3 * q + (1.5 if q % 4 == 1 else 0.0)   # winter quarters are busier
            wait = 20.0 + a_i + g_q - 0.90 * nurses - 0.25 * evening + u
            if c in late_openers and q < 5:
                continue
            if lost_quarter.get(c) == q:
                continue
            year, qq = 2021 + (q - 1) // 4, (q - 1) % 4 + 1
            rows.append((f"Clinic {c:02d}", q, f"{year} Q{qq}", round(wait, 2),
                         round(nurses, 2), evening))
    return rows


def office_pilot_panel(seed):
    """Few clusters: the 8 regional offices of the (invented) Regional Services Agency,
    by quarter (2021 Q1 to 2024 Q4).

    processing_days = 30 + a_i + 0.0 training_hours + 0.5 backlog + u_iq, with
    u_iq = 0.85 u_i,q-1 + e_iq: the errors of an office persist from quarter to quarter
    and training hours drift slowly within an office, so the residuals of an office
    are strongly correlated and only 8 clusters carry the information. Training has NO
    effect in the generator: a test that rejects it is a false alarm.
    """
    rand = random.Random(seed)
    rows = []
    for o in range(1, 9):
        a_i = rand.gauss(0.0, 4.0)
        training = rand.uniform(4.0, 16.0)                # hours per staff member a quarter
        backlog = rand.uniform(10.0, 30.0)                # open cases per staff member
        u = rand.gauss(0.0, 2.0)
        for q in range(1, 17):
            if q > 1:
                training = max(0.0, training + rand.gauss(0.15, 1.0))
                backlog = max(2.0, backlog + rand.gauss(0.0, 2.0))
                u = 0.85 * u + rand.gauss(0.0, 1.0)
            days = 30.0 + a_i + 0.0 * training + 0.5 * backlog + u
            rows.append((f"Office {o}", q, round(days, 2), round(training, 2), round(backlog, 2)))
    return rows


SCENARIOS = {
    "branch-service-costs": {
        "seed": 20240611,
        "title": "Branch service costs: caseload and online filing",
        "organisation": "Regional Services Agency (invented)",
        "story": [
            "The Regional Services Agency is an invented public body. Its 36 "
            "service branches handle applications from residents; each year every branch "
            "reports its cost per case handled, its caseload and the share of cases filed "
            "online.",
            "Question: how do a branch's caseload (a cost driver) and the share of online "
            "filing (a policy the agency promotes) move its cost per case, once each "
            "branch's own fixed traits - rent, local wages, building layout - are removed?",
            "The data were made by sample-sheets/generate.py with a fixed seed and the "
            "true parameters shown below, so the analysis can be checked against them.",
        ],
        "unit": "branch", "period": "year", "outcome": "cost_per_case",
        "regressors": ["caseload", "online_share"],
        "regressor_words": {
            "caseload": ("one more thousand cases a year", "in cost per case"),
            "online_share": ("one percentage point more cases filed online",
                             "in cost per case"),
        },
        "columns": ["branch", "year", "cost_per_case", "caseload", "online_share"],
        "units_of_measure": ["branch code", "calendar year", "currency units per case",
                             "thousand cases a year", "percent of cases filed online"],
        "true": {"caseload": -2.0, "online_share": -0.40},
        "make": branch_panel,
        "few_clusters": {"seed": 8121, "make": office_pilot_panel,
                         "true": {"training_hours": 0.0, "backlog": 0.5}},
    },
    "clinic-waiting-times": {
        "seed": 7304,
        "title": "Clinic waiting times: nurse staffing and evening hours",
        "organisation": "Community Health Cooperative (invented)",
        "story": [
            "The Community Health Cooperative is an invented network of 24 "
            "clinics. Each quarter from 2021 Q1 to 2024 Q4 every clinic reports the "
            "average number of days a patient waits for a routine appointment, its nurse "
            "staffing per 10,000 registered patients and its weekly opening hours after "
            "6 pm.",
            "Four clinics opened in 2022 Q1 and two clinics lost one quarter of records in "
            "a system change, so the panel is unbalanced and has gaps: differences and "
            "lags are taken only between adjacent quarters of the same clinic.",
            "Question: how much do more nurses and longer evening hours shorten waiting "
            "times, net of each clinic's fixed traits (its patients, building, location)?",
            "The data were made by sample-sheets/generate.py with a fixed seed and the "
            "true parameters shown below, so the analysis can be checked against them.",
        ],
        "unit": "clinic", "period": "quarter", "outcome": "wait_days",
        "regressors": ["nurses_per_10k", "evening_hours"],
        "regressor_words": {
            "nurses_per_10k": ("one more nurse per 10,000 patients", "in waiting days"),
            "evening_hours": ("one more evening opening hour a week", "in waiting days"),
        },
        "columns": ["clinic", "quarter", "quarter_label", "wait_days", "nurses_per_10k",
                    "evening_hours"],
        "units_of_measure": ["clinic code", "quarter number (1 = 2021 Q1)",
                             "calendar quarter", "average days to a routine appointment",
                             "nurses per 10,000 registered patients",
                             "hours open after 6 pm per week"],
        "true": {"nurses_per_10k": -0.90, "evening_hours": -0.25},
        "make": clinic_panel,
    },
}


# ======================================================= a small flat-ODF writer

def col_letters(c):
    s = ""
    c += 1
    while c:
        c, r = divmod(c - 1, 26)
        s = chr(65 + r) + s
    return s


def addr(col, row, sheet=None, absolute=False):
    """ODF cell address inside a formula, zero-based col/row: [.B3] or [$Data.B3]."""
    d = "$" if absolute else ""
    a = f"{d}{col_letters(col)}{d}{row + 1}"
    return f"[.{a}]" if sheet is None else f"[${sheet}.{a}]"


def rng(sheet, col, row, ncols, nrows):
    """A range reference for formulas: [$Data.C1:.C361]."""
    a = f"{col_letters(col)}{row + 1}"
    b = f"{col_letters(col + ncols - 1)}{row + nrows}"
    return f"[${sheet}.{a}:.{b}]" if sheet else f"[.{a}:.{b}]"


def plain_range(sheet, col, row, ncols, nrows):
    """A range address outside formulas (charts, named ranges): Data.C1:Data.C361."""
    return (f"{sheet}.{col_letters(col)}{row + 1}:"
            f"{sheet}.{col_letters(col + ncols - 1)}{row + nrows}")


def abs_range(sheet, col, row, ncols, nrows):
    return (f"${sheet}.${col_letters(col)}${row + 1}:"
            f".${col_letters(col + ncols - 1)}${row + nrows}")


class Sheet:
    def __init__(self, name, widths, page="portrait"):
        self.name = name
        self.page = page            # master page: "portrait" or "landscape"
        self.widths = widths        # column widths in cm, by column
        self.cells = {}             # (row, col) -> xml of the cell
        self.frames = []            # draw:frame xml anchored in the sheet
        self.page_breaks = set()    # rows that start a new printed page

    def text(self, row, col, value, style=None):
        st = f' table:style-name="{style}"' if style else ""
        self.cells[(row, col)] = (f'<table:table-cell{st} office:value-type="string">'
                                  f'<text:p>{escape(value)}</text:p></table:table-cell>')

    def styled_blank(self, row, col, style):
        """An empty cell with a style (a text cell, even empty, would stop the text of
        the cell to its left from running over it)."""
        self.cells[(row, col)] = f'<table:table-cell table:style-name="{style}"/>'

    def number(self, row, col, value, style=None):
        st = f' table:style-name="{style}"' if style else ""
        self.cells[(row, col)] = (f'<table:table-cell{st} office:value-type="float" '
                                  f'office:value="{value!r}"><text:p>{value!r}</text:p>'
                                  f'</table:table-cell>')

    def formula(self, row, col, formula, style=None, rows=1, cols=1):
        """A formula (ODF syntax after 'of:='); rows x cols > 1 makes it an array."""
        st = f' table:style-name="{style}"' if style else ""
        span = ""
        if rows > 1 or cols > 1:
            span = (f' table:number-matrix-columns-spanned="{cols}"'
                    f' table:number-matrix-rows-spanned="{rows}"')
        self.cells[(row, col)] = (f'<table:table-cell{st}{span} '
                                  f'table:formula={quoteattr("of:=" + formula)}/>')
        for r in range(row, row + rows):
            for c in range(col, col + cols):
                if (r, c) != (row, col) and style:
                    self.cells.setdefault((r, c),
                                          f'<table:table-cell table:style-name="{style}"/>')

    def xml(self, col_styles):
        out = [f'<table:table table:name={quoteattr(self.name)} '
               f'table:style-name="ta_{self.page}">']
        if self.frames:
            out.append("<table:shapes>" + "".join(self.frames) + "</table:shapes>")
        for c, w in enumerate(self.widths):
            out.append(f'<table:table-column table:style-name="{col_styles[w]}"/>')
        last_row = max(r for r, _ in self.cells) if self.cells else 0
        r = 0
        while r <= last_row:
            cols = sorted(c for rr, c in self.cells if rr == r)
            if not cols:
                # a run of empty rows
                run = 1
                while r + run <= last_row and not any(rr == r + run for rr, _ in self.cells):
                    run += 1
                out.append(f'<table:table-row table:number-rows-repeated="{run}">'
                           '<table:table-cell/></table:table-row>')
                r += run
                continue
            row_xml = ['<table:table-row table:style-name="ro_break">'
                       if r in self.page_breaks else "<table:table-row>"]
            c = 0
            for cc in cols:
                if cc > c:
                    gap = cc - c
                    row_xml.append(f'<table:table-cell table:number-columns-repeated="{gap}"/>'
                                   if gap > 1 else "<table:table-cell/>")
                row_xml.append(self.cells[(r, cc)])
                c = cc + 1
            row_xml.append("</table:table-row>")
            out.append("".join(row_xml))
            r += 1
        out.append("</table:table>")
        return "\n".join(out)


NS = {
    "office": "urn:oasis:names:tc:opendocument:xmlns:office:1.0",
    "style": "urn:oasis:names:tc:opendocument:xmlns:style:1.0",
    "text": "urn:oasis:names:tc:opendocument:xmlns:text:1.0",
    "table": "urn:oasis:names:tc:opendocument:xmlns:table:1.0",
    "draw": "urn:oasis:names:tc:opendocument:xmlns:drawing:1.0",
    "fo": "urn:oasis:names:tc:opendocument:xmlns:xsl-fo-compatible:1.0",
    "xlink": "http://www.w3.org/1999/xlink",
    "dc": "http://purl.org/dc/elements/1.1/",
    "meta": "urn:oasis:names:tc:opendocument:xmlns:meta:1.0",
    "number": "urn:oasis:names:tc:opendocument:xmlns:datastyle:1.0",
    "svg": "urn:oasis:names:tc:opendocument:xmlns:svg-compatible:1.0",
    "chart": "urn:oasis:names:tc:opendocument:xmlns:chart:1.0",
    "of": "urn:oasis:names:tc:opendocument:xmlns:of:1.2",
    "loext": "urn:org:documentfoundation:names:experimental:office:xmlns:loext:1.0",
    "chartooo": "http://openoffice.org/2010/chart",
}
NS_DECL = " ".join(f'xmlns:{k}="{v}"' for k, v in NS.items())

CELL_STYLES = """
<number:number-style style:name="N3"><number:number number:decimal-places="3" number:min-decimal-places="3" number:min-integer-digits="1"/></number:number-style>
<number:number-style style:name="N4"><number:number number:decimal-places="4" number:min-decimal-places="4" number:min-integer-digits="1"/></number:number-style>
<style:style style:name="title" style:family="table-cell"><style:text-properties fo:font-size="15pt" fo:font-weight="bold"/></style:style>
<style:style style:name="head" style:family="table-cell"><style:table-cell-properties fo:background-color="#dde6ee"/><style:text-properties fo:font-weight="bold"/></style:style>
<style:style style:name="headwrap" style:family="table-cell"><style:table-cell-properties fo:background-color="#dde6ee" fo:wrap-option="wrap"/><style:text-properties fo:font-weight="bold"/></style:style>
<style:style style:name="section" style:family="table-cell"><style:text-properties fo:font-size="12pt" fo:font-weight="bold" fo:color="#1f4e79"/></style:style>
<style:style style:name="note" style:family="table-cell"><style:text-properties fo:font-style="italic" fo:color="#555555"/></style:style>
<style:style style:name="wrap" style:family="table-cell"><style:table-cell-properties fo:wrap-option="wrap" style:vertical-align="top"/></style:style>
<style:style style:name="ro_break" style:family="table-row"><style:table-row-properties fo:break-before="page" style:use-optimal-row-height="true"/></style:style>
<style:style style:name="num3" style:family="table-cell" style:data-style-name="N3"/>
<style:style style:name="num4" style:family="table-cell" style:data-style-name="N4"/>
<style:style style:name="result" style:family="table-cell" style:data-style-name="N4"><style:table-cell-properties fo:background-color="#f4f8ec"/></style:style>
<style:style style:name="truth" style:family="table-cell" style:data-style-name="N3"><style:table-cell-properties fo:background-color="#fdf1dc"/><style:text-properties fo:font-weight="bold"/></style:style>
"""

# Printing (and the demo's PDF): the Analysis sheet on landscape pages, every sheet
# scaled to one page wide.
PAGE_STYLES = """
<style:page-layout style:name="pl_portrait"><style:page-layout-properties fo:page-width="21cm" fo:page-height="29.7cm" style:print-orientation="portrait" style:scale-to-X="1" fo:margin-top="1.2cm" fo:margin-bottom="1.2cm" fo:margin-left="1.5cm" fo:margin-right="1.5cm"/></style:page-layout>
<style:page-layout style:name="pl_landscape"><style:page-layout-properties fo:page-width="29.7cm" fo:page-height="21cm" style:print-orientation="landscape" style:scale-to-X="1" fo:margin-top="1.2cm" fo:margin-bottom="1.2cm" fo:margin-left="1.2cm" fo:margin-right="1.2cm"/></style:page-layout>
<style:style style:name="ta_portrait" style:family="table" style:master-page-name="Portrait"><style:table-properties table:display="true"/></style:style>
<style:style style:name="ta_landscape" style:family="table" style:master-page-name="Landscape"><style:table-properties table:display="true"/></style:style>
"""
MASTER_PAGES = ('<style:master-page style:name="Portrait" style:page-layout-name="pl_portrait"/>'
                '<style:master-page style:name="Landscape" style:page-layout-name="pl_landscape"/>')


def chart_frame(name, x_cm, y_cm, w_cm, h_cm, categories, series, title, y_title, y_range):
    """A column chart embedded in the sheet. series: (label_cell, values, err_lo, err_hi)
    plain range addresses; err ranges hold distances below/above the value (None for
    no error bars)."""
    styles = ['<style:style style:name="c_chart" style:family="chart">'
              '<style:graphic-properties draw:stroke="none"/></style:style>',
              '<style:style style:name="c_title" style:family="chart">'
              '<style:text-properties fo:font-size="12pt" fo:font-weight="bold"/></style:style>',
              '<style:style style:name="c_plot" style:family="chart">'
              '<style:chart-properties chart:auto-position="true" chart:auto-size="true"/>'
              '</style:style>',
              '<style:style style:name="c_axis" style:family="chart">'
              '<style:chart-properties chart:display-label="true"/>'
              '<style:text-properties fo:font-size="9pt"/></style:style>',
              '<style:style style:name="c_yaxis" style:family="chart">'
              '<style:chart-properties chart:display-label="true" '
              f'chart:minimum="{y_range[0]}" chart:maximum="{y_range[1]}"/>'
              '<style:text-properties fo:font-size="9pt"/></style:style>',
              '<style:style style:name="c_grid" style:family="chart">'
              '<style:graphic-properties svg:stroke-color="#b3b3b3"/></style:style>',
              '<style:style style:name="c_legend" style:family="chart">'
              '<style:text-properties fo:font-size="9pt"/></style:style>']
    colours = ["#1f4e79", "#70ad47", "#c55a11", "#7f7f7f"]
    series_xml = []
    all_ranges = [categories]
    for i, (label, values, lo, hi) in enumerate(series):
        sname = f"c_s{i}"
        props = f'<style:graphic-properties draw:fill-color="{colours[i % 4]}" draw:stroke="none"/>'
        err = ""
        if lo is not None:
            cp = (f'<style:chart-properties chart:error-category="cell-range" '
                  f'chart:error-upper-range="{hi}" chart:error-lower-range="{lo}"/>')
            styles.append(f'<style:style style:name="{sname}" style:family="chart">{cp}{props}'
                          '</style:style>')
            styles.append(f'<style:style style:name="{sname}e" style:family="chart">'
                          '<style:chart-properties chart:error-upper-indicator="true" '
                          'chart:error-lower-indicator="true" chart:error-category="cell-range" '
                          f'chart:error-upper-range="{hi}" chart:error-lower-range="{lo}"/>'
                          '<style:graphic-properties draw:stroke="solid" svg:stroke-color="#000000" '
                          'svg:stroke-width="0.03cm"/></style:style>')
            err = f'<chart:error-indicator chart:style-name="{sname}e" chart:dimension="y"/>'
            all_ranges += [lo, hi]
        else:
            styles.append(f'<style:style style:name="{sname}" style:family="chart">{props}'
                          '</style:style>')
        all_ranges += [label, values]
        series_xml.append(f'<chart:series chart:style-name="{sname}" '
                          f'chart:values-cell-range-address="{values}" '
                          f'chart:label-cell-address="{label}" chart:class="chart:bar">'
                          f'{err}</chart:series>')
    chart_doc = (
        f'<office:document {NS_DECL} office:version="1.3" '
        'office:mimetype="application/vnd.oasis.opendocument.chart">'
        f'<office:automatic-styles>{"".join(styles)}</office:automatic-styles>'
        '<office:body><office:chart>'
        f'<chart:chart svg:width="{w_cm}cm" svg:height="{h_cm}cm" chart:class="chart:bar" '
        'chart:style-name="c_chart">'
        f'<chart:title chart:style-name="c_title"><text:p>{escape(title)}</text:p></chart:title>'
        '<chart:legend chart:legend-position="bottom" chart:style-name="c_legend"/>'
        '<chart:plot-area chart:style-name="c_plot" chart:data-source-has-labels="both">'
        '<chart:axis chart:dimension="x" chart:name="primary-x" chart:style-name="c_axis">'
        f'<chart:categories table:cell-range-address="{categories}"/></chart:axis>'
        '<chart:axis chart:dimension="y" chart:name="primary-y" chart:style-name="c_yaxis">'
        f'<chart:title><text:p>{escape(y_title)}</text:p></chart:title>'
        '<chart:grid chart:style-name="c_grid" chart:class="major"/></chart:axis>'
        + "".join(series_xml) +
        '</chart:plot-area></chart:chart></office:chart></office:body></office:document>')
    return (f'<draw:frame draw:name={quoteattr(name)} svg:width="{w_cm}cm" '
            f'svg:height="{h_cm}cm" svg:x="{x_cm}cm" svg:y="{y_cm}cm" draw:z-index="0">'
            f'<draw:object draw:notify-on-update-of-ranges="{" ".join(all_ranges)}">'
            f'{chart_doc}</draw:object></draw:frame>')


def document(title, sheets, named_ranges):
    widths = sorted({w for s in sheets for w in s.widths})
    col_styles = {w: f"co{i}" for i, w in enumerate(widths)}
    col_xml = "".join(f'<style:style style:name="{col_styles[w]}" style:family="table-column">'
                      f'<style:table-column-properties style:column-width="{w}cm"/></style:style>'
                      for w in widths)
    names = "".join(f'<table:named-range table:name="{n}" table:base-cell-address="{base}" '
                    f'table:cell-range-address="{r}"/>' for n, base, r in named_ranges)
    body = "\n".join(s.xml(col_styles) for s in sheets)
    return (f'<?xml version="1.0" encoding="UTF-8"?>\n'
            f'<office:document {NS_DECL} office:version="1.3" '
            'office:mimetype="application/vnd.oasis.opendocument.spreadsheet">\n'
            '<office:meta><meta:generator>weft sample-sheets/generate.py</meta:generator>'
            f'<dc:title>{escape(title)}</dc:title></office:meta>\n'
            f'<office:automatic-styles>{col_xml}{CELL_STYLES}{PAGE_STYLES}'
            '</office:automatic-styles>\n'
            f'<office:master-styles>{MASTER_PAGES}</office:master-styles>\n'
            '<office:body><office:spreadsheet>\n'
            f'{body}\n'
            f'<table:named-expressions>{names}</table:named-expressions>\n'
            '</office:spreadsheet></office:body></office:document>\n')


# ================================================================= the workbook

def overview_start(sc, where):
    """The Overview sheet's title, scenario and "what is where" rows; returns the sheet
    and its next free row."""
    ov = Sheet("Overview", [4.0, 13.5])
    ov.text(0, 0, sc["title"], "title")
    ov.text(1, 0, sc["organisation"], "note")
    ov.text(3, 0, "Scenario", "section")
    for i, p in enumerate(sc["story"]):
        ov.text(3 + i, 1, p, "wrap")
    r = 3 + len(sc["story"]) + 1
    ov.text(r, 0, "What is where", "section")
    for i, (a, b) in enumerate(where):
        ov.text(r + 1 + i, 0, a, "head")
        ov.text(r + 1 + i, 1, b, "wrap")
    return ov, r + 1 + len(where) + 1


def overview_end(ov, r, lines, cautions, named):
    """The reading (sentences written by formulas, named range "reading"), the cautions
    and the versions line, from row r on."""
    ov.text(r, 0, "Reading the results", "section")
    for i, f in enumerate(lines):
        ov.text(r + 1 + i, 0, "-", None)
        if f.startswith("="):
            ov.formula(r + 1 + i, 1, f[1:], "wrap")
        else:
            ov.text(r + 1 + i, 1, f, "wrap")
    named.append(("reading", "$Overview.$A$1", abs_range("Overview", 1, r + 1, 1, len(lines))))
    r = r + 1 + len(lines) + 1
    ov.text(r, 0, "Cautions", "section")
    for i, t in enumerate(cautions):
        ov.text(r + 1 + i, 0, "-", None)
        ov.text(r + 1 + i, 1, t, "wrap")
    ov.text(r + 1 + len(cautions) + 1, 0,
            "Needs the weft add-in for LibreOffice Calc (README.md).", "note")
    ov.formula(r + 1 + len(cautions) + 2, 0, ADDIN + "VERSION()", None)


def workbook(key, sc):
    rows = sc["make"](sc["seed"])
    cols = sc["columns"]
    n_rows = len(rows) + 1                    # with the header row
    c_unit, c_period = cols.index(sc["unit"]), cols.index(sc["period"])
    c_y = cols.index(sc["outcome"])
    c_x = cols.index(sc["regressors"][0])
    k = len(sc["regressors"])
    periods = sorted({r[c_period] for r in rows})
    units = sorted({r[c_unit] for r in rows})

    D = "Data"
    ref_y = rng(D, c_y, 0, 1, n_rows)
    ref_x = rng(D, c_x, 0, k, n_rows)
    ref_u = rng(D, c_unit, 0, 1, n_rows)
    ref_t = rng(D, c_period, 0, 1, n_rows)
    panel_args = f"{ref_y};{ref_x};{ref_u};{ref_t}"
    fd_model = '"fd periods cluster"'

    def call(method, *args):
        return ADDIN + method + "(" + ";".join(args) + ")"

    named = []

    # ---------------------------------------------------------------- Data sheet
    data = Sheet(D, [2.4] * len(cols) + [0.4] + [3.4] * (k + 2))
    for c, name in enumerate(cols):
        data.text(0, c, name, "head")
    for r, row in enumerate(rows, start=1):
        for c, v in enumerate(row):
            if isinstance(v, str):
                data.text(r, c, v)
            else:
                data.number(r, c, v)
    # Helper columns: each difference and the outcome's lag, computed in the sheet.
    h0 = len(cols) + 1
    for j, name in enumerate([sc["outcome"]] + sc["regressors"]):
        c = cols.index(name)
        data.formula(0, h0 + j, call("DIFF", rng(None, c, 0, 1, n_rows),
                                     rng(None, c_unit, 0, 1, n_rows),
                                     rng(None, c_period, 0, 1, n_rows)),
                     "num3", rows=n_rows, cols=1)
    data.formula(0, h0 + k + 1, call("LAG", rng(None, c_y, 0, 1, n_rows),
                                     rng(None, c_unit, 0, 1, n_rows),
                                     rng(None, c_period, 0, 1, n_rows), "1"),
                 "num3", rows=n_rows, cols=1)

    # ------------------------------------------------------------ Analysis sheet
    A = "Analysis"
    an = Sheet(A, [5.6, 2.6, 0.5, 4.2, 2.4, 2.4, 2.4, 2.4, 2.4, 2.4], page="landscape")
    an.text(0, 0, sc["title"], "title")
    an.text(1, 0, sc["organisation"] + ". Every number on this sheet is a formula: "
            "click a cell to see it.", "note")

    # Panel structure (11 rows x 2)
    an.text(3, 0, "1. Panel structure", "section")
    an.text(4, 0, f"=WEFT.PANEL({sc['unit']}; {sc['period']})", "note")
    an.formula(5, 0, call("PANEL", ref_u, ref_t), "num3", rows=11, cols=2)
    named.append(("panel_structure", f"${A}.$A$1", abs_range(A, 0, 5, 2, 11)))

    # First differences with period effects, cluster SEs by unit
    n_fd_terms = 1 + k + (len(periods) - 2)
    fd_rows = 1 + n_fd_terms
    an.text(3, 3, "2. First differences, period effects, standard errors clustered by "
            f"{sc['unit']}", "section")
    an.text(4, 3, f'=WEFT.ESTIMATES(...; "fd periods cluster")', "note")
    an.formula(5, 3, call("ESTIMATES", panel_args, fd_model), "num4", rows=fd_rows, cols=7)
    named.append(("fd_estimates", f"${A}.$A$1", abs_range(A, 3, 5, 7, fd_rows)))
    fd_terms_col = (3, 5)          # (col, first row) of the term names, header included

    r = 5 + fd_rows + 1
    # The same model fitted once in a cell of its own (=WEFT.FIT); the numbers below
    # and sections 3 to 5 take that cell instead of the four ranges.
    fit = addr(3, r + 3)
    an.formula(r + 3, 3, call("FIT", panel_args, fd_model), "note")
    an.text(r + 4, 3, 'Above: =WEFT.FIT(...; "fd periods cluster"); the three numbers and '
            "sections 3-5 take this cell", "note")
    an.text(r, 3, "Observations used (differences)", None)
    an.formula(r, 5, call("FITVALUE", fit, '"n"'), "num3")
    an.text(r + 1, 3, f"Clusters ({sc['unit']}s)", None)
    an.formula(r + 1, 5, call("FITVALUE", fit, '"clusters"'), "num3")
    an.text(r + 2, 3, "R-squared (differenced equation)", None)
    an.formula(r + 2, 5, call("FITVALUE", fit, '"r2"'), "num4")

    # Joint tests (7 x 2 each)
    r = 18 if fd_rows <= 12 else 5 + fd_rows + 6
    r = max(r, 5 + fd_rows + 6)
    joint_row = r
    an.text(r, 0, "3. Joint tests under the same model", "section")
    slope_list = ", ".join(sc["regressors"])
    an.text(r + 1, 0, f"Both slopes are zero: {slope_list}", "note")
    an.formula(r + 2, 0, call("FITJOINT", fit, f'"{slope_list}"'), "num4", rows=7, cols=2)
    named.append(("joint_slopes", f"${A}.$A$1", abs_range(A, 0, r + 2, 2, 7)))
    # The period terms, named by the estimates table itself (a range of names).
    first_period_row = 5 + 1 + 1 + k
    n_period_terms = len(periods) - 2
    an.text(r + 1, 3, "All period effects are zero (terms taken from the table above)",
            "note")
    an.formula(r + 2, 3, call("FITJOINT", fit, rng(None, 3, first_period_row, 1, n_period_terms)),
               "num4", rows=7, cols=2)
    named.append(("joint_periods", f"${A}.$A$1", abs_range(A, 3, r + 2, 2, 7)))

    # Heteroskedasticity (7 x 2) and serial correlation (12 x 2)
    r = joint_row + 11
    hetero_row = r
    an.text(r, 0, "4. Heteroskedasticity of the residuals (Koenker)", "section")
    an.formula(r + 1, 0, call("FITHETERO", fit, '"koenker"'), "num4", rows=7, cols=2)
    named.append(("hetero", f"${A}.$A$1", abs_range(A, 0, r + 1, 2, 7)))
    an.text(r, 3, "5. Serial correlation within units", "section")
    an.formula(r + 1, 3, call("FITSERIAL", fit), "num4", rows=12, cols=2)
    named.append(("serial", f"${A}.$A$1", abs_range(A, 3, r + 1, 2, 12)))

    # Within versus random side by side with the Hausman comparison (12 x 2)
    r = hetero_row + 15
    wr_row = r
    n_within = 1 + k + (len(periods) - 1)
    n_random = 1 + 1 + k + (len(periods) - 1)
    an.text(r, 0, "6. Within (fixed effects) versus random effects, both with period "
            "effects", "section")
    an.text(r + 1, 3, f'=WEFT.ESTIMATES(...; "within periods cluster")', "note")
    an.formula(r + 2, 3, call("ESTIMATES", panel_args, '"within periods cluster"'), "num4",
               rows=n_within, cols=7)
    named.append(("within_estimates", f"${A}.$A$1", abs_range(A, 3, r + 2, 7, n_within)))
    r2 = r + 2 + n_within + 1
    an.text(r2, 3, f'=WEFT.ESTIMATES(...; "random periods cluster")', "note")
    an.formula(r2 + 1, 3, call("ESTIMATES", panel_args, '"random periods cluster"'), "num4",
               rows=n_random, cols=7)
    named.append(("random_estimates", f"${A}.$A$1", abs_range(A, 3, r2 + 1, 7, n_random)))
    haus_row = r
    an.text(haus_row + 1, 0, 'Hausman comparison: =WEFT.HAUSMAN(...; "periods")', "note")
    an.formula(haus_row + 2, 0, call("HAUSMAN", panel_args, '"periods"'), "num4",
               rows=12, cols=2)
    named.append(("hausman", f"${A}.$A$1", abs_range(A, 0, haus_row + 2, 2, 12)))
    # How closely each fit's slope prediction follows the outcome, read three ways.
    fm = haus_row + 15
    an.text(fm, 0, "Squared correlation of outcome and slope prediction "
            '(=WEFT.VALUE, e.g. "corr2-rows")', "note")
    fit_measures = [("all rows", "corr2-rows"), ("unit means", "corr2-means"),
                    ("deviations from unit means", "corr2-deviations")]
    for j, estimator in enumerate(("within", "random")):
        for i, (words, what) in enumerate(fit_measures):
            row = fm + 1 + 3 * j + i
            an.text(row, 0, f"{estimator}: {words}", "wrap")
            an.formula(row, 1, call("VALUE", panel_args, f'"{estimator} periods cluster"',
                                    f'"{what}"'), "num4")
    named.append(("fit_measures", f"${A}.$A$1", abs_range(A, 0, fm + 1, 2, 6)))

    # Chart data: for each fit its slope estimates and the distances from each
    # estimate down to its interval's low end and up to its high end (a chart's error
    # bars are distances); one row per fit, so each fit is one series of the chart.
    cd = max(r2 + 1 + n_random, fm + 1 + 6) + 2
    an.text(cd, 0, "7. Slopes and 95% intervals (the chart's data)", "section")
    an.page_breaks.add(cd)      # the chart and its data on one printed page
    an.text(cd + 1, 0, "estimates; distances to the interval ends", "note")
    an.text(cd + 1, 4, "estimate", "head")
    an.text(cd + 1, 4 + k, "down to the interval's start", "head")
    an.text(cd + 1, 4 + 2 * k, "up to the interval's end", "head")
    an.text(cd + 2, 3, "fit", "head")
    for i, term in enumerate(sc["regressors"]):
        # The term's name comes from the estimates table itself, so the label always
        # matches the numbers below it.
        an.formula(cd + 2, 4 + i, addr(3, 5 + 2 + i), "headwrap")
        an.formula(cd + 2, 4 + k + i, addr(3, 5 + 2 + i), "headwrap")
        an.formula(cd + 2, 4 + 2 * k + i, addr(3, 5 + 2 + i), "headwrap")
    for c in range(1, k):
        for g in range(3):
            an.styled_blank(cd + 1, 4 + g * k + c, "head")
    cd += 1
    # (label, column of the term names, row of the first regressor)
    fits = [("first differences", 3, 5 + 2),
            ("within", 3, wr_row + 2 + 1),
            ("random", 3, r2 + 1 + 2)]
    series = []
    for j, (label, tc, tr) in enumerate(fits):
        row = cd + 2 + j
        an.text(row, 3, label)
        for i in range(k):
            est, low, high = addr(tc + 1, tr + i), addr(tc + 5, tr + i), addr(tc + 6, tr + i)
            an.formula(row, 4 + i, est, "num4")
            an.formula(row, 4 + k + i, f"{est}-{low}", "num4")
            an.formula(row, 4 + 2 * k + i, f"{high}-{est}", "num4")
        series.append((plain_range(A, 3, row, 1, 1), plain_range(A, 4, row, k, 1),
                       plain_range(A, 4 + k, row, k, 1), plain_range(A, 4 + 2 * k, row, k, 1)))
    true_row = cd + 2 + len(fits)
    an.text(true_row, 3, "true value")
    for i, term in enumerate(sc["regressors"]):
        an.number(true_row, 4 + i, sc["true"][term], "truth")
    series.append((plain_range(A, 3, true_row, 1, 1), plain_range(A, 4, true_row, k, 1),
                   None, None))
    cat = plain_range(A, 4, cd + 1, k, 1)
    row_height = 0.452   # cm, Calc's default row height
    # A fixed value axis wide enough for the intervals (the automatic one leaves out
    # error bars); tests/sample checks that every interval end lies inside it.
    lo_t, hi_t = min(0.0, *sc["true"].values()), max(0.0, *sc["true"].values())
    span = max(abs(lo_t), abs(hi_t))
    y_range = (math.floor((lo_t - 0.6 * span) * 2) / 2, math.ceil((hi_t + 0.2 * span) * 2) / 2)
    an.frames.append(chart_frame(
        "estimates chart", 0.3, row_height * (true_row + 2) + 0.9, 17.0, 9.0, cat, series,
        "Slope estimates with 95% intervals, and the true values",
        sc["regressor_words"][sc["regressors"][0]][1].replace("in ", "change in "), y_range))

    lines = reading(sc, fd_terms_col, fd_rows, joint_row, hetero_row, haus_row)

    # ------------------------------------------------------------ Overview sheet
    where = [
        ("Data", f"{len(rows)} rows, one per {sc['unit']} and {sc['period']}; on the "
                 "right, the differences (=WEFT.DIFF) and the lagged outcome "
                 "(=WEFT.LAG) as visible helper columns."),
        ("Analysis 1", "panel structure (=WEFT.PANEL)"),
        ("Analysis 2", "first differences with period effects and standard errors "
                       f"clustered by {sc['unit']} (=WEFT.ESTIMATES, model \"fd periods "
                       "cluster\"); the same model fitted once in a cell of its own "
                       "(=WEFT.FIT), which the numbers below it and sections 3-5 take"),
        ("Analysis 3", "joint tests (=WEFT.FIT.JOINT)"),
        ("Analysis 4-5", "heteroskedasticity (=WEFT.FIT.HETERO) and serial correlation "
                         "(=WEFT.FIT.SERIAL) of the first-difference residuals"),
        ("Analysis 6", "within and random effects side by side, Hausman comparison "
                       "(=WEFT.HAUSMAN), and how closely each fit's slope prediction follows "
                       "the outcome (=WEFT.VALUE)"),
        ("Analysis 7-8", "chart of the slopes with their 95% intervals; the reading"),
    ]
    if "few_clusters" in sc:
        where.append(("Few clusters", "a separate panel of 8 offices: cluster (CR1), cr2 and "
                                      "the wild cluster bootstrap side by side (=WEFT.BOOTSTRAP), "
                                      "and which to trust"))
    ov, r = overview_start(sc, where)
    ov.text(r, 0, "Columns of the data", "section")
    for i, (c, m) in enumerate(zip(cols, sc["units_of_measure"])):
        ov.text(r + 1 + i, 0, c, "head")
        ov.text(r + 1 + i, 1, m)
    r = r + 1 + len(cols) + 1
    ov.text(r, 0, "True parameters used by the generator", "section")
    for i, term in enumerate(sc["regressors"]):
        ov.text(r + 1 + i, 0, term, "head")
        ov.number(r + 1 + i, 1, sc["true"][term], "truth")
    named.append(("true_parameters", "$Overview.$A$1", abs_range("Overview", 0, r + 1, 2, k)))
    r = r + 1 + k + 1
    # The reading, in words computed by formulas from the Analysis sheet's results
    cautions = [
        "The estimates rest on stated assumptions, above all strict exogeneity: the "
        "regressors are unrelated to the errors of every period, given the unit's fixed "
        "traits.",
        "An association in these data is not by itself proof of cause.",
        "Have results reviewed before they inform decisions, and follow your "
        "organisation's review practice.",
    ]
    overview_end(ov, r, lines, cautions, named)

    sheets = [ov, data, an]
    if "few_clusters" in sc:
        few, few_named = few_clusters_sheet(sc["few_clusters"])
        sheets.append(few)
        named += few_named
    return document(sc["title"], sheets, named)


def few_clusters_sheet(fc):
    """The sheet "Few clusters": a panel of 8 offices, its slope under three kinds of
    inference side by side (cluster CR1, cr2, the wild cluster bootstrap) and, in words
    computed by formulas, which to trust and why."""
    rows = fc["make"](fc["seed"])
    n = len(rows) + 1
    F = "Few clusters"
    fs = Sheet(F, [2.4, 1.6, 2.6, 2.6, 2.4, 0.4, 6.2, 2.6, 2.6, 2.6, 2.6, 2.6, 2.6],
               page="landscape")
    for c, name in enumerate(["office", "quarter", "processing_days", "training_hours",
                              "backlog"]):
        fs.text(0, c, name, "head")
    for r, row in enumerate(rows, start=1):
        fs.text(r, 0, row[0])
        for c in range(1, 5):
            fs.number(r, c, row[c])
    args = f"{rng(None, 2, 0, 1, n)};{rng(None, 3, 0, 2, n)};{rng(None, 0, 0, 1, n)};{rng(None, 1, 0, 1, n)}"

    def call(method, *a):
        return ADDIN + method + "(" + ";".join(a) + ")"

    G = 6
    fs.text(0, G, "Few clusters: a training pilot in 8 regional offices", "title")
    fs.text(1, G, "Regional Services Agency (invented). Data in columns A-E; every number "
                  "on the right is a formula.", "note")
    story = [
        "The agency's 8 regional offices report each quarter from 2021 Q1 to 2024 Q4 the "
        "average days to process a case, the training hours per staff member and the backlog.",
        "Question: do more training hours shorten processing, net of each office's fixed "
        "traits (within, unit effects absorbed)? Only 8 offices: 8 clusters.",
        "An office's delays persist from quarter to quarter, so its rows are not independent: "
        "the standard errors must be clustered by office, and with 8 clusters the usual "
        "cluster-robust t test is known to reject too often.",
    ]
    for i, t in enumerate(story):
        fs.text(3 + i, G, t)
    r1 = 7
    fs.text(r1, G, "1. Clustered by office (CR1), t on G - 1 = 7 df", "section")
    fs.text(r1 + 1, G, '=WEFT.ESTIMATES(...; "within cluster")', "note")
    fs.formula(r1 + 2, G, call("ESTIMATES", args, '"within cluster"'), "num4", rows=3, cols=7)
    r2 = r1 + 6
    fs.text(r2, G, "2. Bias-reduced cluster errors (cr2), Satterthwaite df per term", "section")
    fs.text(r2 + 1, G, '=WEFT.ESTIMATES(...; "within cr2")', "note")
    fs.formula(r2 + 2, G, call("ESTIMATES", args, '"within cr2"'), "num4", rows=3, cols=7)
    r3 = r2 + 6
    fs.text(r3, G, "3. Wild cluster bootstrap of training_hours (restricted, CR1 t in every "
                   "draw)", "section")
    fs.text(r3 + 1, G, '=WEFT.BOOTSTRAP(...; "within cluster"; "training_hours")', "note")
    fs.formula(r3 + 2, G, call("BOOTSTRAP", args, '"within cluster"', '"training_hours"'),
               "num4", rows=11, cols=2)
    fs.text(r3 + 1, G + 3, '... with "webb draws=9999 seed=1"', "note")
    fs.formula(r3 + 2, G + 3, call("BOOTSTRAP", args, '"within cluster"', '"training_hours"',
                                   '"webb draws=9999 seed=1"'), "num4", rows=10, cols=2)
    r4 = r3 + 15
    fs.text(r4, G, "4. Side by side: training_hours", "section")
    for c, h in enumerate(["p-value", "interval low", "interval high"]):
        fs.text(r4 + 1, G + 1 + c, h, "head")
    lines = [
        ("cluster (CR1), t on 7 df", addr(G + 4, r1 + 3), addr(G + 5, r1 + 3), addr(G + 6, r1 + 3)),
        ("cr2, Satterthwaite df", addr(G + 4, r2 + 3), addr(G + 5, r2 + 3), addr(G + 6, r2 + 3)),
        ("bootstrap, Rademacher, all 256 sign patterns", addr(G + 1, r3 + 5), addr(G + 1, r3 + 6),
         addr(G + 1, r3 + 7)),
        ("bootstrap, Webb, 9,999 draws", addr(G + 4, r3 + 5), addr(G + 4, r3 + 6), addr(G + 4, r3 + 7)),
    ]
    for i, (label, *cells) in enumerate(lines):
        fs.text(r4 + 2 + i, G, label)
        for c, ref in enumerate(cells):
            fs.formula(r4 + 2 + i, G + 1 + c, ref, "num4")
    Q = f"'{F}'"  # a sheet name with a space is quoted in range addresses
    named = [("few_clusters_comparison", f"${Q}.$A$1", abs_range(Q, G, r4 + 2, 4, 4))]
    p1, p2, p3, p4 = (addr(G + 1, r4 + 2 + i) for i in range(4))
    r5 = r4 + 7
    fs.text(r5, G, "5. Which to trust, and why", "section")
    reading = [
        "With few clusters trust the bootstrap first and cr2 next. The plain cluster t "
        "treats its standard error as if it were known with G - 1 df; with 8 offices that "
        "error is itself very uncertain and biased down, so the test rejects true nulls too "
        "often (Cameron, Gelbach and Miller 2008). cr2 corrects the bias and uses honest "
        "Satterthwaite df (Bell and McCaffrey 2002; Pustejovsky and Tipton 2018); the "
        "bootstrap imposes the null and needs no t distribution at all.",
        f'="p-values for training_hours: cluster "&TEXT({p1};"0.000")&", cr2 "&TEXT({p2};"0.000")'
        f'&", bootstrap "&TEXT({p3};"0.000")&" (Webb weights "&TEXT({p4};"0.000")&")."',
        f'=IF(AND({p1}<0.05;{p3}>=0.05);"Only the plain cluster t calls training significant: '
        f'with 8 clusters that is the test known to over-reject, so the effect is not '
        f'established.";IF(AND({p1}<0.05;{p2}<0.05;{p3}<0.05);"All three reject: the effect '
        f'holds even under the few-cluster corrections; quote the bootstrap p-value and '
        f'interval.";IF({p3}<0.05;"The bootstrap rejects while the plain cluster t does not: '
        f'quote the bootstrap, but read it with care.";"None of the tests finds an effect of '
        f'training at 5%: the data do not show one.")))',
        "With Rademacher weights and 8 clusters there are only 256 sign patterns, so p-values "
        "move in steps of 2/256; the Webb weights give finer steps and should agree closely.",
        "The generator gave training_hours no effect at all (true slope 0) and backlog a "
        "slope of 0.5, so any rejection for training is a false alarm.",
    ]
    for i, t in enumerate(reading):
        fs.text(r5 + 1 + i, G - 1, "-", None)
        if t.startswith("="):
            fs.formula(r5 + 1 + i, G, t[1:], None)
        else:
            fs.text(r5 + 1 + i, G, t)
    named.append(("few_clusters_reading", f"${Q}.$A$1", abs_range(Q, G, r5 + 1, 1, len(reading))))
    return fs, named


def reading(sc, fd_terms_col, fd_rows, joint_row, hetero_row, haus_row):
    """Sentences built by formulas from the Analysis sheet, so they always match it."""
    tc, tr = fd_terms_col

    def val(col, row):
        return addr(col, row, "Analysis")

    out = []
    for i, term in enumerate(sc["regressors"]):
        what, unit = sc["regressor_words"][term]
        row = tr + 2 + i     # header, intercept, then the regressors in order
        out.append(
            f'="First differences: {what} goes with a change of "'
            f'&TEXT({val(tc + 1, row)};"0.000")&" {unit} (95% interval "'
            f'&TEXT({val(tc + 5, row)};"0.000")&" to "&TEXT({val(tc + 6, row)};"0.000")'
            f'&"; the generator used {sc["true"][term]})."')
    # JOINT: F p-value at row +2+3 (label/value); HETERO: LM p-value at +1+2;
    # SERIAL: level-error F p-value at +1+11; HAUSMAN: p at +1+2, robust F p at +1+8.
    jp = val(1, joint_row + 2 + 3)
    out.append(f'="Joint test of both slopes: p = "&TEXT({jp};"0.0000")&IF({jp}<0.05;'
               f'" - together they clearly move the outcome.";'
               f'" - no clear joint effect in these data.")')
    pp = val(4, joint_row + 2 + 3)
    out.append(f'="Period effects: p = "&TEXT({pp};"0.0000")&IF({pp}<0.05;'
               f'" - common shocks from period to period matter, so keeping the period '
               f'effects is right.";" - no clear common period shocks.")')
    hp = val(1, hetero_row + 1 + 2)
    out.append(f'="Heteroskedasticity (Koenker): p = "&TEXT({hp};"0.0000")&IF({hp}<0.05;'
               f'" - the error spread varies, so classical standard errors would mislead; '
               f'the cluster-robust ones used here allow for it.";'
               f'" - no clear sign that the error spread varies.")')
    sp = val(4, hetero_row + 1 + 11)
    out.append(f'="Serial correlation of the level errors: p = "&TEXT({sp};"0.0000")&IF({sp}<0.05;'
               f'" - the errors are correlated over time; standard errors clustered by unit '
               f'allow for it.";'
               f'" - consistent with uncorrelated level errors, under which within '
               f'(fixed effects) is the more precise estimator.")')
    hp1 = val(1, haus_row + 2 + 2)
    hp2 = val(1, haus_row + 2 + 8)
    out.append(f'="Within versus random: Hausman p = "&TEXT({hp1};"0.0000")&", robust '
               f'version p = "&TEXT({hp2};"0.0000")&IF({hp2}<0.05;'
               f'" - the unit effects are related to the regressors: random effects would '
               f'be biased; rely on within or first differences.";'
               f'" - no evidence against random effects, which are then the more precise '
               f'choice.")')
    return out


def all_workbooks():
    """(file name, function writing the workbook) of every sample workbook: the two
    above, and the staggered-adoption event study of event_workbook.py."""
    import event_workbook  # uses this module's writer; imported here to avoid a cycle
    out = [(key, lambda key=key, sc=sc: workbook(key, sc)) for key, sc in SCENARIOS.items()]
    out.append((event_workbook.EVENT["key"], lambda: event_workbook.event_workbook(event_workbook.EVENT)))
    return out


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--check", action="store_true",
                    help="do not write; exit 1 when a committed workbook differs")
    ap.add_argument("--out", default=HERE, help="folder to write into (default: here)")
    args = ap.parse_args()
    stale = []
    for key, make in all_workbooks():
        text = make()
        path = os.path.join(args.out, key + ".fods")
        if args.check:
            old = open(path, encoding="utf-8").read() if os.path.exists(path) else None
            if old != text:
                stale.append(path)
            continue
        with open(path, "w", encoding="utf-8") as f:
            f.write(text)
        print(f"wrote {path}")
    if stale:
        print("out of date (run python3 sample-sheets/generate.py):", *stale, file=sys.stderr)
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
