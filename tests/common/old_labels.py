"""Wording weft must not show (issue 21; FUNCTIONS.md "Labels"): the fit measures named
within / between / overall, the old interval headers of the estimates table, the
pattern of a lower or upper end word directly followed by a percentage, and the old
Hausman and unit-effects notes. Shared by tests/cabi/check_labels.py and
tests/calc/test_labels.py. old_wording(text) lists the patterns a text matches.
"""

import re

OLD_WORDING = [
    # fit measures named for the three views of one well-known program's panel output
    re.compile(r"r-?squared[\s_-]*(within|between|overall)", re.I),
    re.compile(r"\b(within|between|overall)[\s_-]*r-?squared", re.I),
    re.compile(r"\br-?2[\s_-]*(within|between|overall)\b", re.I),
    # the old header words of the interval columns (the value words ci-low and
    # ci-high of WEFT.VALUE stay: they are not headers)
    re.compile(r"\bci\s+(low|high)\b", re.I),
    # the lower or upper end word directly followed by a percentage
    re.compile(r"\b(lower|upper|low|high)\s*\d+(\.\d+)?\s*%", re.I),
    # the old Hausman note and the old unit-effects line
    re.compile(r"V_?within\s*-\s*V_?random", re.I),
    re.compile(r"is not positive definite", re.I),
    re.compile(r"all unit effects are zero", re.I),
]


# the value words the three fit measures had before 0.3.0 (refused since, WEFT_EMODEL)
OLD_VALUE_WORDS = ["r2-" + view for view in ("within", "between", "overall")]


def old_wording(text):
    """The old patterns that text matches (empty when it has none)."""
    return [p.pattern for p in OLD_WORDING if p.search(text or "")]
