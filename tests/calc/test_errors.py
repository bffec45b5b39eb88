"""End-to-end: bad inputs give a "weft: " text in the first cell that says what is
wrong and what to do, and the office survives anything in the cells.

Each row of BAD_INPUTS is a formula and the fragments its message must contain
(source of each expectation: FUNCTIONS.md "Errors in cells" and RULES.md: every bad
input names the row, unit, period or word and says what to fix). The data are an
invented panel of three units over four years, built here through UNO.
Run: WEFT_OXT=build/addin/weft.oxt /usr/bin/python3 tests/calc/test_errors.py
"""

import os
import random
import time
import unittest

from calc_helpers import Office, oxt_path, put_rows

R = "$good.C1:C13;$good.D1:E13;$good.A1:A13;$good.B1:B13"


def ranges(sheet, y="C1:C13", x="D1:E13", u="A1:A13", t="B1:B13"):
    return f"${sheet}.{y};${sheet}.{x};${sheet}.{u};${sheet}.{t}"


# (what it checks, formula, fragments the message must contain)
BAD_INPUTS = [
    ("ranges of different lengths", "=WEFT.ESTIMATES($good.C1:C13;$good.D1:E13;$good.A1:A12;"
     "$good.B1:B13)", ["units has 12 rows but outcome has 13", "same rows"]),
    ("outcome of two columns", "=WEFT.ESTIMATES($good.C1:D13;$good.D1:E13;$good.A1:A13;"
     "$good.B1:B13)", ["outcome has 2 columns", "one column"]),
    ("unknown model word", f'=WEFT.ESTIMATES({R};"pooled foo")',
     ['"foo"', "accepted words", "within", "cluster"]),
    ("conflicting model words", f'=WEFT.ESTIMATES({R};"pooled within")',
     ['"pooled"', '"within"', "conflict"]),
    ("bad dk lag", f'=WEFT.ESTIMATES({R};"dk=abc")', ["dk=abc", "whole number"]),
    ("bad level", f'=WEFT.ESTIMATES({R};"level=1.5")', ["level=1.5", "between 0 and 1"]),
    ("model as a number", f"=WEFT.ESTIMATES({R};5)", ["model is the number 5", "text"]),
    ("repeated unit-period pair", f'=WEFT.ESTIMATES({ranges("dup")};"pooled")',
     ['unit "North 1"', "period 2001", "rows 2 and 4", "one row per unit and period"]),
    ("repeated pair in a transform", f'=WEFT.DIFF($dup.C1:C13;$dup.A1:A13;$dup.B1:B13)',
     ['unit "North 1"', "period 2001", "rows 2 and 4"]),
    ("unknown term", f'=WEFT.VALUE({R};"pooled";"estimate";"nonexistent")',
     ['"nonexistent"', "intercept, x1, x2"]),
    ("term missing", f'=WEFT.VALUE({R};"pooled";"estimate")', ['"estimate"', "term"]),
    ("unknown what", f'=WEFT.VALUE({R};"pooled";"bogus")', ['"bogus"', "estimate", "r2"]),
    ("what missing", f'=WEFT.VALUE({R};"pooled")', ["needs what", "estimate", "sigma"]),
    ("number not reported by this estimator", f'=WEFT.VALUE({R};"pooled";"corr2-means")',
     ["corr2-means", "pooled", "WEFT.SUMMARY"]),
    ("unknown term in a joint test", f'=WEFT.JOINT({R};"pooled";"x1, nothing")',
     ['"nothing"', "intercept, x1, x2"]),
    ("joint test without terms", f'=WEFT.JOINT({R};"pooled")', ["needs terms", "value, capital"]),
    ("unknown heteroskedasticity form", f'=WEFT.HETERO({R};"pooled";"weird")',
     ['"weird"', "koenker", "white-full"]),
    ("zero difference step", "=WEFT.DIFF($good.C1:C13;$good.A1:A13;$good.B1:B13;0)",
     ["k is 0", "use 1"]),
    ("text difference step", '=WEFT.DIFF($good.C1:C13;$good.A1:A13;$good.B1:B13;"abc")',
     ['k is the text "abc"', "whole number"]),
    ("fractional lag", "=WEFT.LAG($good.C1:C13;$good.A1:A13;$good.B1:B13;1.5)",
     ["k is 1.5", "whole number"]),
    ("absurd lag", "=WEFT.LAG($good.C1:C13;$good.A1:A13;$good.B1:B13;10000000)",
     ["k is 10000000", "small whole number"]),
    ("bad omit_first", '=WEFT.DUMMIES($good.B1:B13;"maybe")', ['"maybe"', "TRUE, FALSE"]),
    ("empty ranges", "=WEFT.ESTIMATES($good.H1:H13;$good.I1:J13;$good.K1:K13;$good.L1:L13)",
     ["ranges are empty", "select the cells"]),
    ("header only", "=WEFT.ESTIMATES($good.C1:C1;$good.D1:E1;$good.A1:A1;$good.B1:B1)",
     ["only a header row", "data rows"]),
    ("one cluster", f'=WEFT.ESTIMATES({ranges("one", "C1:C5", "D1:E5", "A1:A5", "B1:B5")};'
     '"cluster")', ["1 unit cluster", "at least 2"]),
    ("within on one unit", f'=WEFT.ESTIMATES({ranges("one", "C1:C5", "D1:E5", "A1:A5", "B1:B5")};'
     '"within")', ['one unit ("North 1")', "at least 2 units"]),
    ("hausman on one unit", f'=WEFT.HAUSMAN({ranges("one", "C1:C5", "D1:E5", "A1:A5", "B1:B5")})',
     ["at least 2 units"]),
    ("effects on one unit", f'=WEFT.EFFECTS({ranges("one", "C1:C5", "D1:E5", "A1:A5", "B1:B5")})',
     ["at least 2 units"]),
    ("between with as many units as terms", f'=WEFT.ESTIMATES({R};"between")',
     ["3 rows for 3 terms", "more rows than terms"]),
    ("text everywhere in the outcome", f"=WEFT.ESTIMATES({ranges('txt')})",
     ["outcome holds no numbers", "below the header"]),
    ("a blank regressor column", f"=WEFT.ESTIMATES({ranges('txt', y='D1:D13', x='E1:F13')})",
     ['regressor "blank"', "column 2 of regressors", "leave it out"]),
    ("text periods", f"=WEFT.ESTIMATES({ranges('txt', y='D1:D13', x='E1:E13', t='C1:C13')})",
     ["periods holds no numbers", "dates"]),
    ("rows dropped in different columns", f"=WEFT.ESTIMATES({ranges('holes')})",
     ["no usable rows"]),
    ("two regressors with one name", f"=WEFT.ESTIMATES({ranges('names')})",
     ['both named "x"', "own name"]),
    ("regressor named intercept", f"=WEFT.ESTIMATES({ranges('names', x='F1:G13')})",
     ['"intercept"', "rename"]),
]


