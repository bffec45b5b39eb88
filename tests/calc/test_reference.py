"""End-to-end: every WEFT.* function in a real headless Calc, on the Grunfeld panel,
compared with the reference JSONs of tests/data/panel (relative 1e-9).

The workbook is built through UNO (cell values and formulas), recalculated once,
and every number read back is compared with the reference value whose file and key
are named in the failure message. Sources:
- tests/data/panel/grunfeld_*.json: R 4.2.2 with plm 2.6.2, sandwich 3.0.2,
  lmtest 0.9.40, each number recomputed independently in mpmath (README.md there);
  copied unchanged from the project's reference set (SOURCES.md).
- "computed in the test from grunfeld.csv": differences, lags, unit means and the
  transformed outcomes are computed here in plain Python from the CSV, independently
  of weft.
Run: WEFT_OXT=build/addin/weft.oxt /usr/bin/python3 tests/calc/test_reference.py
"""

import os
import re
import unittest

from calc_helpers import (ArrayFormula, Office, close, grunfeld, oxt_path, put_rows,
                          reference, rel_diff, HERE)

N_ROWS = 200            # grunfeld.csv data rows
LAST = N_ROWS + 1       # sheet row of the last data row (header in row 1)

# (reference file, model words, regressors range): one estimated equation each.
CASES = [
    ("grunfeld_pooled.json", "pooled", "D1:E201"),
    ("grunfeld_pooled_period_dummies.json", "pooled periods", "D1:E201"),
    ("grunfeld_pooled_no_intercept.json", "pooled no-intercept", "D1:E201"),
    ("grunfeld_fd.json", "fd", "D1:E201"),
    ("grunfeld_fd_period_dummies.json", "fd periods", "D1:E201"),
    ("grunfeld_fd_no_intercept.json", "fd no-intercept", "D1:E201"),
    ("grunfeld_within.json", "within", "D1:E201"),
    ("grunfeld_within_period_dummies.json", "within periods", "D1:E201"),
    # value, capital and the sheet's own WEFT.LAG column (F) as lag1_value
    ("grunfeld_within_lag.json", "within", "D1:F201"),
    ("grunfeld_random.json", "random", "D1:E201"),
    ("grunfeld_random_period_dummies.json", "random periods", "D1:E201"),
    ("grunfeld_between.json", "between", "D1:E201"),
]

# Standard-error word -> reference key (CONVENTIONS.md; within's hc1 is HC1_lsdv).
SE_KEYS = [("classical", "classical"), ("hc0", "HC0"), ("hc1", "HC1"), ("hc2", "HC2"),
           ("hc3", "HC3"), ("cluster", "CR1"), ("cluster0", "CR0"),
           ("cluster-period", "CR1_period"), ("cluster-both", "CR1_both"), ("dk", "DK")]

# Which wald_subset F entry carries the model's inference df for each key.
# The fit measures of within and random (WEFT.SUMMARY): this prefix, then what is
# correlated ("all rows", "unit means", "deviations from unit means").
FIT_LABEL = "squared correlation of outcome and slope prediction, "
F_DF_ENTRY = {"classical": "F_df_resid", "HC0": "F_df_resid", "HC1": "F_df_resid",
              "HC1_lsdv": "F_df_resid", "HC2": "F_df_resid", "HC3": "F_df_resid",
              "CR0": "F_df_G_minus_1", "CR1": "F_df_G_minus_1",
              "CR1_period": "F_df_Gperiod_minus_1", "CR1_both": "F_df_Gmin_minus_1",
              "CR1_both_clipped": "F_df_Gmin_minus_1", "DK": "F_df_T_minus_1"}


def tolerance(key, p_value=False):
    """1e-9 relative, as the reference's README allows. The clipped two-way
    covariance is the exception, as in tests/spec: clipping drops eigenvalues that
    are zero up to rounding, and which side of zero they land on moves the result
    by about 1e-9 (the eigen-solvers differ), so that one key is held to 1e-7 and
    its tail probabilities to 1e-6 (own tolerance, no source)."""
    if key == "CR1_both_clipped":
        return 1e-6 if p_value else 1e-7
    return 1e-9


def se_key(ref, word):
    key = dict(SE_KEYS)[word]
    if ref["method"] == "within" and key == "HC1":
        key = "HC1_lsdv"
    # Two-way clustering clips a covariance that is not positive semi-definite
    # (CONVENTIONS.md); the reference gives the clipped one when that happens.
    if key == "CR1_both" and "CR1_both_clipped" in ref["results"]["se"]:
        key = "CR1_both_clipped"
    return key


def term_name(ref_name):
    """Reference coefficient name -> weft term name."""
    m = re.fullmatch(r"period_(.+)", ref_name)
    if m:
        return "period " + m.group(1)
    if ref_name == "lag1_value":
        return "lag 1 value"  # the header WEFT.LAG gives its column
    return ref_name


