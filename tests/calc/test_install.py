"""End-to-end: scripts/install-addin.sh installs weft.oxt into a new private
profile (twice: a reinstall replaces it), and a workbook recalculated with that
profile shows results of the installed add-in, not values cached in the file.

Expected value: grunfeld_within.json results.coef.value (tests/data/panel).
Run: WEFT_OXT=build/addin/weft.oxt /usr/bin/python3 tests/calc/test_install.py
"""

import csv
import io
import os
import re
import shutil
import subprocess
import tempfile
import unittest
import zipfile

from calc_helpers import HERE, Office, close, grunfeld, oxt_path, put_rows, reference

SCRIPT = os.path.normpath(os.path.join(HERE, "..", "..", "scripts", "install-addin.sh"))
WITHIN = reference("grunfeld_within.json")["results"]


def make_stale(path_in, path_out, fake="12345"):
    """Copy an .ods, replacing the cached result of every WEFT formula cell."""
    with zipfile.ZipFile(path_in) as z:
        entries = [(i, z.read(i.filename)) for i in z.infolist()]
    out = []
    replaced = 0
    for info, data in entries:
        if info.filename == "content.xml":
            text = data.decode()

            def stale(m):
                nonlocal replaced
                replaced += 1
                cell = re.sub(r'office:value="[^"]*"', f'office:value="{fake}"', m.group(0))
                return re.sub(r"<text:p>.*?</text:p>", f"<text:p>{fake}</text:p>", cell)
            text = re.sub(r'<table:table-cell table:formula="of:=ORG\.WEFT\.CALCFUNCTIONS\.(?:SHEET)?VALUE'
                          r'\([^"]*"[^>]*>.*?</table:table-cell>', stale, text)
            data = text.encode()
        out.append((info, data))
    with zipfile.ZipFile(path_out, "w") as z:
        for info, data in out:
            z.writestr(info, data)
    os.chmod(path_out, 0o644)
    return replaced


class InstallScriptTests(unittest.TestCase):

    def setUp(self):
        self.tmp = tempfile.mkdtemp(prefix="weft-install-test-")
        os.chmod(self.tmp, 0o755)

    def tearDown(self):
        shutil.rmtree(self.tmp, ignore_errors=True)

    def run_script(self, *args):
        return subprocess.run(["bash", SCRIPT, "--oxt", oxt_path(),
                               "--profile", os.path.join(self.tmp, "profile"), *args],
                              stdin=subprocess.DEVNULL, capture_output=True, text=True,
                              timeout=300)

    def test_install_reinstall_and_recalculate_a_workbook(self):
        # A workbook with a weft formula, saved by an office that has the add-in.
        book = os.path.join(self.tmp, "book.ods")
        with Office(extensions=[oxt_path()], timeout=300) as office:
            doc = office.new_calc()
            sheet = doc.Sheets.getByIndex(0)
            header, rows = grunfeld()
            put_rows(sheet, 0, 0, [header] + rows)
            sheet.getCellRangeByName("G1").setFormula(
                '=WEFT.VALUE(C1:C201;D1:E201;A1:A201;B1:B201;"within";"estimate";"value")')
            doc.calculateAll()
            saved = os.path.join(office.work_dir, "book.ods")
            office.save_as(doc, saved)
            doc.close(True)
            shutil.copyfile(saved, book)
        stale = os.path.join(self.tmp, "stale.ods")
        self.assertEqual(make_stale(book, stale), 1, "the formula cell was not found")

        first = self.run_script()
        self.assertEqual(first.returncode, 0, first.stdout + first.stderr)
        self.assertIn("Installed.", first.stdout)
        again = self.run_script("--print-csv", stale)
        self.assertEqual(again.returncode, 0, again.stdout + again.stderr)
        body = again.stdout[again.stdout.index("[workbook.ods]") + len("[workbook.ods]"):]
        table = list(csv.reader(io.StringIO(body.strip())))
        self.assertEqual(table[0][:5], ["firm", "year", "inv", "value", "capital"])
        value = float(table[0][6])
        # CSV export writes the cell as shown (standard format: up to 10 digits)
        self.assertTrue(close(value, WITHIN["coef"]["value"], rel=1e-8),
                        f"{table[0][6]} vs grunfeld_within.json:results.coef.value")
        self.assertNotEqual(table[0][6], "12345")

    def test_missing_package_is_reported(self):
        res = subprocess.run(["bash", SCRIPT, "--oxt", os.path.join(self.tmp, "none.oxt"),
                              "--profile", os.path.join(self.tmp, "p")],
                             stdin=subprocess.DEVNULL, capture_output=True, text=True,
                             timeout=60)
        self.assertNotEqual(res.returncode, 0)
        self.assertIn("not found", res.stderr)


if __name__ == "__main__":
    unittest.main(verbosity=2)