def invented_panel(seed=7):
    """Three invented units over four years, values drawn with a fixed seed."""
    rnd = random.Random(seed)
    rows = [["unit", "period", "y", "x1", "x2"]]
    for u in ["North 1", "North 2", "South 3"]:
        for t in [2001, 2002, 2003, 2004]:
            rows.append([u, t, rnd.uniform(0, 10), rnd.uniform(0, 5), rnd.uniform(0, 5)])
    return rows


def setUpModule():
    global OFFICE
    OFFICE = Office(extensions=[oxt_path()], timeout=500)
    OFFICE.__enter__()


def tearDownModule():
    OFFICE.stop()


class ErrorMessageTests(unittest.TestCase):

    @classmethod
    def setUpClass(cls):
        cls.doc = OFFICE.new_calc()
        sheets = cls.doc.Sheets
        sheets.getByIndex(0).Name = "good"
        rows = invented_panel()
        put_rows(sheets.getByName("good"), 0, 0, rows)
        for name in ["dup", "one", "txt", "holes", "names", "err", "out"]:
            sheets.insertNewByName(name, sheets.Count)
        dup = [r[:] for r in rows]
        dup[3][1] = 2001  # "North 1" in 2001 on sheet rows 2 and 4
        put_rows(sheets.getByName("dup"), 0, 0, dup)
        put_rows(sheets.getByName("one"), 0, 0, rows[:5])
        # C: text outcome; F: a blank regressor headed "blank"
        put_rows(sheets.getByName("txt"), 0, 0,
                 [rows[0] + ["blank"]] + [[r[0], r[1], "n/a", r[3], r[4]] for r in rows[1:]])
        # every row misses something, each column still has numbers
        holes = [r[:] for r in rows]
        for i in range(1, 13):
            holes[i][2 + (i % 3)] = "" if i % 2 else "n/a"
        put_rows(sheets.getByName("holes"), 0, 0, holes)
        put_rows(sheets.getByName("names"), 0, 0,
                 [["unit", "period", "y", "x", "x", "intercept", "x2", "a", "twice a"]]
                 + [r + [r[3], r[4], r[3], 2 * r[3]] for r in rows[1:]])
        put_rows(sheets.getByName("err"), 0, 0, rows)
        sheets.getByName("err").getCellByPosition(2, 5).setFormula("=1/0")
        out = sheets.getByName("out")
        cls.cells = []
        for i, (_, formula, _) in enumerate(BAD_INPUTS):
            c = out.getCellByPosition(0, i)
            c.setFormula(formula)
            cls.cells.append(c)
        cls.out = out
        cls.doc.calculateAll()

    def test_every_bad_input_names_the_problem(self):
        failures = []
        for (what, formula, fragments), cell in zip(BAD_INPUTS, self.cells):
            text = cell.getString()
            if cell.getError() != 0 or not text.startswith("weft: "):
                failures.append(f"{what}: {formula} gave {text!r} (error {cell.getError()})")
                continue
            missing = [f for f in fragments if f not in text]
            if missing:
                failures.append(f"{what}: {formula} gave {text!r}, lacking {missing}")
        self.assertFalse(failures, "\n".join(failures))

    def test_collinear_term_is_listed_not_printed(self):
        """CONVENTIONS.md: a term that is a combination of others is dropped, named,
        and never printed as a number."""
        block = self.out.getCellRangeByName("C1:I6")
        block.setArrayFormula(f"=WEFT.ESTIMATES({ranges('names', x='H1:I13')})")
        self.doc.calculateAll()
        rows = block.getDataArray()
        terms = [r[0] for r in rows]
        self.assertEqual(list(terms[:3]), ["term", "intercept", "a"])
        self.assertEqual(terms[3], "twice a")
        self.assertTrue(str(rows[3][1]).startswith("dropped: "), rows[3])
        self.assertTrue(all(v == "" for v in rows[3][2:]), rows[3])

    def test_error_cell_in_a_range(self):
        """An error cell in a range: the range arrives as its cells (issue 20), so the
        message names the cell and its error (FUNCTIONS.md "Errors in cells"). Through
        the value-array method of 0.3 workbooks the office still refuses the call
        (Err:504 in Calc 7.4; CALC-ADDIN.md): no crash either way."""
        c = self.out.getCellByPosition(10, 0)
        c.setFormula(f"=WEFT.ESTIMATES({ranges('err')})")
        self.doc.calculateAll()
        self.assertEqual(c.getError(), 0)
        self.assertIn("err!C6", c.getString())
        self.assertIn("#DIV/0!", c.getString())
        old = self.out.getCellByPosition(11, 0)
        old.setFormula(f"=ORG.WEFT.CALCFUNCTIONS.ESTIMATES({ranges('err')})")
        self.doc.calculateAll()
        self.assertEqual(old.getError(), 504)

    def test_office_survives_random_cells(self):
        """Seeded random junk in the four ranges and every argument: each result is a
        number, a text, or a weft: message, never a crash or a hang; the office still
        answers afterwards."""
        # A fixed default keeps CI reproducible; WEFT_TEST_SEED=<n> (or "time")
        # explores other tables. (Seed 5 reaches an open core bug: regressor values
        # near 1e308 without an intercept give "weft: internal error".)
        env_seed = os.environ.get("WEFT_TEST_SEED", "1")
        seed = int(time.time()) if env_seed == "time" else int(env_seed)
        print(f"\nrandom cells seed: {seed} (set WEFT_TEST_SEED to repeat)")
        rnd = random.Random(seed)
        junk_sheet_name = "junk"
        sheets = self.doc.Sheets
        sheets.insertNewByName(junk_sheet_name, sheets.Count)
        junk = sheets.getByName(junk_sheet_name)

        def junk_value():
            kind = rnd.randrange(9)
            if kind == 0:
                return ""
            if kind == 1:
                return rnd.choice(["x", "North 7", "1e999", "-", " ", "ünït", "0", "TRUE"])
            if kind == 2:
                return rnd.choice([1e308, -1e308, 5e-324, -0.0, 0.0, float(2 ** 53)])
            if kind == 3:
                return float(rnd.randrange(3))  # repeated small ids: duplicates
            return rnd.uniform(-1e6, 1e6) if rnd.random() < 0.2 else float(rnd.randrange(40))

        formulas = []
        for trial in range(60):
            nrows = rnd.randrange(1, 30)
            rows = [[junk_value() for _ in range(6)] for _ in range(nrows)]
            put_rows(junk, 0, 0, [[""] * 6 for _ in range(31)])
            put_rows(junk, 0, 0, rows)
            y, x, u, t = (f"$junk.C1:C{nrows}", f"$junk.D1:F{nrows}", f"$junk.A1:A{nrows}",
                          f"$junk.B1:B{nrows}")
            model = rnd.choice(["", "within", "fd cluster", "random hc3", "between", "dk",
                                "pooled periods cluster-both", "within periods", "fd dk=1",
                                "random periods cluster", "no-intercept hc2"])
            f = rnd.choice([
                f'=WEFT.ESTIMATES({y};{x};{u};{t};"{model}")',
                f'=WEFT.SUMMARY({y};{x};{u};{t};"{model}")',
                f'=WEFT.VALUE({y};{x};{u};{t};"{model}";"estimate";"x1")',
                f'=WEFT.RESIDUALS({y};{x};{u};{t};"{model}")',
                f'=WEFT.JOINT({y};{x};{u};{t};"{model}";"x1,x2")',
                f'=WEFT.HETERO({y};{x};{u};{t};"{model}";"white-full")',
                f'=WEFT.SERIAL({y};{x};{u};{t};"{model}")',
                f'=WEFT.HAUSMAN({y};{x};{u};{t};"{model}")',
                f'=WEFT.EFFECTS({y};{x};{u};{t};"{model}")',
                f"=WEFT.DIFF({y};{u};{t};{rnd.randrange(-2, 3)})",
                f"=WEFT.LAG({y};{u};{t};{rnd.randrange(-2, 3)})",
                f"=WEFT.DEMEAN({y};{u})",
                f"=WEFT.DUMMIES({t};{rnd.randrange(2)})",
                f"=WEFT.PANEL({u};{t})"])
            cell = self.out.getCellByPosition(12, 0)
            cell.setFormula(f)
            self.doc.calculateAll()
            formulas.append(f)
            err, text = cell.getError(), cell.getString()
            # 504: a junk text such as "1e999" is not an error cell, but keep the
            # check honest: only Calc's own error for error cells is allowed
            self.assertIn(err, (0,), f"seed {seed} trial {trial}: {f} -> Err:{err} {text!r}")
            if cell.FormulaResultType2 == 2 and text.startswith("weft"):
                self.assertTrue(text.startswith("weft: ") and len(text) > 12,
                                f"seed {seed}: {f} -> {text!r}")
                self.assertNotIn("internal error", text, f"seed {seed}: {f}")
        # still alive and computing
        cell = self.out.getCellByPosition(13, 0)
        cell.setFormula("=WEFT.VERSION()")
        self.doc.calculateAll()
        self.assertTrue(cell.getString().startswith("weft library "))


if __name__ == "__main__":
    unittest.main(verbosity=2)