def model_ranges(regressors):
    """The four ranges on the data sheet, as seen from the output sheet."""
    return f"$data.C1:C{LAST};$data.{regressors};$data.A1:A{LAST};$data.B1:B{LAST}"


class Sheet:
    """Lays out array formulas one block under another on the output sheet."""

    def __init__(self, sheet):
        self.sheet, self.row, self.blocks = sheet, 0, []

    def add(self, formula, nrows, ncols, col=0):
        block = ArrayFormula(self.sheet, col, self.row, nrows, ncols, formula)
        self.row += nrows + 1
        self.blocks.append(block)
        return block

    def cell(self, formula, col=0):
        c = self.sheet.getCellByPosition(col, self.row)
        c.setFormula(formula)
        self.row += 1
        return c


def cell_value(c):
    """A single-cell formula result: float for a number, str for a text."""
    if c.getError() != 0:
        return f"#error {c.getError()}"
    # com.sun.star.sheet.FormulaResult: VALUE = 1, STRING = 2, ERROR = 4
    return c.getString() if c.FormulaResultType2 == 2 else c.getValue()


class Mismatches:
    def __init__(self):
        self.items = []
        self.checked = 0

    def number(self, what, actual, expected, source, rel=1e-9):
        self.checked += 1
        if expected is None:
            self.items.append(f"{what}: reference {source} is null")
        elif not close(actual, float(expected), rel):
            self.items.append(f"{what}: got {actual!r}, expected {expected!r} "
                              f"(rel. diff {rel_diff(actual, float(expected)):.2e}) from {source}")

    def equal(self, what, actual, expected, source):
        self.checked += 1
        if actual != expected:
            self.items.append(f"{what}: got {actual!r}, expected {expected!r} from {source}")

    def report(self, test, minimum):
        test.assertGreaterEqual(self.checked, minimum,
                                "fewer comparisons than planned: the test lost cases")
        if self.items:
            test.fail(f"{len(self.items)} of {self.checked} comparisons failed:\n"
                      + "\n".join(self.items[:40]))


def joint_is_subset(ref):
    """True when the reference's wald_subset tests every regressor (no intercept, no
    period indicator): then it is the model's joint test of all regressors."""
    regs = [t for t in ref["regressors_estimated"]
            if t != "intercept" and not t.startswith("period_")]
    return sorted(regs) == sorted(ref["wald_subset_coefs"])


def labelled(block):
    """A label/value block as a dict label -> value (first occurrence)."""
    out = {}
    for row in block.values():
        if isinstance(row[0], str) and row[0] and row[0] not in out:
            out[row[0]] = row[1]
    return out


# ---------------------------------------------------------------- plain Python side

def csv_columns():
    header, rows = grunfeld()
    cols = {name: [r[i] for r in rows] for i, name in enumerate(header)}
    return header, rows, cols


def diff_lag(values, firms, years, k, lag):
    """Within-firm k-step difference or lag on the grid of years (computed in the
    test from grunfeld.csv; the panel is balanced, so grid steps are years)."""
    grid = sorted(set(years))
    pos = {y: i for i, y in enumerate(grid)}
    at = {(f, pos[y]): v for f, y, v in zip(firms, years, values)}
    out = []
    for f, y, v in zip(firms, years, values):
        other = at.get((f, pos[y] - k))
        out.append(None if other is None else (other if lag else v - other))
    return out


def unit_means(values, firms):
    sums, counts = {}, {}
    for f, v in zip(firms, values):
        sums[f] = sums.get(f, 0.0) + v
        counts[f] = counts.get(f, 0) + 1
    return {f: sums[f] / counts[f] for f in sums}


def setUpModule():
    global OFFICE, DOC, BLOCKS
    OFFICE = Office(extensions=[oxt_path()], timeout=500)
    OFFICE.__enter__()
    try:
        DOC = OFFICE.new_calc()
        build_workbook()
        DOC.calculateAll()
    except BaseException:
        OFFICE.stop()
        raise


def tearDownModule():
    OFFICE.stop()


