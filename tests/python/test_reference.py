#!/usr/bin/env python3
"""weft.fit on the Grunfeld panel against the reference values of tests/data/panel
(R 4.2.2 with plm 2.6.2, sandwich 3.0.2 and lmtest 0.9.40; every value recomputed in
mpmath at 40 digits, README there): pooled, fd, within, random and between, with and
without period indicators, under every covariance family weft has, to relative 1e-9.

Mapping of weft's covariance words to the reference keys (CONVENTIONS.md, as
tests/core/test_grunfeld.cpp): classical, hc0 HC0, hc1 HC1 (within: HC1_lsdv, weft
counts the absorbed unit effects), hc2 HC2, hc3 HC3, cluster CR1, cluster0 CR0,
cluster-period CR1_period, cluster-both CR1_both_clipped where the file has it (weft
clips a covariance that is not positive semi-definite) else CR1_both, dk DK."""
import unittest

import support
import weft

TOL = 1e-9
CASES = [
    ("grunfeld_pooled", "pooled"),
    ("grunfeld_pooled_period_dummies", "pooled periods"),
    ("grunfeld_pooled_no_intercept", "pooled no-intercept"),
    ("grunfeld_fd", "fd"),
    ("grunfeld_fd_period_dummies", "fd periods"),
    ("grunfeld_fd_no_intercept", "fd no-intercept"),
    ("grunfeld_within", "within"),
    ("grunfeld_within_period_dummies", "within periods"),
    ("grunfeld_within_lag", "within"),
    ("grunfeld_random", "random"),
    ("grunfeld_random_period_dummies", "random periods"),
    ("grunfeld_between", "between"),
]
# weft word, reference key, key of the F form's df in results.wald_subset
FAMILIES = [("classical", "classical", "F_df_resid"), ("hc0", "HC0", "F_df_resid"),
            ("hc1", "HC1", "F_df_resid"), ("hc2", "HC2", "F_df_resid"),
            ("hc3", "HC3", "F_df_resid"), ("cluster", "CR1", "F_df_G_minus_1"),
            ("cluster0", "CR0", "F_df_G_minus_1"),
            ("cluster-period", "CR1_period", "F_df_Gperiod_minus_1"),
            ("cluster-both", "CR1_both", "F_df_Gmin_minus_1"), ("dk", "DK", "F_df_T_minus_1")]


def frame_for(ref):
    """The Grunfeld frame, with lag1_value when the case asks for it: value one grid
    period (one year here: no firm skips a year) earlier in the same firm (README of
    tests/data/panel, "Lags")."""
    frame = support.grunfeld()
    if ref.get("lags"):
        earlier = frame[["firm", "year", "value"]].assign(year=frame["year"] + 1)
        frame = frame.merge(earlier.rename(columns={"value": "lag1_value"}), on=["firm", "year"], how="left")
    return frame


def key_for(ref, key):
    if ref["method"] == "within" and key == "HC1":
        return "HC1_lsdv"
    if key == "CR1_both" and "CR1_both_clipped" in ref["results"]["se"]:
        return "CR1_both_clipped"
    return key


