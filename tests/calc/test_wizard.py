"""End-to-end: the function-wizard texts of every WEFT.* function, read back
through the office's FunctionDescriptions service, and the add-in's own XAddIn
answers (category, programmatic names).

Expected names and argument order: FUNCTIONS.md (the cell contract). Calc 7.4
files every add-in whose category is not one of its built-in ones under "Add-In"
(its category list is fixed), so the wizard shows weft's functions there; the
add-in's own display category is "weft panel data".
Run: WEFT_OXT=build/addin/weft.oxt /usr/bin/python3 tests/calc/test_wizard.py
"""

import atexit
import os
import shutil
import tempfile
import unittest
import zipfile

# A Python client that receives the add-in object needs the add-in's type library
# (CALC-ADDIN.md): UNO_TYPES must be set before `uno` is imported.
_oxt = os.environ.get("WEFT_OXT", "")
_types_dir = tempfile.mkdtemp(prefix="weft-types-")
atexit.register(shutil.rmtree, _types_dir, True)
if os.path.isfile(_oxt):
    with zipfile.ZipFile(_oxt) as z:
        z.extract("weft.rdb", _types_dir)
    _prog = os.environ.get("WEFT_OFFICE_PROGRAM", "/usr/lib/libreoffice/program")
    os.environ["UNO_TYPES"] = " ".join(
        "file://" + p for p in [f"{_prog}/types.rdb", f"{_prog}/types/offapi.rdb",
                                os.path.join(_types_dir, "weft.rdb")])

from calc_helpers import Office, oxt_path  # noqa: E402

PANEL = ["outcome", "regressors", "units", "periods", "model"]
# FUNCTIONS.md: display name -> argument names in order
CONTRACT = {
    "WEFT.ESTIMATES": PANEL, "WEFT.SUMMARY": PANEL,
    "WEFT.VALUE": PANEL + ["what", "term"],
    "WEFT.RESIDUALS": PANEL, "WEFT.FITTED": PANEL,
    "WEFT.JOINT": PANEL + ["terms"],
    "WEFT.HETERO": PANEL + ["form"],
    "WEFT.SERIAL": PANEL, "WEFT.HAUSMAN": PANEL, "WEFT.EFFECTS": PANEL,
    "WEFT.DIFF": ["values", "units", "periods", "k"],
    "WEFT.LAG": ["values", "units", "periods", "k"],
    "WEFT.DEMEAN": ["values", "units"],
    "WEFT.DUMMIES": ["periods", "omit_first"],
    "WEFT.PANEL": ["units", "periods"],
    "WEFT.VERSION": [],
    # The fit cell (README "The fit cell"): added functions, FUNCTIONS.md unchanged.
    "WEFT.FIT": PANEL,
    "WEFT.FIT.ESTIMATES": ["fit"], "WEFT.FIT.SUMMARY": ["fit"],
    "WEFT.FIT.VALUE": ["fit", "what", "term"],
    "WEFT.FIT.RESIDUALS": ["fit"], "WEFT.FIT.FITTED": ["fit"],
    "WEFT.FIT.JOINT": ["fit", "terms"], "WEFT.FIT.HETERO": ["fit", "form"],
    "WEFT.FIT.SERIAL": ["fit"], "WEFT.FIT.HAUSMAN": ["fit"], "WEFT.FIT.EFFECTS": ["fit"],
    # FUNCTIONS.md "Few-cluster inference"
    "WEFT.BOOTSTRAP": PANEL + ["term", "settings"],
    "WEFT.FIT.BOOTSTRAP": ["fit", "term", "settings"],
    # Policy evaluation (FUNCTIONS.md)
    "WEFT.EVENT": ["outcome", "treatment", "units", "periods", "controls", "design"],
    "WEFT.DID": ["outcome", "treatment", "units", "periods", "controls", "design"],
}
# Calc marks every argument of type `any` optional: FUNCTIONS.md's [optional] ones,
# and VALUE's what, an `any` so that a missing one gets a weft: message.
# The fit argument is an `any` too (a cell's text), so Calc marks it optional; a
# missing one gets a weft: message.
OPTIONAL = {"model", "term", "terms", "form", "k", "omit_first", "what", "fit", "controls", "design",
            "settings"}
ADDIN_CATEGORY = 11  # Calc's ID_FUNCTION_GRP_ADDINS ("Add-In")


def setUpModule():
    global OFFICE
    OFFICE = Office(extensions=[oxt_path()], timeout=300)
    OFFICE.__enter__()


def tearDownModule():
    OFFICE.stop()


class WizardTests(unittest.TestCase):

    def test_function_descriptions(self):
        fd = OFFICE.service("com.sun.star.sheet.FunctionDescriptions")
        found = {}
        for i in range(fd.getCount()):
            d = {p.Name: p.Value for p in fd.getByIndex(i)}
            if d["Name"].startswith("WEFT."):
                found[d["Name"]] = d
        self.assertEqual(sorted(found), sorted(CONTRACT), "FUNCTIONS.md function names")
        for name, args in CONTRACT.items():
            d = found[name]
            with self.subTest(function=name):
                self.assertEqual(d["Category"], ADDIN_CATEGORY)
                self.assertGreater(len(d["Description"]), 30, d["Description"])
                got = list(d["Arguments"] or ())
                self.assertEqual([a.Name for a in got], args, "FUNCTIONS.md argument order")
                for a in got:
                    self.assertGreater(len(a.Description), 15, f"{name} {a.Name}")
                    self.assertEqual(a.IsOptional, a.Name in OPTIONAL, f"{name} {a.Name}")

    def test_addin_answers_directly(self):
        addin = OFFICE.service("org.weft.CalcFunctions")
        self.assertIsNotNone(addin)
        self.assertEqual(addin.getServiceName(), "org.weft.CalcFunctions")
        self.assertTrue(addin.supportsService("com.sun.star.sheet.AddIn"))
        for name in CONTRACT:
            method = addin.getProgrammaticFuntionName(name.lower())
            self.assertEqual(addin.getDisplayFunctionName(method), name)
            self.assertEqual(addin.getDisplayCategoryName(method), "weft panel data")
            self.assertEqual(addin.getProgrammaticCategoryName(method), "Add-In")
        self.assertEqual(addin.getDisplayArgumentName("estimates", 4), "model")
        self.assertEqual(addin.getDisplayArgumentName("estimates", 9), "")
        self.assertEqual(addin.getFunctionDescription("no-such-function"), "")


if __name__ == "__main__":
    unittest.main(verbosity=2)
