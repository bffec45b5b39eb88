#!/usr/bin/env python3
"""The README's example (cabi/python/example.py) runs, and on its invented data the 95%
intervals of the fd fit cover the slopes the data were generated with (-40 for price,
3 for oven_hours, set in the example), and fd leaves one row per bakery (40) without a
residual. The example's seed is fixed, so this is deterministic."""
import os
import subprocess
import sys
import unittest

import support


class Example(unittest.TestCase):
    def test_readme_example(self):
        env = dict(os.environ, PYTHONPATH=support.PACKAGE_DIR)
        run = subprocess.run([sys.executable, os.path.join(support.PACKAGE_DIR, "example.py")],
                             env=env, capture_output=True, text=True, check=True)
        lines = run.stdout.splitlines()
        rows = {line.split()[0]: [float(v) for v in line.split()[1:]] for line in lines[2:4]}
        for term, truth in (("price", -40.0), ("oven_hours", 3.0)):
            low, high = rows[term][4], rows[term][5]
            self.assertTrue(low < truth < high, f"{term}: interval ({low}, {high}) misses {truth}")
        self.assertEqual(lines[4], "df: 39 (G-1)")
        self.assertEqual(lines[-1], "rows without a residual: 40")


if __name__ == "__main__":
    unittest.main()