class Reference(unittest.TestCase):
    def check_family(self, ref, frame, model, word, key, f_key):
        res = ref["results"]
        names = ref["regressors_estimated"]
        regressors = [n for n in names if n != "intercept" and not n.startswith("period_")]
        result = weft.fit(frame, outcome=ref["y"], regressors=regressors, unit="firm", period="year",
                          model=f"{model} {word}")
        # The clipped two-way covariance: rounding of its eigendecomposition carries
        # about 1e-9 relative noise into small variances (tests/core/test_grunfeld.cpp),
        # so its inference is held to 1e-8 and its Wald test to 1e-7 (1e-6 for the tail
        # probabilities, as tests/spec/test_spec_reference.cpp): own tolerances, no source.
        clipped = key == "CR1_both_clipped"
        tol = 1e-8 if clipped else TOL
        table = result.coefficients
        self.assertEqual(list(table.index), [support.weft_term(n) for n in names])
        self.assertEqual(list(table.columns), ["estimate", "se", "t", "p", "interval_from", "interval_to"])
        inference = res["inference"][key]
        for n in names:
            row = table.loc[support.weft_term(n)]
            support.close(self, row["estimate"], res["coef"][n], TOL, f"estimate {n}")
            support.close(self, row["se"], res["se"][key][n], tol, f"se {n}")
            support.close(self, row["t"], inference["t"][n], tol, f"t {n}")
            support.close(self, row["p"], inference["p"][n], tol, f"p {n}")
            support.close(self, row["interval_from"], inference["ci95_low"][n], tol, f"interval_from {n}")
            support.close(self, row["interval_to"], inference["ci95_high"][n], tol, f"interval_to {n}")
        if key in res["vcov"]:
            order = [support.weft_term(n) for n in res["vcov"]["order"]]
            for a, row in zip(order, res["vcov"][key]):
                for b, want in zip(order, row):
                    support.close(self, result.covariance.loc[a, b], want, TOL, f"covariance {a}, {b}")
        self.assertEqual(result.summary["observations used"], ref["sample"]["nobs"])
        self.assertEqual(result.summary["residual df"], res["df_residual"])
        self.assertEqual(result.value("df"), inference["df"])
        support.close(self, result.summary["residual std deviation"], res["sigma"], TOL, "sigma")
        self.check_joint(ref, result, key, f_key)

    def check_joint(self, ref, result, key, f_key):
        wald = ref["results"]["wald_subset"]
        if key not in wald:
            return
        tol, p_tol = (1e-7, 1e-6) if key == "CR1_both_clipped" else (TOL, TOL)
        want = wald[key]
        got = result.joint([support.weft_term(n) for n in ref["wald_subset_coefs"]])
        support.close(self, got.chi2, want["wald_chi2"], tol, "Wald chi-square")
        self.assertEqual(got.chi2_df, want["q"])
        support.close(self, got.chi2_p, want["p_chi2"], p_tol, "Wald chi-square p")
        support.close(self, got.f, want["F"], tol, "Wald F")
        f_form = want.get(f_key, want["F_df_resid"])
        self.assertEqual((got.f_df1, got.f_df2), (f_form["df1"], f_form["df2"]))
        support.close(self, got.f_p, f_form["p"], p_tol, "Wald F p")

    def test_every_case_and_covariance_family(self):
        checked = 0
        for case, model in CASES:
            ref = support.reference(case)
            frame = frame_for(ref)
            for word, key, f_key in FAMILIES:
                key = key_for(ref, key)
                if key not in ref["results"]["se"]:
                    continue  # between: the file has classical and HC only
                with self.subTest(case=case, covariance=word):
                    self.check_family(ref, frame, model, word, key, f_key)
                    checked += 1
        # 11 cases with all 10 families, between with 5: a case silently skipped fails
        self.assertEqual(checked, 11 * 10 + 5)

    def test_fit_measures(self):
        # R-squared as the reference defines it per estimator (tests/core/test_grunfeld.cpp)
        for case, model, item, key in [
                ("grunfeld_pooled", "pooled", "R-squared", "r_squared"),
                ("grunfeld_fd", "fd", "R-squared", "r_squared"),
                ("grunfeld_between", "between", "R-squared", "r_squared"),
                ("grunfeld_within", "within", "R-squared", "r_squared_within"),
                ("grunfeld_random", "random", "R-squared", "r_squared_rss"),
                ("grunfeld_within", "within",
                 "squared correlation of outcome and slope prediction, unit means", "r_squared_between_corr2"),
                ("grunfeld_random", "random",
                 "squared correlation of outcome and slope prediction, all rows", "r_squared_overall_corr2")]:
            with self.subTest(case=case, item=item):
                ref = support.reference(case)
                result = weft.fit(frame_for(ref), "inv", ["value", "capital"], "firm", "year", model)
                support.close(self, result.summary[item], ref["results"][key], TOL, item)
        ref = support.reference("grunfeld_random")["results"]["random_effects"]
        result = weft.fit(support.grunfeld(), "inv", ["value", "capital"], "firm", "year", "random")
        support.close(self, result.summary["idiosyncratic variance"], ref["sigma2_idios"], TOL, "sigma2_idios")
        support.close(self, result.summary["unit effect variance"], ref["sigma2_id"], TOL, "sigma2_id")


if __name__ == "__main__":
    unittest.main()
