#!/usr/bin/env python3
"""A wildly scaled panel and its reference values in 50-digit arithmetic (issue 15).

Writes tests/data/panel/wild_scale.csv and tests/data/panel/wild_scale_reference.json
(run by hand from the repository root: python3 tests/oracle/highprec.py; the build never
runs it; the outputs are checked in). Every number is computed here from the papers'
formulas with Python's mpmath (Debian python3-mpmath) at 50 significant digits, written
independently of weft's code:

- OLS, classical s^2 (X'X)^-1, HC0-HC3 (MacKinnon and White 1985), CR1/CR0 by unit,
  CR1 by period, two-way (Cameron, Gelbach and Miller 2011: unit + period - cells, factor
  G_min/(G_min-1) (N-1)/(N-K)), Driscoll and Kraay (1998) with Bartlett weights
  1 - j/(L+1), L = floor(T^(1/4)), no factor;
- the Wald test that all regressors are 0 under each covariance, F on (q, df), df as
  weft's CONVENTIONS.md: N-K, G-1, G_period-1, G_min-1, T-1;
- the two-way covariance clipped by Cameron, Gelbach and Miller's (2011, section 2.3)
  rule (negative eigenvalues set to 0) in the scaled basis that CONVENTIONS.md asks for:
  S = D V D, D = diag(V_unit + V_period)^-1/2, clipped when its smallest eigenvalue is
  below -1e-10 of the largest (weft/tolerances.hpp), V = D^-1 Q max(L, 0) Q' D^-1;
- within (unit demeaning) and Swamy-Arora random effects (balanced panel: sigma2_e =
  SSR_within / (N - n - K), sigma2_u = SSR_between / (n - K_b) - sigma2_e / T, theta =
  1 - sqrt(sigma2_e / (sigma2_e + T sigma2_u)); Baltagi, Econometric Analysis of Panel
  Data, section 2.3 -- from memory) and the Hausman (1978) statistic d' (V_W - V_R)^- d
  with the classical covariances, df = rank of V_W - V_R.

Panel: 12 units, 8 periods (balanced), regressors big (about 2e9), tiny (about 1e-6) and
mid (about 1), coefficients 1e-7 (big) and 3e8 (tiny); random numbers from Python's
random module with a fixed seed.
"""
import json
import os
import random

import mpmath as mp

mp.mp.dps = 50
HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "..", "data", "panel")
NU, NT = 12, 8


def make_panel():
    rng = random.Random(15)
    rows = []
    for u in range(1, NU + 1):
        effect = rng.gauss(0, 20)
        scale_u = 1 + 0.2 * rng.random()
        for t in range(1, NT + 1):
            big = float("%.12g" % (2e9 * scale_u * (1 + 0.05 * t + 0.1 * rng.random())))
            tiny = float("%.12g" % (1e-6 * (0.5 + rng.random() + 0.02 * u)))
            mid = float("%.12g" % (rng.gauss(0, 1) + 0.1 * t))
            noise = rng.gauss(0, 5) * (1 + 0.5 * abs(mid))
            y = 1e-7 * big + 3e8 * tiny + 2.5 * mid + effect + 3.0 * t + noise
            rows.append((u, 2010 + t, float("%.12g" % y), big, tiny, mid))
    return rows


def mat(rows):
    return mp.matrix(rows)


def xtx_inv(X):
    return mp.inverse(X.T * X)


def ols(X, y):
    A = xtx_inv(X)
    b = A * (X.T * y)
    e = y - X * b
    return b, e, A


def outer_sum(vectors, K):
    M = mp.zeros(K, K)
    for v in vectors:
        M += v * v.T
    return M


def group_scores(X, e, keys):
    K = X.cols
    sums = {}
    for i, k in enumerate(keys):
        s = sums.setdefault(k, mp.zeros(K, 1))
        for j in range(K):
            s[j] += X[i, j] * e[i]
    return sums


def cluster_meat(X, e, keys):
    return outer_sum(list(group_scores(X, e, keys).values()), X.cols)