def build_workbook():
    global BLOCKS
    sheets = DOC.Sheets
    data = sheets.getByIndex(0)
    data.Name = "data"
    sheets.insertNewByName("out", 1)
    out = Sheet(sheets.getByName("out"))
    header, rows, _ = csv_columns()
    put_rows(data, 0, 0, [header] + rows)   # A firm, B year, C inv, D value, E capital
    # F: lag1_value from the add-in itself (within_lag case); I-K: differences;
    # L-N: unit-demeaned; P-Q copies of value, capital and R..AJ period indicators
    # (adjacent, so that one regressors range holds them all).
    ArrayFormula(data, 5, 0, LAST, 1, f"=WEFT.LAG(D1:D{LAST};A1:A{LAST};B1:B{LAST};1)")
    for j, src in enumerate("CDE"):
        ArrayFormula(data, 8 + j, 0, LAST, 1,
                     f"=WEFT.DIFF({src}1:{src}{LAST};A1:A{LAST};B1:B{LAST})")
        ArrayFormula(data, 11 + j, 0, LAST, 1, f"=WEFT.DEMEAN({src}1:{src}{LAST};A1:A{LAST})")
    for r in range(LAST):
        data.getCellByPosition(15, r).setFormula(f"=D{r + 1}")
        data.getCellByPosition(16, r).setFormula(f"=E{r + 1}")
    ArrayFormula(data, 17, 0, LAST, 19, f"=WEFT.DUMMIES(B1:B{LAST};1)")

    B = {"estimates": {}, "summary": {}, "value": {}, "residuals": {}, "fitted": {},
         "joint": {}, "hetero": {}, "serial": {}, "hausman": {}, "effects": {}}
    for case, words, regs in CASES:
        ref = reference(case)
        k = len(ref["regressors_estimated"])
        rng = model_ranges(regs)
        for word, _ in SE_KEYS:
            key = se_key(ref, word)
            if key not in ref["results"]["inference"]:
                continue  # between has no cluster or dk covariance in the reference
            model = f"{words} {word}"
            B["estimates"][(case, word)] = out.add(
                f'=WEFT.ESTIMATES({rng};"{model}")', k + 1, 7)
            terms = ", ".join(term_name(t) for t in ref["wald_subset_coefs"])
            B["joint"][(case, word)] = out.add(
                f'=WEFT.JOINT({rng};"{model}";"{terms}")', 7, 2)
        B["summary"][case] = out.add(f'=WEFT.SUMMARY({rng};"{words}")', 40, 2)
        vals = {}
        for what in ["n", "units", "r2", "sigma", "df", "f", "f-p", "classical-f", "classical-f-p"]:
            vals[(what, None)] = out.cell(f'=WEFT.VALUE({rng};"{words}";"{what}")')
        se_word = "classical" if ref["method"] == "between" else "cluster"
        for t in ref["regressors_estimated"][:4]:
            for what in ["estimate", "se", "t", "p", "ci-low", "ci-high"]:
                vals[(what, t)] = out.cell(
                    f'=WEFT.VALUE({rng};"{words} {se_word}";"{what}";"{term_name(t)}")')
        B["value"][case] = (vals, se_word)
        B["residuals"][case] = out.add(f'=WEFT.RESIDUALS({rng};"{words}")', LAST, 1)
        B["fitted"][case] = out.add(f'=WEFT.FITTED({rng};"{words}")', LAST, 1)
        for form in ["koenker", "bp", "white-special", "white-full"]:
            B["hetero"][(case, form)] = out.add(
                f'=WEFT.HETERO({rng};"{words}";"{form}")', 7, 2)
        if "serial_ar1" in ref["results"]:
            B["serial"][case] = out.add(f'=WEFT.SERIAL({rng};"{words}")', 12, 2)
        if "hausman" in ref["results"]:
            B["hausman"][case] = out.add(f'=WEFT.HAUSMAN({rng};"{words}")', 12, 2)
        if "effects_F" in ref["results"]:
            B["effects"][case] = out.add(f'=WEFT.EFFECTS({rng};"{words}")', 4, 2)

    # Helpers feeding models: fd through DIFF columns, within slopes through DEMEAN
    # columns, pooled with period indicators through the DUMMIES block.
    d = "$data."
    B["via_diff"] = out.add(f'=WEFT.ESTIMATES({d}I1:I{LAST};{d}J1:K{LAST};{d}A1:A{LAST};'
                            f'{d}B1:B{LAST};"pooled classical")', 4, 7)
    B["via_demean"] = out.add(f'=WEFT.ESTIMATES({d}L1:L{LAST};{d}M1:N{LAST};{d}A1:A{LAST};'
                              f'{d}B1:B{LAST};"pooled no-intercept")', 3, 7)
    B["via_dummies"] = out.add(f'=WEFT.ESTIMATES({d}C1:C{LAST};{d}P1:AJ{LAST};{d}A1:A{LAST};'
                               f'{d}B1:B{LAST};"pooled classical")', 23, 7)
    B["panel"] = out.add(f"=WEFT.PANEL({d}A1:A{LAST};{d}B1:B{LAST})", 11, 2)
    B["version"] = out.cell("=WEFT.VERSION()")
    B["data"] = data
    BLOCKS = B


