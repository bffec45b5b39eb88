"""End-to-end: WEFT.EVENT and WEFT.DID in headless Calc against the independent R
computation of tests/event/event_reference.R (base R lm and sandwich, written from
Callaway and Sant'Anna 2021, Sant'Anna and Zhao 2020 and Borusyak, Jaravel and Spiess
2024), run here on the same invented panel; and the bad timing inputs of
FUNCTIONS.md give their "weft: " messages in the cell.

The panel (seeded, invented): 30 shops with text ids over 2015..2022, staggered
adoption in 2018 and 2020, 10 never adopting, effects growing with time since adoption.
Tolerance: relative 1e-9 (absolute below magnitude 1), as in tests/event.
Run: WEFT_OXT=build/addin/weft.oxt /usr/bin/python3 tests/calc/test_event.py
"""

import json
import os
import random
import subprocess
import tempfile
import unittest

from calc_helpers import ArrayFormula, Office, oxt_path, put_rows

HERE = os.path.dirname(os.path.abspath(__file__))
R_SCRIPT = os.path.normpath(os.path.join(HERE, "..", "event", "event_reference.R"))
TOL = 1e-9


def invented_panel(seed=18):
    rnd = random.Random(seed)
    rows = [["shop", "year", "sales", "online", "staff"]]
    for i in range(30):
        start = [None, 2018, 2020][i % 3]
        a = rnd.gauss(0, 1)
        for year in range(2015, 2023):
            e = year - start if start else -1
            effect = (1 + e) * (1.5 if start == 2018 else 1.0) if start and e >= 0 else 0.0
            staff = 0.2 * a + rnd.gauss(0, 1)
            sales = 10 + a + 0.3 * (year - 2015) + 0.4 * staff + effect + rnd.gauss(0, 1)
            rows.append([f"Shop {i + 1}", year, sales, 1 if start and year >= start else 0, staff])
    return rows


def r_reference(rows, controls, comparison, anticipation, before=-1, after=-1):
    with tempfile.TemporaryDirectory() as tmp:
        csv = os.path.join(tmp, "panel.csv")
        out = os.path.join(tmp, "out.json")
        with open(csv, "w") as f:
            f.write("unit,period,y,d" + (",x1" if controls else "") + "\n")
            for r in rows[1:]:
                f.write(f"{r[0]},{r[1]},{r[2]!r},{r[3]}" + (f",{r[4]!r}" if controls else "") + "\n")
        subprocess.run(["Rscript", R_SCRIPT, csv, out, comparison, str(anticipation), str(before), str(after)],
                       check=True, capture_output=True)
        with open(out) as f:
            return json.load(f)


def close(a, b):
    return isinstance(a, float) and abs(a - b) <= TOL * max(1.0, abs(a), abs(b))


def setUpModule():
    global OFFICE
    OFFICE = Office(extensions=[oxt_path()], timeout=500)
    OFFICE.__enter__()


def tearDownModule():
    OFFICE.stop()


N = 241  # header + 240 rows
RANGES = f"$data.C1:C{N};$data.D1:D{N};$data.A1:A{N};$data.B1:B{N}"