def covariances(X, e, A, units, periods):
    N, K = X.rows, X.cols
    out = {}
    s2 = sum(v * v for v in e) / (N - K)
    out["classical"] = (s2 * A, N - K)
    H = X * A * X.T
    for name in ("hc0", "hc1", "hc2", "hc3"):
        meat = mp.zeros(K, K)
        for i in range(N):
            w = e[i] ** 2
            if name == "hc2":
                w /= 1 - H[i, i]
            if name == "hc3":
                w /= (1 - H[i, i]) ** 2
            xi = X[i, :].T
            meat += w * (xi * xi.T)
        V = A * meat * A
        if name == "hc1":
            V *= mp.mpf(N) / (N - K)
        out[name] = (V, N - K)
    G, Gp = len(set(units)), len(set(periods))
    Mu, Mp = cluster_meat(X, e, units), cluster_meat(X, e, periods)
    Mc = cluster_meat(X, e, list(zip(units, periods)))
    fac = lambda g: mp.mpf(g) / (g - 1) * mp.mpf(N - 1) / (N - K)
    out["cluster"] = (fac(G) * A * Mu * A, G - 1)
    out["cluster0"] = (A * Mu * A, G - 1)
    out["cluster-period"] = (fac(Gp) * A * Mp * A, Gp - 1)
    gmin = min(G, Gp)
    both = fac(gmin) * A * (Mu + Mp - Mc) * A
    reference = fac(gmin) * A * (Mu + Mp) * A
    out["cluster-both-unclipped"] = (both, gmin - 1)
    clipped, decision = clip(both, reference)
    out["cluster-both"] = (clipped, gmin - 1)
    # Driscoll-Kraay
    T = len(set(periods))
    L = int(mp.floor(mp.root(T, 4)))
    h = group_scores(X, e, periods)
    order = sorted(h)
    meat = outer_sum([h[t] for t in order], K)
    for j in range(1, L + 1):
        w = 1 - mp.mpf(j) / (L + 1)
        G_j = mp.zeros(K, K)
        for a in range(j, len(order)):
            G_j += h[order[a]] * h[order[a - j]].T
        meat += w * (G_j + G_j.T)
    out["dk"] = (A * meat * A, T - 1)
    return out, decision


def scaled_eigen(M, reference_diag):
    n = M.rows
    d = [1 / mp.sqrt(abs(reference_diag[j])) for j in range(n)]
    S = mp.matrix(n, n)
    for a in range(n):
        for b in range(n):
            S[a, b] = d[a] * M[a, b] * d[b]
    E, Q = mp.eigsy(S)
    return [E[j] for j in range(n)], d, Q


def clip(V, reference):
    n = V.rows
    lam, d, Q = scaled_eigen(V, [reference[j, j] for j in range(n)])
    largest = max(abs(x) for x in lam)
    rel = min(lam) / largest
    if rel < mp.mpf("-1e-10"):
        C = Q * mp.diag([max(x, 0) for x in lam]) * Q.T
        W = mp.matrix(n, n)
        for a in range(n):
            for b in range(n):
                W[a, b] = C[a, b] / (d[a] * d[b])
        return W, {"clipped": True, "min_scaled_eigenvalue": float(rel)}
    return V, {"clipped": False, "min_scaled_eigenvalue": float(rel)}


def f_upper(F, d1, d2):
    if F <= 0:
        return mp.mpf(1)
    x = d2 / (d2 + d1 * F)
    return mp.betainc(mp.mpf(d2) / 2, mp.mpf(d1) / 2, 0, x, regularized=True)


def wald(b, V, idx, df2):
    q = len(idx)
    rb = mp.matrix([b[i] for i in idx])
    RVR = mp.matrix(q, q)
    for a in range(q):
        for c in range(q):
            RVR[a, c] = V[idx[a], idx[c]]
    W = (rb.T * mp.inverse(RVR) * rb)[0]
    F = W / q
    return {"chi2": float(W), "F": float(F), "df1": q, "df2": df2, "p": float(f_upper(F, q, df2))}


def describe(b, covs, names, idx, decision):
    out = {"coef": {n: float(b[j]) for j, n in enumerate(names)}, "families": {}}
    for fam, (V, df) in covs.items():
        out["families"][fam] = {
            "se": {n: float(mp.sqrt(V[j, j])) if V[j, j] > 0 else None for j, n in enumerate(names)},
            "df": df,
            "joint": wald(b, V, idx, df)}
    out["cluster_both_decision"] = decision
    return out


