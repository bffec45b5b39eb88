"""The clipped two-way covariance of the Grunfeld reference cases, clipped in the scaled
basis (CONVENTIONS.md "Decisions that must not depend on units of measure"; issue 15).

The reference set's CR1_both_clipped (R sandwich, vcovCL(fix = TRUE)) clips V in its own
units; weft clips D V D, D = diag(V_unit + V_period)^-1/2. with_scaled_clip(case, ref,
data_dir) replaces the CR1_both_clipped entries of a reference (se, inference and the
wald_subset test of value and capital) by tests/data/panel/grunfeld_twoway_clip.json
(R, tests/oracle/oracle_reference.R with the scaled clip, written by
tests/oracle/grunfeld_twoway.py). Shared by tests/python and tests/calc.
"""
import json
import os


def _json_name(term):
    return "period_" + term[len("period "):] if term.startswith("period ") else term


def with_scaled_clip(case, ref, data_dir):
    res = ref.get("results", {})
    if "CR1_both_clipped" not in res.get("se", {}):
        return ref
    with open(os.path.join(data_dir, "grunfeld_twoway_clip.json"), encoding="utf-8") as f:
        clip = json.load(f)["cases"][case]
    key = "CR1_both_clipped"
    res["se"][key] = {_json_name(t): v for t, v in clip["se"].items()}
    res["inference"][key] = {"df": clip["df"]}
    for what in ("t", "p", "ci95_low", "ci95_high"):
        res["inference"][key][what] = {_json_name(t): v for t, v in clip[what].items()}
    w = clip["wald_regressors"]
    form = {"df1": w["df1"], "df2": w["df2"], "p": w["p"]}
    res["wald_subset"][key] = {"wald_chi2": w["chi2"], "q": w["q"], "p_chi2": w["p_chi2"],
                               "F": w["F"], "F_df_Gmin_minus_1": form, "F_df_resid": form}
    return ref