class ReferenceTests(unittest.TestCase):

    def test_estimates_every_case_and_standard_error(self):
        m = Mismatches()
        for (case, word), block in BLOCKS["estimates"].items():
            ref = reference(case)
            key = se_key(ref, word)
            res, inf = ref["results"], ref["results"]["inference"][key]
            rows = block.values()
            # a fit with warnings says where they are in its first cell (README
            # "Warnings"), e.g. "term [warning in row 4]"; the terms are compared here
            header = [rows[0][0].split(" [warning")[0]] + list(rows[0][1:])
            m.equal(f"{case} {word} header", header,
                    ["term", "coefficient", "standard error", "t ratio", "two-sided p",
                     "95% interval from", "95% interval to"],
                    "FUNCTIONS.md (WEFT.ESTIMATES layout, level 0.95)")
            got_terms = [r[0] for r in rows[1:]]
            want_terms = [term_name(t) for t in ref["regressors_estimated"]]
            m.equal(f"{case} {word} terms", got_terms, want_terms,
                    f"{case}:regressors_estimated")
            tol, p_tol = tolerance(key), tolerance(key, p_value=True)
            for r, t in zip(rows[1:], ref["regressors_estimated"]):
                src = f"{case}:results"
                what = f"{case} [{word}] {t}"
                m.number(what + " estimate", r[1], res["coef"][t], f"{src}.coef.{t}", tol)
                m.number(what + " se", r[2], res["se"][key][t], f"{src}.se.{key}.{t}", tol)
                m.number(what + " t", r[3], inf["t"][t], f"{src}.inference.{key}.t.{t}", tol)
                m.number(what + " p", r[4], inf["p"][t], f"{src}.inference.{key}.p.{t}", p_tol)
                m.number(what + " interval from", r[5], inf["ci95_low"][t],
                         f"{src}.inference.{key}.ci95_low.{t}", tol)
                m.number(what + " interval to", r[6], inf["ci95_high"][t],
                         f"{src}.inference.{key}.ci95_high.{t}", tol)
        m.report(self, 1500)

    def test_joint_every_case_and_standard_error(self):
        m = Mismatches()
        for (case, word), block in BLOCKS["joint"].items():
            ref = reference(case)
            key = se_key(ref, word)
            w = ref["results"]["wald_subset"][key]
            f_entry = w[F_DF_ENTRY[key]]
            got = labelled(block)
            src = f"{case}:results.wald_subset.{key}"
            tol, p_tol = tolerance(key), tolerance(key, p_value=True)
            m.number(f"{case} [{word}] F", got.get("F"), w["F"], src + ".F", tol)
            m.number(f"{case} [{word}] F df1", got.get("F df1"), f_entry["df1"],
                     f"{src}.{F_DF_ENTRY[key]}.df1")
            m.number(f"{case} [{word}] F df2", got.get("F df2"), f_entry["df2"],
                     f"{src}.{F_DF_ENTRY[key]}.df2")
            m.number(f"{case} [{word}] F p", got.get("F p-value"), f_entry["p"],
                     f"{src}.{F_DF_ENTRY[key]}.p", p_tol)
            m.number(f"{case} [{word}] chi2", got.get("chi-square"), w["wald_chi2"],
                     src + ".wald_chi2", tol)
            m.number(f"{case} [{word}] chi2 df", got.get("chi-square df"), w["q"], src + ".q")
            m.number(f"{case} [{word}] chi2 p", got.get("chi-square p-value"), w["p_chi2"],
                     src + ".p_chi2", p_tol)
        m.report(self, 700)

    def test_summary_values(self):
        m = Mismatches()
        for case, block in BLOCKS["summary"].items():
            ref = reference(case)
            res, sample, method = ref["results"], ref["sample"], ref["method"]
            got = labelled(block)
            src = f"{case}:"
            m.number(f"{case} observations used", got.get("observations used"),
                     sample["nobs"], src + "sample.nobs")
            m.number(f"{case} units", got.get("units"), sample["n_units"],
                     src + "sample.n_units")
            m.number(f"{case} residual df", got.get("residual df"), res["df_residual"],
                     src + "results.df_residual")
            m.number(f"{case} sigma", got.get("residual std deviation"), res["sigma"],
                     src + "results.sigma")
            r2 = {"within": "r_squared_within", "random": "r_squared_plm"}.get(method,
                                                                               "r_squared")
            m.number(f"{case} R-squared", got.get("R-squared"), res[r2], src + "results." + r2)
            if method in ("within", "random"):
                # plm's within R-squared equals its squared correlation of the
                # demeaned outcome and slope prediction (an OLS identity).
                dev = "r_squared_within" if method == "within" else "r_squared_within_corr2"
                for what, key in [("deviations from unit means", dev),
                                  ("unit means", "r_squared_between_corr2"),
                                  ("all rows", "r_squared_overall_corr2")]:
                    label = FIT_LABEL + what
                    m.number(f"{case} {label}", got.get(label), res[key], src + "results." + key)
            if joint_is_subset(ref):
                # the joint test of all regressors under the model's (here classical)
                # covariance: results.wald_subset.classical (R sandwich + lmtest), F on
                # the residual df
                w = res["wald_subset"]["classical"]
                jsrc = src + "results.wald_subset.classical"
                label = "joint test of all regressors, "
                m.number(f"{case} joint F", got.get(label + "F"), w["F"], jsrc + ".F")
                m.number(f"{case} joint df1", got.get(label + "df1"), w["F_df_resid"]["df1"], jsrc + ".df1")
                m.number(f"{case} joint df2", got.get(label + "df2"), w["F_df_resid"]["df2"], jsrc + ".df2")
                m.number(f"{case} joint p", got.get(label + "p-value"), w["F_df_resid"]["p"], jsrc + ".p")
            if method == "random" and ref["period_dummies"]:
                # weft's classical F covers every term but the intercept (period
                # indicators too, as f_all_terms does for pooled); the reference has no
                # such F for random effects with period indicators, so none is compared.
                continue
            if method == "random":
                w = res["wald_slopes_classical"]
                fsrc, fF, fdf1, fdf2, fp = (src + "results.wald_slopes_classical", w["F"],
                                            w["df1"], w["df2"], w["p_F"])
            else:
                w = res["f_all_terms"]
                fsrc, fF, fdf1, fdf2, fp = (src + "results.f_all_terms", w["F"], w["df1"],
                                            w["df2"], w["p"])
            m.number(f"{case} F", got.get("classical F of all terms"), fF, fsrc + ".F")
            m.number(f"{case} F df1", got.get("classical F df1"), fdf1, fsrc + ".df1")
            m.number(f"{case} F df2", got.get("classical F df2"), fdf2, fsrc + ".df2")
            m.number(f"{case} F p", got.get("classical F p-value"), fp, fsrc + ".p")
        m.report(self, 11 * 9)

    def test_value(self):
        m = Mismatches()
        for case, (cells, se_word) in BLOCKS["value"].items():
            ref = reference(case)
            res, method = ref["results"], ref["method"]
            key = se_key(ref, se_word)
            inf = res["inference"][key]
            r2 = {"within": "r_squared_within", "random": "r_squared_plm"}.get(method,
                                                                               "r_squared")
            f = res["wald_slopes_classical"] if method == "random" else res["f_all_terms"]
            want = {"n": (ref["sample"]["nobs"], "sample.nobs"),
                    "units": (ref["sample"]["n_units"], "sample.n_units"),
                    "r2": (res[r2], "results." + r2),
                    "sigma": (res["sigma"], "results.sigma"),
                    "df": (res["inference"]["classical"]["df"], "results.inference.classical.df"),
                    "classical-f": (f["F"], "f_all_terms.F / wald_slopes_classical.F"),
                    "classical-f-p": (f.get("p", f.get("p_F")),
                                      "f_all_terms.p / wald_slopes_classical.p_F"),
                    # the joint test of all regressors (classical covariance here)
                    "f": (res["wald_subset"]["classical"]["F"], "wald_subset.classical.F"),
                    "f-p": (res["wald_subset"]["classical"]["F_df_resid"]["p"],
                            "wald_subset.classical.F_df_resid.p")}
            for (what, term), c in cells.items():
                v = cell_value(c)
                if what in ("classical-f", "classical-f-p") and method == "random" and ref["period_dummies"]:
                    continue  # no reference F on all terms here (see test_summary_values)
                if what in ("f", "f-p") and not joint_is_subset(ref):
                    continue  # the reference tests fewer terms than all regressors
                if term is None:
                    exp, src = want[what]
                    m.number(f"{case} VALUE {what}", v, exp, f"{case}:{src}")
                    continue
                src = f"{case}:results"
                table = {"estimate": (res["coef"][term], f"{src}.coef.{term}"),
                         "se": (res["se"][key][term], f"{src}.se.{key}.{term}"),
                         "t": (inf["t"][term], f"{src}.inference.{key}.t.{term}"),
                         "p": (inf["p"][term], f"{src}.inference.{key}.p.{term}"),
                         "ci-low": (inf["ci95_low"][term], f"{src}.inference.{key}.ci95_low"),
                         "ci-high": (inf["ci95_high"][term], f"{src}.inference.{key}.ci95_high")}
                exp, s = table[what]
                m.number(f"{case} VALUE {what} {term} [{se_word}]", v, exp, s)
        m.report(self, 12 * 5 + 12 * 2 * 6)

    def test_residuals_and_fitted(self):
        """Sum of squared residuals = rss; fitted + residual = the estimated
        equation's outcome, computed in the test from grunfeld.csv."""
        _, rows, cols = csv_columns()
        firms, years, inv = cols["firm"], cols["year"], cols["inv"]
        dinv = diff_lag(inv, firms, years, 1, lag=False)
        means = unit_means(inv, firms)
        m = Mismatches()
        for case, words, _ in CASES:
            ref = reference(case)
            method = ref["method"]
            res_col = [r[0] for r in BLOCKS["residuals"][case].values()]
            fit_col = [r[0] for r in BLOCKS["fitted"][case].values()]
            m.equal(f"{case} residual header", res_col[0], "residual", "addin layout")
            m.equal(f"{case} fitted header", fit_col[0], "fitted", "addin layout")
            e = [v for v in res_col[1:] if v != ""]
            used = sum(1 for v in res_col[1:] if v != "")
            if method == "between":
                # one residual per unit, placed on each of its T = 20 rows
                m.number(f"{case} sum of squared residuals / T", sum(v * v for v in e) / 20.0,
                         ref["results"]["rss"], f"{case}:results.rss (T = sample.T_min = 20)")
                m.equal(f"{case} rows with a residual", used, N_ROWS, f"{case}:sample")
            else:
                m.number(f"{case} sum of squared residuals", sum(v * v for v in e),
                         ref["results"]["rss"], f"{case}:results.rss")
                m.equal(f"{case} rows with a residual", used, ref["sample"]["nobs"],
                        f"{case}:sample.nobs")
            if case == "grunfeld_within_lag.json":
                continue  # its first-year rows are dropped: covered by the count above
            theta = ref["results"].get("random_effects", {}).get("theta")
            for i in range(N_ROWS):
                r, f = res_col[1 + i], fit_col[1 + i]
                if method == "pooled":
                    want = inv[i]
                elif method == "fd":
                    want = dinv[i]
                elif method == "within":
                    want = inv[i] - means[firms[i]]
                elif method == "random":
                    want = inv[i] - theta * means[firms[i]]
                else:
                    want = means[firms[i]]
                if want is None:
                    m.equal(f"{case} row {i + 2} blank residual", (r, f), ("", ""),
                            "FUNCTIONS.md (blank where the row was not used)")
                    continue
                m.number(f"{case} row {i + 2} fitted + residual",
                         (f + r) if isinstance(f, float) and isinstance(r, float) else None,
                         want, "computed in the test from grunfeld.csv"
                         + (f" with {case}:results.random_effects.theta" if theta else ""))
        m.report(self, 11 * N_ROWS)

    def test_hetero(self):
        m = Mismatches()
        names = {"koenker": ("koenker_LM", "F"), "bp": ("original_BP", None),
                 "white-special": ("white_special", "white_special"),
                 "white-full": ("white_full", "white_full")}
        for (case, form), block in BLOCKS["hetero"].items():
            h = reference(case)["results"]["heteroskedasticity"]
            got = labelled(block)
            src = f"{case}:results.heteroskedasticity"
            if form in ("white-special", "white-full"):
                if names[form][0] not in h:
                    # the reference omits white-full when it has too many terms
                    # (tests/data/panel/README.md); weft then either refuses or
                    # computes: only a weft: text or a number is acceptable.
                    first = block.values()[0][0]
                    self.assertTrue(isinstance(first, str), f"{case} {form}: {first!r}")
                    continue
                lm, fk = h[names[form][0]]["LM"], h[names[form][0]]["F"]
                lsrc, fsrc = f"{src}.{names[form][0]}.LM", f"{src}.{names[form][0]}.F"
            elif form == "koenker":
                lm, fk = h["koenker_LM"], h["F"]
                lsrc, fsrc = src + ".koenker_LM", src + ".F"
            else:
                # bp's auxiliary regression is koenker's (u^2 on [1, Z]), so its F form
                # is the same F (tests/data/panel/README.md, heteroskedasticity)
                lm, fk = h["original_BP"], h["F"]
                lsrc, fsrc = src + ".original_BP", src + ".F (same auxiliary regression)"
            m.number(f"{case} {form} LM", got.get("LM"), lm["stat"], lsrc + ".stat")
            m.number(f"{case} {form} LM df", got.get("LM df"), lm["df"], lsrc + ".df")
            m.number(f"{case} {form} LM p", got.get("LM p-value"), lm["p"], lsrc + ".p")
            m.number(f"{case} {form} F", got.get("F"), fk["stat"], fsrc + ".stat")
            m.number(f"{case} {form} F df1", got.get("F df1"), fk["df1"], fsrc + ".df1")
            m.number(f"{case} {form} F df2", got.get("F df2"), fk["df2"], fsrc + ".df2")
            m.number(f"{case} {form} F p", got.get("F p-value"), fk["p"], fsrc + ".p")
        m.report(self, 12 * 3 * 7)

    def test_serial(self):
        m = Mismatches()
        for case, block in BLOCKS["serial"].items():
            s = reference(case)["results"]["serial_ar1"]
            got = labelled(block)
            src = f"{case}:results.serial_ar1"
            m.number(f"{case} slope", got.get("AR(1) slope"), s["slope"], src + ".slope")
            m.number(f"{case} se", got.get("std error"), s["se_classical"], src + ".se_classical")
            m.number(f"{case} t", got.get("t"), s["t_classical"], src + ".t_classical")
            m.number(f"{case} p", got.get("p-value"), s["p_classical"], src + ".p_classical")
            m.number(f"{case} df", got.get("df"), s["df_classical"], src + ".df_classical")
            m.number(f"{case} pairs", got.get("pairs"), s["n_pairs"], src + ".n_pairs")
            lvl = s["level_errors_uncorrelated"]
            lsrc = src + ".level_errors_uncorrelated"
            m.number(f"{case} level null", got.get("level errors: slope if uncorrelated"),
                     lvl["null_value"], lsrc + ".null_value")
            m.number(f"{case} level se", got.get("level errors: cluster std error"),
                     s["se_CR1"], src + ".se_CR1")
            F = lvl["F_CR1_df_G_minus_1"]
            m.number(f"{case} level F", got.get("level errors: F"), F["F"],
                     lsrc + ".F_CR1_df_G_minus_1.F")
            m.number(f"{case} level F df2", got.get("level errors: F df2"), F["df2"],
                     lsrc + ".F_CR1_df_G_minus_1.df2")
            m.number(f"{case} level F p", got.get("level errors: F p-value"), F["p"],
                     lsrc + ".F_CR1_df_G_minus_1.p")
        self.assertGreaterEqual(len(BLOCKS["serial"]), 6)
        m.report(self, 6 * 11)

    def test_hausman(self):
        m = Mismatches()
        for case, block in BLOCKS["hausman"].items():
            res = reference(case)["results"]
            h, aux = res["hausman"], res["hausman_auxiliary"]["CR1"]
            got = labelled(block)
            src = f"{case}:results.hausman"
            m.number(f"{case} statistic", got.get("statistic"), h["statistic"], src + ".statistic")
            m.number(f"{case} df", got.get("df"), h["df"], src + ".df")
            m.number(f"{case} p", got.get("p-value"), h["p"], src + ".p")
            m.number(f"{case} rank", got.get("rank of the covariance difference"), h["vdiff_rank"],
                     src + ".vdiff_rank")
            m.equal(f"{case} positive definite",
                    got.get("within less precise than random in every direction"),
                    "yes" if h["vdiff_positive_definite"] else "no",
                    src + ".vdiff_positive_definite")
            asrc = f"{case}:results.hausman_auxiliary.CR1"
            m.number(f"{case} robust F", got.get("robust F"), aux["F"], asrc + ".F")
            m.number(f"{case} robust F df2", got.get("robust F df2"),
                     aux["F_df_G_minus_1"]["df2"], asrc + ".F_df_G_minus_1.df2")
            m.number(f"{case} robust F p", got.get("robust F p-value"),
                     aux["F_df_G_minus_1"]["p"], asrc + ".F_df_G_minus_1.p")
            m.number(f"{case} robust chi2", got.get("robust chi-square"), aux["wald_chi2"],
                     asrc + ".wald_chi2")
            m.number(f"{case} robust chi2 p", got.get("robust chi-square p-value"),
                     aux["p_chi2"], asrc + ".p_chi2")
        m.report(self, 2 * 10)

    def test_effects(self):
        m = Mismatches()
        for case, block in BLOCKS["effects"].items():
            e = reference(case)["results"]["effects_F"]
            got = labelled(block)
            src = f"{case}:results.effects_F"
            for label, key in [("F", "F"), ("df1", "df1"), ("df2", "df2"), ("p-value", "p")]:
                m.number(f"{case} effects {label}", got.get(label), e[key], f"{src}.{key}")
        m.report(self, 3 * 4)

    def test_helpers_feed_the_reference_models(self):
        """DIFF columns give the fd equation, DEMEAN columns the within slopes, the
        DUMMIES block the period indicators of the pooled equation."""
        m = Mismatches()
        fd = reference("grunfeld_fd.json")["results"]
        rows = BLOCKS["via_diff"].values()
        for r, t in zip(rows[1:], ["intercept", "value", "capital"]):
            m.number(f"pooled on DIFF columns {t}", r[1], fd["coef"][t],
                     f"grunfeld_fd.json:results.coef.{t}")
            m.number(f"pooled on DIFF columns se {t}", r[2], fd["se"]["classical"][t],
                     f"grunfeld_fd.json:results.se.classical.{t}")
        within = reference("grunfeld_within.json")["results"]
        rows = BLOCKS["via_demean"].values()
        for r, t in zip(rows[1:], ["value", "capital"]):
            m.equal(f"pooled on DEMEAN columns term {t}", r[0], "demeaned " + t,
                    "addin layout (header of WEFT.DEMEAN)")
            m.number(f"pooled on DEMEAN columns {t}", r[1], within["coef"][t],
                     f"grunfeld_within.json:results.coef.{t}")
        pd_ref = reference("grunfeld_pooled_period_dummies.json")
        rows = BLOCKS["via_dummies"].values()
        for r, t in zip(rows[1:], pd_ref["regressors_estimated"]):
            m.equal(f"pooled on DUMMIES term {t}", r[0], term_name(t),
                    "grunfeld_pooled_period_dummies.json:regressors_estimated")
            m.number(f"pooled on DUMMIES {t}", r[1], pd_ref["results"]["coef"][t],
                     f"grunfeld_pooled_period_dummies.json:results.coef.{t}")
        m.report(self, 3 * 2 + 2 * 2 + 22 * 2)

    def test_transforms_against_python(self):
        """DIFF, LAG, DEMEAN and DUMMIES cell by cell against the same transforms
        computed in the test from grunfeld.csv."""
        _, rows, cols = csv_columns()
        firms, years = cols["firm"], cols["year"]
        data = BLOCKS["data"]
        block = data.getCellRangeByName(f"A1:AJ{LAST}").getDataArray()
        m = Mismatches()
        m.equal("LAG header", block[0][5], "lag 1 value", "addin layout")
        m.equal("DIFF header", block[0][9], "diff value", "addin layout")
        m.equal("DEMEAN header", block[0][12], "demeaned value", "addin layout")
        grid = sorted(set(years))
        m.equal("DUMMIES header", list(block[0][17:36]),
                [f"period {int(y)}" for y in grid[1:]], "grunfeld.csv years (omit_first)")
        for j, name in enumerate(["inv", "value", "capital"]):
            v = cols[name]
            d = diff_lag(v, firms, years, 1, lag=False)
            means = unit_means(v, firms)
            for i in range(N_ROWS):
                got_d = block[1 + i][8 + j]
                if d[i] is None:
                    m.equal(f"DIFF {name} row {i + 2}", got_d, "", "computed from grunfeld.csv")
                else:
                    m.number(f"DIFF {name} row {i + 2}", got_d, d[i],
                             "computed in the test from grunfeld.csv")
                m.number(f"DEMEAN {name} row {i + 2}", block[1 + i][11 + j],
                         v[i] - means[firms[i]], "computed in the test from grunfeld.csv",
                         rel=1e-9 if abs(v[i] - means[firms[i]]) > 1e-6 else 1e-6)
        lag = diff_lag(cols["value"], firms, years, 1, lag=True)
        for i in range(N_ROWS):
            got = block[1 + i][5]
            if lag[i] is None:
                m.equal(f"LAG value row {i + 2}", got, "", "computed from grunfeld.csv")
            else:
                m.number(f"LAG value row {i + 2}", got, lag[i], "computed from grunfeld.csv")
            for j, y in enumerate(grid[1:]):
                m.number(f"DUMMIES row {i + 2} period {int(y)}", block[1 + i][17 + j],
                         1.0 if years[i] == y else 0.0, "computed from grunfeld.csv")
        m.report(self, N_ROWS * (3 * 2 + 1 + 19))

    def test_panel(self):
        s = reference("grunfeld_pooled.json")["sample"]
        got = labelled(BLOCKS["panel"])
        m = Mismatches()
        src = "grunfeld_pooled.json:sample"
        m.number("units", got.get("units"), s["n_units"], src + ".n_units")
        m.number("periods", got.get("periods"), s["n_periods"], src + ".n_periods")
        m.number("rows", got.get("rows"), s["n_rows_input"], src + ".n_rows_input")
        m.equal("balanced", got.get("balanced"), "yes" if s["balanced"] else "no",
                src + ".balanced")
        m.number("min periods", got.get("min periods per unit"), s["T_min"], src + ".T_min")
        m.number("max periods", got.get("max periods per unit"), s["T_max"], src + ".T_max")
        m.number("median periods", got.get("median periods per unit"), s["T_max"],
                 src + ".T_max (balanced: median = max)")
        m.number("gaps", got.get("gaps"), 0.0 if not s["has_interior_gaps"] else -1,
                 src + ".has_interior_gaps")
        m.number("single-row units", got.get("single-row units"), s["n_singleton_units"],
                 src + ".n_singleton_units")
        m.equal("duplicates", got.get("duplicate unit-period pairs"), 0.0,
                "grunfeld.csv has one row per firm and year (tests/data/panel/README.md)")
        m.report(self, 10)

    def test_version(self):
        with open(os.path.join(HERE, "..", "..", "cabi", "include", "weft.h")) as f:
            header = f.read()
        lib = re.search(r'#define WEFT_VERSION "([^"]+)"', header).group(1)
        want = os.environ.get("WEFT_PROJECT_VERSION")
        self.assertTrue(want, "CTest sets WEFT_PROJECT_VERSION to the project's version")
        self.assertEqual(BLOCKS["version"].getString(),
                         f"weft library {lib}, Calc add-in {want}",
                         "source: WEFT_VERSION in cabi/include/weft.h and project() version")


if __name__ == "__main__":
    unittest.main(verbosity=2)