def pooled_case(rows, period_dummies):
    grid = sorted(set(r[1] for r in rows))
    names = ["intercept", "big", "tiny", "mid"]
    if period_dummies:
        names += ["period %d" % g for g in grid[1:]]
    Xr = []
    for r in rows:
        x = [1, r[3], r[4], r[5]]
        if period_dummies:
            x += [1 if r[1] == g else 0 for g in grid[1:]]
        Xr.append([mp.mpf(v) for v in x])
    X, y = mat(Xr), mat([mp.mpf(r[2]) for r in rows])
    b, e, A = ols(X, y)
    covs, decision = covariances(X, e, A, [r[0] for r in rows], [r[1] for r in rows])
    return describe(b, covs, names, [1, 2, 3], decision)


def hausman(rows):
    units = sorted(set(r[0] for r in rows))
    n, N, K = len(units), len(rows), 3
    by_unit = {u: [r for r in rows if r[0] == u] for u in units}
    mean = {u: [sum(mp.mpf(r[c]) for r in by_unit[u]) / len(by_unit[u]) for c in (2, 3, 4, 5)] for u in units}
    # within
    Xw = mat([[mp.mpf(r[c]) - mean[r[0]][c - 2] for c in (3, 4, 5)] for r in rows])
    yw = mat([mp.mpf(r[2]) - mean[r[0]][0] for r in rows])
    bw, ew, Aw = ols(Xw, yw)
    s2e = sum(v * v for v in ew) / (N - n - K)
    Vw = s2e * Aw
    # between (unit means with intercept)
    Xb = mat([[1] + mean[u][1:] for u in units])
    yb = mat([mean[u][0] for u in units])
    _, eb, _ = ols(Xb, yb)
    T = mp.mpf(N) / n
    s2u = sum(v * v for v in eb) / (n - (K + 1)) - s2e / T
    theta = 1 - mp.sqrt(s2e / (s2e + T * s2u))
    Xr = mat([[1 - theta] + [mp.mpf(r[c]) - theta * mean[r[0]][c - 2] for c in (3, 4, 5)] for r in rows])
    yr = mat([mp.mpf(r[2]) - theta * mean[r[0]][0] for r in rows])
    br, er, Ar = ols(Xr, yr)
    Vr = sum(v * v for v in er) / (N - (K + 1)) * Ar
    d = mp.matrix([bw[j] - br[j + 1] for j in range(K)])
    Vd = mp.matrix(K, K)
    for a in range(K):
        for c in range(K):
            Vd[a, c] = Vw[a, c] - Vr[a + 1, c + 1]
    lam, _, _ = scaled_eigen(Vd, [Vw[j, j] for j in range(K)])
    largest = max(abs(x) for x in lam)
    rank = sum(1 for x in lam if abs(x) > mp.mpf("1e-10") * largest)
    H = (d.T * mp.inverse(Vd) * d)[0] if rank == K else None
    return {"statistic": float(H) if H is not None else None, "df": rank, "rank": rank,
            "p": float(mp.gammainc(mp.mpf(rank) / 2, H / 2, mp.inf, regularized=True)) if H is not None else None,
            "within_coef": {nm: float(bw[j]) for j, nm in enumerate(["big", "tiny", "mid"])},
            "random_coef": {nm: float(br[j + 1]) for j, nm in enumerate(["big", "tiny", "mid"])},
            "theta": float(theta)}


def main():
    rows = make_panel()
    with open(os.path.join(OUT, "wild_scale.csv"), "w") as f:
        f.write("unit,period,y,big,tiny,mid\n")
        for r in rows:
            f.write("%d,%d,%r,%r,%r,%r\n" % r)
    ref = {
        "source": "tests/oracle/highprec.py, mpmath %s at %d digits" % (mp.__version__, mp.mp.dps),
        "data": "wild_scale.csv",
        "pooled": pooled_case(rows, False),
        "pooled_periods": pooled_case(rows, True),
        "hausman": hausman(rows),
    }
    with open(os.path.join(OUT, "wild_scale_reference.json"), "w") as f:
        json.dump(ref, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