class EventCellTests(unittest.TestCase):

    @classmethod
    def setUpClass(cls):
        cls.rows = invented_panel()
        cls.doc = OFFICE.new_calc()
        sheets = cls.doc.Sheets
        sheets.getByIndex(0).Name = "data"
        put_rows(sheets.getByName("data"), 0, 0, cls.rows)
        sheets.insertNewByName("out", 1)
        cls.out = sheets.getByName("out")
        cls.next_row = 0

    def block(self, nrows, ncols, formula):
        f = ArrayFormula(self.out, 0, self.next_row, nrows, ncols, formula)
        type(self).next_row += nrows + 2
        self.doc.calculateAll()
        return f.values()

    def check_event(self, cells, ref, what):
        self.assertEqual(cells[0][:3], ["event time", "estimate", "std error"], what)
        by_e = {row["e"]: row for row in ref["event"]}
        seen = 0
        for row in cells[1:]:
            e = int(row[0])
            if row[2] == "reference":
                self.assertEqual(row[1], 0.0)
                continue
            if row[1] == "not estimated":
                self.assertNotIn(e, by_e, what)
                continue
            seen += 1
            self.assertTrue(close(row[1], by_e[e]["est"]), f"{what} e={e}: {row[1]} vs {by_e[e]['est']}")
            self.assertTrue(close(row[2], by_e[e]["se"]), f"{what} e={e}: {row[2]} vs {by_e[e]['se']}")
        self.assertEqual(seen, len(by_e), what)

    def test_event_three_estimators(self):
        ref = r_reference(self.rows, False, "never", 0)
        # event times -5 .. 4 (2020 cohort from 2015; 2018 cohort to 2022): 10 rows + header
        for word, key in [("group-time", "group_time"), ("imputation", "imputation"), ("twfe", "twfe")]:
            cells = self.block(11, 8, f'=WEFT.EVENT({RANGES};;"{word}")')
            self.check_event(cells, ref[key], word)

    def test_did_with_controls(self):
        ref = r_reference(self.rows, True, "not-yet", 1)
        items = self.block(30, 2, f'=WEFT.DID({RANGES};$data.E1:E{N};"not-yet anticipation=1")')
        values = {row[0]: row[1] for row in items if row[0]}
        gt = ref["group_time"]
        self.assertTrue(close(values["average effect on the treated"], gt["overall"]["est"]), values)
        self.assertTrue(close(values["std error"], gt["overall"]["se"]), values)
        for c in gt["cohorts"]:
            self.assertTrue(close(values[f"cohort {c['cohort']}"], c["est"]), (values, c))
        self.assertTrue(close(values["pre-treatment test chi-square"], gt["pre"]["stat"]), values)
        self.assertEqual(values["pre-treatment test df"], float(gt["pre"]["df"]))
        self.assertEqual(values["units"], 30.0)
        self.assertEqual(values["treated units"], 20.0)
        self.assertEqual(values["cohorts"], 2.0)
        cells = self.block(11, 8, f'=WEFT.EVENT({RANGES};$data.E1:E{N};"not-yet anticipation=1")')
        self.check_event(cells, gt, "group-time with controls")

    def test_twfe_warns_under_staggered_adoption(self):
        items = self.block(30, 2, f'=WEFT.DID({RANGES};;"twfe")')
        warnings = [row[1] for row in items if row[0] == "warning"]
        self.assertTrue(any("staggered" in w for w in warnings), items)

    def test_bad_timing_inputs(self):
        sheets = self.doc.Sheets
        cases = []

        def sheet_with(name, change):
            rows = [r[:] for r in self.rows]
            change(rows)
            sheets.insertNewByName(name, sheets.Count)
            put_rows(sheets.getByName(name), 0, 0, rows)
            return f"${name}.C1:C{len(rows)};${name}.D1:D{len(rows)};${name}.A1:A{len(rows)};${name}.B1:B{len(rows)}"

        def set_cell(r, c, v):
            return lambda rows: rows[r].__setitem__(c, v)

        cases.append((sheet_with("half", set_cell(5, 3, 0.5)), "", ["treatment in row 6 is 0.5", "0 (untreated) or 1"]))
        # Shop 2 (sheet rows 10..17, adopts 2018 in row 13) back to 0 in 2021 (row 16)
        cases.append((sheet_with("back", set_cell(15, 3, 0)), "",
                      ['unit "Shop 2" is treated from period 2018', "untreated again in period 2021"]))
        cases.append((sheet_with("dup", lambda rows: rows.append(["Shop 2", 2019, 5.0, 0, 0.1])), "",
                      ['treatment varies inside unit "Shop 2" in period 2019']))
        cases.append((sheet_with("word", set_cell(7, 3, "yes")), "", ['holds the text "yes"', "give 0"]))
        cases.append((RANGES, "sideways", ['unknown word "sideways"', "group-time"]))
        cases.append((RANGES, "twfe before=0", ["twfe needs before= at least"]))
        cells = []
        for i, (ranges, design, _) in enumerate(cases):
            c = self.out.getCellByPosition(12, i)
            c.setFormula(f'=WEFT.EVENT({ranges};;"{design}")')
            cells.append(c)
        self.doc.calculateAll()
        failures = []
        for (ranges, design, fragments), c in zip(cases, cells):
            text = c.getString()
            if not text.startswith("weft: ") or any(f not in text for f in fragments):
                failures.append(f"{ranges} {design!r}: {text!r} lacks {fragments}")
        self.assertFalse(failures, "\n".join(failures))

    def test_unit_treated_from_the_first_period_is_left_out(self):
        rows = [r[:] for r in self.rows]
        for k in range(1, 9):  # Shop 1 (never treated) becomes treated from 2015 on
            rows[k][3] = 1
        sheets = self.doc.Sheets
        sheets.insertNewByName("start", sheets.Count)
        put_rows(sheets.getByName("start"), 0, 0, rows)
        rng = f"$start.C1:C{N};$start.D1:D{N};$start.A1:A{N};$start.B1:B{N}"
        items = self.block(30, 2, f"=WEFT.DID({rng})")
        values = {row[0]: row[1] for row in items if row[0]}
        self.assertEqual(values["units"], 29.0)
        warnings = [row[1] for row in items if row[0] == "warning"]
        self.assertTrue(any('"Shop 1"' in w and "left out" in w for w in warnings), items)


if __name__ == "__main__":
    unittest.main(verbosity=2)
