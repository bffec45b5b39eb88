"""End-to-end: recalculation, the model cache, whole-column references and the
file-format name of the functions, in a real headless Calc.

- Cells over the same ranges and model text fit the model once per recalculation
  (the add-in logs each fit and cache hit to WEFT_ADDIN_LOG).
- Editing an input cell changes the results; undoing the edit gives back the
  reference values of tests/data/panel/grunfeld_within.json.
- The cache is bounded: after nine other models, the first one is fitted again.
- A workbook saved as .ods stores ORG.WEFT.CALCFUNCTIONS.<METHOD> and is
  recalculated on load.
Run: WEFT_OXT=build/addin/weft.oxt /usr/bin/python3 tests/calc/test_recalc.py
"""

import os
import random
import re
import unittest
import zipfile

from calc_helpers import (GRUNFELD_LAST_ROW as LAST, GRUNFELD_RANGES as R, LoggedOffice, close,
                          grunfeld, put_grunfeld, put_rows, reference)

WITHIN = reference("grunfeld_within.json")["results"]


def setUpModule():
    global LOGGED, OFFICE
    LOGGED = LoggedOffice()
    OFFICE = LOGGED.start()


def tearDownModule():
    LOGGED.stop()


def log_lines():
    return LOGGED.log_lines()


def fits():
    return LOGGED.fits()


