#!/usr/bin/env python3
"""`pip install` of cabi/python from the source tree, offline: Debian's pip with
Debian's setuptools (--no-build-isolation --no-index), into a temporary target folder;
then the installed package (not the source tree) is imported and fits the Grunfeld
panel, checked against tests/data/panel/grunfeld_pooled.json (R plm, README there).
The package folder is copied first: pip builds in place and would leave build/ and
weft.egg-info in the source tree."""
import json
import os
import shutil
import subprocess
import sys
import tempfile
import unittest

import support

CHECK = ("import json, sys, pandas, weft\n"
         "frame = pandas.read_csv(sys.argv[1])\n"
         "r = weft.fit(frame, outcome='inv', regressors=['value', 'capital'], unit='firm', period='year',"
         " model='pooled cluster')\n"
         "print(json.dumps({'file': weft.__file__, 'estimate': r.coefficients['estimate'].to_dict(),"
         " 'se': r.coefficients['se'].to_dict()}))\n")


class Install(unittest.TestCase):
    def test_pip_install_target_then_fit(self):
        work = tempfile.mkdtemp(prefix="weft-pip-")
        try:
            source, target = os.path.join(work, "source"), os.path.join(work, "target")
            shutil.copytree(support.PACKAGE_DIR, source,
                            ignore=shutil.ignore_patterns("__pycache__", "build", "*.egg-info"))
            env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}
            env["PIP_DISABLE_PIP_VERSION_CHECK"] = "1"
            subprocess.run([sys.executable, "-m", "pip", "install", "--no-build-isolation", "--no-index",
                            "--no-deps", "--target", target, source], env=env, check=True)
            env["PYTHONPATH"] = target
            run = subprocess.run([sys.executable, "-c", CHECK, os.path.join(support.DATA, "grunfeld.csv")],
                                 env=env, cwd=work, capture_output=True, text=True, check=True)
            got = json.loads(run.stdout)
            self.assertTrue(got["file"].startswith(os.path.join(target, "weft")), got["file"])
            results = support.reference("grunfeld_pooled")["results"]
            for term, want in results["coef"].items():
                support.close(self, got["estimate"][term], want, 1e-9, f"estimate {term}")
                support.close(self, got["se"][term], results["se"]["CR1"][term], 1e-9, f"se {term}")
        finally:
            shutil.rmtree(work)


if __name__ == "__main__":
    unittest.main()
