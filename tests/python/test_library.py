#!/usr/bin/env python3
"""Where the package finds libweft, in order: WEFT_LIBRARY when set (and nothing else
when it is set but does not load), else libweft.so.0 in the package folder, else the
system's library path; when none works, an error naming all three places. Each case
runs in a fresh interpreter with its own environment and a copy of the package."""
import os
import shutil
import subprocess
import sys
import tempfile
import unittest

import support

LIBRARY = os.path.abspath(os.environ["WEFT_LIBRARY"])
PROBE = ("import weft\n"
         "try:\n"
         "    print('loaded', weft.library_path(), weft.version())\n"
         "except weft.LibraryError as error:\n"
         "    print('error', error)\n")


class Lookup(unittest.TestCase):
    def setUp(self):
        self.dir = tempfile.mkdtemp(prefix="weft-lookup-")
        self.package = os.path.join(self.dir, "weft")
        shutil.copytree(os.path.join(support.PACKAGE_DIR, "weft"), self.package,
                        ignore=shutil.ignore_patterns("__pycache__", "*.so*"))

    def tearDown(self):
        shutil.rmtree(self.dir)

    def probe(self, weft_library=None, library_path=None):
        env = {k: v for k, v in os.environ.items() if k not in ("WEFT_LIBRARY", "LD_LIBRARY_PATH")}
        env["PYTHONPATH"] = self.dir
        if weft_library is not None:
            env["WEFT_LIBRARY"] = weft_library
        if library_path is not None:
            env["LD_LIBRARY_PATH"] = library_path
        run = subprocess.run([sys.executable, "-c", PROBE], env=env, cwd=self.dir,
                             capture_output=True, text=True, check=True)
        return run.stdout.strip()

    def test_weft_library_first(self):
        shutil.copy(LIBRARY, os.path.join(self.package, "libweft.so.0"))
        self.assertEqual(self.probe(weft_library=LIBRARY), f"loaded {LIBRARY} 0.3.0")

    def test_bad_weft_library_is_an_error_not_a_fallback(self):
        shutil.copy(LIBRARY, os.path.join(self.package, "libweft.so.0"))
        missing = os.path.join(self.dir, "no-such-libweft.so.0")
        out = self.probe(weft_library=missing)
        self.assertTrue(out.startswith("error weft: the library named by WEFT_LIBRARY could not be loaded"), out)
        self.assertIn(missing, out)
        self.assertIn("no such file", out)
        not_a_library = os.path.join(self.dir, "weft", "__init__.py")
        out = self.probe(weft_library=not_a_library)
        self.assertIn("could not be loaded", out)
        self.assertIn(not_a_library, out)

    def test_beside_the_package_second(self):
        beside = os.path.join(self.package, "libweft.so.0")
        shutil.copy(LIBRARY, beside)
        self.assertEqual(self.probe(library_path=os.path.dirname(LIBRARY)), f"loaded {beside} 0.3.0")

    def test_system_path_third(self):
        out = self.probe(library_path=os.path.dirname(LIBRARY))
        self.assertTrue(out.startswith("loaded ") and "libweft" in out and out.endswith(" 0.3.0"), out)
        self.assertNotIn(self.package, out)

    def test_none_found_names_all_three_places(self):
        out = self.probe()
        if out.startswith("loaded"):
            # libweft is installed on this machine's library path: then the third
            # place is what must have been used
            self.assertNotIn(self.package, out)
            return
        self.assertIn("error weft: libweft.so.0 was not found; looked in: WEFT_LIBRARY (not set)", out)
        self.assertIn(f"beside the package: {os.path.join(self.package, 'libweft.so.0')}: no such file", out)
        self.assertIn("the system's library path", out)


if __name__ == "__main__":
    unittest.main()