class RecalcTests(unittest.TestCase):

    def setUp(self):
        self.doc = OFFICE.new_calc()
        self.sheet = self.doc.Sheets.getByIndex(0)
        put_grunfeld(self.sheet)

    def tearDown(self):
        self.doc.close(True)

    def cell(self, name):
        return self.sheet.getCellRangeByName(name)

    def test_one_fit_for_many_cells_then_edit_and_undo(self):
        model = '"within cluster"'
        self.cell("H1:N3").setArrayFormula(f"=WEFT.ESTIMATES({R};{model})")
        self.cell("H5:I40").setArrayFormula(f"=WEFT.SUMMARY({R};{model})")
        self.cell("K5:L11").setArrayFormula(f'=WEFT.JOINT({R};{model};"value, capital")')
        self.cell("K13:L19").setArrayFormula(f"=WEFT.HETERO({R};{model})")
        self.cell("K21:L32").setArrayFormula(f"=WEFT.SERIAL({R};{model})")
        self.cell(f"P1:P{LAST}").setArrayFormula(f"=WEFT.RESIDUALS({R};{model})")
        for i, what in enumerate(["estimate", "se", "t", "p", "ci-low"]):
            self.cell(f"R{i + 1}").setFormula(f'=WEFT.VALUE({R};{model};"{what}";"value")')
        before = len(fits())
        self.doc.calculateAll()
        new = fits()[before:]
        self.assertEqual(len(new), 1, f"expected one fit for 11 cells, log: {log_lines()}")
        hits = [h for kind, h in log_lines() if kind == "hit" and h == new[0]]
        self.assertGreaterEqual(len(hits), 10)

        est = self.cell("I2")
        src = "grunfeld_within.json:results.coef.value"
        self.assertTrue(close(est.getValue(), WITHIN["coef"]["value"]), src)
        self.assertTrue(close(self.cell("R2").getValue(), WITHIN["se"]["CR1"]["value"]),
                        "grunfeld_within.json:results.se.CR1.value")

        # Edit one outcome cell: the automatic recalculation refits once and the
        # results change.
        original = self.cell("C5").getValue()
        self.cell("C5").setValue(original + 1000.0)
        changed = est.getValue()
        self.assertFalse(close(changed, WITHIN["coef"]["value"], rel=1e-6),
                         "the estimate did not change after editing inv in row 5")
        self.assertAlmostEqual(self.cell("R1").getValue(), changed, delta=abs(changed) * 1e-12)
        self.assertEqual(len(fits()), before + 2)

        # Undo the edit: the cached model of the original data comes back.
        self.cell("C5").setValue(original)
        self.assertTrue(close(est.getValue(), WITHIN["coef"]["value"]), src)
        self.assertTrue(close(self.cell("R1").getValue(), WITHIN["coef"]["value"]), src)

    def test_second_function_answers_from_the_cells_key_and_sees_every_kind_change(self):
        """A second function over unchanged ranges is a cache hit without reading the
        ranges again (keyed by every cell as passed); a cell that changes only its
        kind (number -> the same digits as text -> blank -> number) or a header that
        changes only its text must never be answered with the previous model.
        Expected: grunfeld_within.json sample.nobs (200) and coef; one row dropped
        gives 199 observations (the rule "text in a number column drops the row",
        FUNCTIONS.md)."""
        model = '"within cluster"'
        est = self.cell("H1:N3")
        est.setArrayFormula(f"=WEFT.ESTIMATES({R};{model})")
        n = self.cell("R1")
        n.setFormula(f'=WEFT.VALUE({R};{model};"n")')
        b = self.cell("R2")
        b.setFormula(f'=WEFT.VALUE({R};{model};"estimate";"value")')
        before = len(fits())
        self.doc.calculateAll()
        # at most one fit (none when an earlier test left this model in the cache)
        self.assertLessEqual(len(fits()), before + 1, f"log: {log_lines()}")
        self.assertEqual(n.getValue(), 200.0, "grunfeld_within.json:sample.nobs")
        self.assertTrue(close(b.getValue(), WITHIN["coef"]["value"]),
                        "grunfeld_within.json:results.coef.value")

        cell = self.cell("D5")
        original = cell.getValue()
        digits = repr(original) if original != int(original) else str(int(original))
        # The same digits as text are refused, naming the cell (issue 20: a number
        # stored as text); that too must not be answered from the cache.
        cell.setString(digits)
        self.doc.calculateAll()
        self.assertIn("D5", n.getString())
        self.assertIn("number stored as text", n.getString())
        seen = []
        for label, edit in (("text", lambda: cell.setString("n/a")),
                            ("blank", lambda: cell.setString("")),
                            ("number", lambda: cell.setValue(original))):
            edit()
            self.doc.calculateAll()
            seen.append((label, n.getValue(), b.getValue(), est.getDataArray()[1][1]))
        self.assertEqual([s[1] for s in seen], [199.0, 199.0, 200.0],
                         f"observations after text, blank, number in D5: {seen}")
        self.assertFalse(close(seen[0][2], WITHIN["coef"]["value"], rel=1e-6),
                         "text in D5 still shows the estimate of all 200 rows")
        self.assertEqual(seen[0][2], seen[1][2], "text and blank in D5 drop the same row")
        self.assertTrue(close(seen[2][2], WITHIN["coef"]["value"]),
                        "grunfeld_within.json:results.coef.value after restoring D5")
        for label, _, value, table_value in seen:
            self.assertEqual(value, table_value, f"VALUE and ESTIMATES disagree after {label}")

        # A header that changes only its text renames the term in every result.
        self.cell("D1").setString("worth")
        self.doc.calculateAll()
        self.assertEqual(est.getDataArray()[1][0], "worth")
        self.assertTrue(self.cell("R2").getString().startswith("weft:"),
                        "VALUE for the term 'value' after renaming it: "
                        + self.cell("R2").getString())

    def test_same_addresses_in_two_documents(self):
        """Two documents, same formula text and addresses, different data: each shows
        its own model (the key is the cells' contents, not their addresses).
        Expected: grunfeld_within.json coef.value; the other document holds the
        Grunfeld data with inv doubled, so its slope is doubled (OLS is linear in
        the outcome, common practice, no source)."""
        formula = f'=WEFT.VALUE({R};"within";"estimate";"value")'
        self.cell("H1").setFormula(formula)
        self.doc.calculateAll()
        other = OFFICE.new_calc()
        try:
            sheet2 = other.Sheets.getByIndex(0)
            put_grunfeld(sheet2, inv_factor=2.0)
            sheet2.getCellRangeByName("H1").setFormula(formula)
            other.calculateAll()
            self.doc.calculateAll()
            mine = self.cell("H1").getValue()
            theirs = sheet2.getCellRangeByName("H1").getValue()
            self.assertTrue(close(mine, WITHIN["coef"]["value"]),
                            "grunfeld_within.json:results.coef.value")
            self.assertTrue(close(theirs, 2 * WITHIN["coef"]["value"], rel=1e-9),
                            f"doubled inv: got {theirs}")
        finally:
            other.close(True)

    def test_cache_is_bounded(self):
        words = ["classical", "hc0", "hc1", "hc2", "hc3", "cluster", "cluster0",
                 "cluster-period", "cluster-both", "dk"]
        c = self.cell("H1")
        start = len(fits())
        for w in words:  # one at a time, so the order of use is known
            c.setFormula(f'=WEFT.VALUE({R};"pooled {w}";"se";"value")')
            c.getValue()
        self.assertEqual(len(fits()), start + 10)
        c.setFormula(f'=WEFT.VALUE({R};"pooled dk";"se";"value")')  # most recent: a hit
        c.getValue()
        self.assertEqual(len(fits()), start + 10)
        c.setFormula(f'=WEFT.VALUE({R};"pooled classical";"se";"value")')  # evicted
        self.assertTrue(close(c.getValue(), reference("grunfeld_pooled.json")
                              ["results"]["se"]["classical"]["value"]),
                        "grunfeld_pooled.json:results.se.classical.value")
        self.assertEqual(len(fits()), start + 11, "the ninth-oldest model was not evicted")

    def test_shuffled_rows_text_as_missing_and_no_header(self):
        """Row order does not matter, results align to the input rows, a text cell in
        a number column is a dropped row, and without a header the terms are x1, x2,
        ... (FUNCTIONS.md). Expected: grunfeld_within_lag.json (lag1_value computed
        in the test from grunfeld.csv; its 10 first-year rows hold the text "none")."""
        header, rows = grunfeld()
        lag = {(r[0], r[1] + 1): r[3] for r in rows}
        table = [r + [lag.get((r[0], r[1]), "none")] for r in rows]
        rnd = random.Random(20261202)
        rnd.shuffle(table)
        put_rows(self.sheet, 0, 0, [header + ["lag value"]] + table)
        ref = reference("grunfeld_within_lag.json")
        res = ref["results"]
        # no header: ranges from row 2
        est = self.cell("H1:N4")
        est.setArrayFormula(f"=WEFT.ESTIMATES(C2:C{LAST};D2:F{LAST};A2:A{LAST};B2:B{LAST};"
                            '"within cluster")')
        resid = self.cell(f"P2:P{LAST}")
        resid.setArrayFormula(f"=WEFT.RESIDUALS(C2:C{LAST};D2:F{LAST};A2:A{LAST};B2:B{LAST};"
                              '"within")')
        fitted = self.cell(f"Q2:Q{LAST}")
        fitted.setArrayFormula(f"=WEFT.FITTED(C2:C{LAST};D2:F{LAST};A2:A{LAST};B2:B{LAST};"
                               '"within")')
        dropped = self.cell("S1")
        dropped.setFormula(f'=WEFT.VALUE(C1:C{LAST};D1:F{LAST};A1:A{LAST};B1:B{LAST};'
                           '"within";"rows-dropped")')
        self.doc.calculateAll()
        rows_out = est.getDataArray()
        self.assertEqual([r[0] for r in rows_out[1:]], ["x1", "x2", "x3"])
        for r, t in zip(rows_out[1:], ref["regressors_estimated"]):
            self.assertTrue(close(r[1], res["coef"][t]), f"grunfeld_within_lag.json:coef.{t}")
            self.assertTrue(close(r[2], res["se"]["CR1"][t]),
                            f"grunfeld_within_lag.json:se.CR1.{t}")
        self.assertEqual(dropped.getValue(), ref["sample"]["n_rows_dropped_missing"],
                         "grunfeld_within_lag.json:sample.n_rows_dropped_missing")
        e = [v[0] for v in resid.getDataArray()]
        f = [v[0] for v in fitted.getDataArray()]
        # within the used rows of each firm: fitted + residual = inv - mean of inv
        used = [i for i, row in enumerate(table) if row[5] != "none"]
        self.assertEqual(sorted(i for i, v in enumerate(e) if v != ""), used)
        means = {}
        for i in used:
            means.setdefault(table[i][0], []).append(table[i][2])
        for i in used:
            want = table[i][2] - sum(means[table[i][0]]) / len(means[table[i][0]])
            self.assertAlmostEqual(e[i] + f[i], want, delta=1e-9 * max(1.0, abs(want)),
                                   msg=f"input row {i + 2}: computed in the test from "
                                   "grunfeld.csv")
        self.assertTrue(close(sum(v * v for v in e if v != ""), res["rss"]),
                        "grunfeld_within_lag.json:results.rss")

    def test_joint_terms_from_a_range(self):
        """FUNCTIONS.md: terms is a text list or a range of names."""
        self.cell("T1").setString("value")
        self.cell("T2").setString("capital")
        block = self.cell("H1:I7")
        block.setArrayFormula(f'=WEFT.JOINT({R};"within";T1:T2)')
        self.doc.calculateAll()
        got = {r[0]: r[1] for r in block.getDataArray()}
        w = reference("grunfeld_within.json")["results"]["wald_subset"]["classical"]
        self.assertTrue(close(got["chi-square"], w["wald_chi2"]),
                        "grunfeld_within.json:results.wald_subset.classical.wald_chi2")
        self.assertTrue(close(got["F"], w["F"]),
                        "grunfeld_within.json:results.wald_subset.classical.F")

    def test_whole_column_references(self):
        """Whole columns pass 1,048,576 rows; the add-in trims the blank tail.
        (Calc's own conversion of such ranges takes about a second per column.)"""
        c = self.cell("H1")
        c.setFormula('=WEFT.VALUE(C:C;D:E;A:A;B:B;"within";"estimate";"capital")')
        self.assertTrue(close(c.getValue(), WITHIN["coef"]["capital"]),
                        "grunfeld_within.json:results.coef.capital")
        n = self.cell("H2")
        n.setFormula('=WEFT.VALUE(C:C;D:E;A:A;B:B;"within";"n")')
        self.assertEqual(n.getValue(), 200.0, "grunfeld_within.json:sample.nobs")

    def test_saved_workbook_stores_the_service_name_and_recalculates_on_load(self):
        self.cell("H1").setFormula(f'=WEFT.VALUE({R};"within";"estimate";"value")')
        self.doc.calculateAll()
        path = os.path.join(OFFICE.work_dir, "saved.ods")
        OFFICE.save_as(self.doc, path)
        with zipfile.ZipFile(path) as z:
            entries = [(i, z.read(i.filename)) for i in z.infolist()]
        content = dict((i.filename, data) for i, data in entries)["content.xml"].decode()
        # a typed WEFT.VALUE is the cell-range twin since 0.4 (XCalcFunctions.idl)
        self.assertIn("of:=ORG.WEFT.CALCFUNCTIONS.SHEETVALUE(", content,
                      "the stored name is the file-format contract (CALC-ADDIN.md)")
        # Put a wrong cached result into the file: a workbook recalculated on load
        # shows the reference value instead.
        cell = re.search(r'<table:table-cell table:formula="of:=ORG\.WEFT\.CALCFUNCTIONS'
                         r'\.SHEETVALUE\([^"]*"[^>]*>.*?</table:table-cell>', content)
        self.assertIsNotNone(cell, "the formula cell was not found in content.xml")
        stale = re.sub(r'office:value="[^"]*"', 'office:value="12345"', cell.group(0))
        stale = re.sub(r"<text:p>.*?</text:p>", "<text:p>12345</text:p>", stale)
        self.assertIn('office:value="12345"', stale, "the cached result was not replaced")
        content = content.replace(cell.group(0), stale)
        edited = os.path.join(OFFICE.work_dir, "stale.ods")
        with zipfile.ZipFile(edited, "w") as z:
            for info, data in entries:
                if info.filename == "content.xml":
                    data = content.encode()
                z.writestr(info, data)
        os.chmod(edited, 0o644)
        doc2 = OFFICE.load(edited)
        try:
            value = doc2.Sheets.getByIndex(0).getCellRangeByName("H1").getValue()
            self.assertTrue(close(value, WITHIN["coef"]["value"]),
                            f"got {value} after loading: grunfeld_within.json:results.coef.value")
        finally:
            doc2.close(True)

    def test_xlsx_round_trip(self):
        """An .xlsx stores ORG.WEFT.CALCFUNCTIONS.<METHOD> too and computes on load."""
        self.cell("H1").setFormula(f'=WEFT.VALUE({R};"within";"estimate";"value")')
        self.cell("H3:N5").setArrayFormula(f'=WEFT.ESTIMATES({R};"within")')
        self.doc.calculateAll()
        path = os.path.join(OFFICE.work_dir, "saved.xlsx")
        OFFICE.save_as(self.doc, path, "Calc Office Open XML")
        with zipfile.ZipFile(path) as z:
            sheet = z.read("xl/worksheets/sheet1.xml").decode()
        self.assertIn("ORG.WEFT.CALCFUNCTIONS.SHEETVALUE(", sheet)
        self.assertIn("ORG.WEFT.CALCFUNCTIONS.SHEETESTIMATES(", sheet)
        doc2 = OFFICE.load(path)
        try:
            s2 = doc2.Sheets.getByIndex(0)
            src = "grunfeld_within.json:results.coef"
            self.assertTrue(close(s2.getCellRangeByName("H1").getValue(),
                                  WITHIN["coef"]["value"]), src + ".value")
            self.assertEqual(s2.getCellRangeByName("H5").getString(), "capital")
            self.assertTrue(close(s2.getCellRangeByName("I5").getValue(),
                                  WITHIN["coef"]["capital"]), src + ".capital")
        finally:
            doc2.close(True)


if __name__ == "__main__":
    unittest.main(verbosity=2)
