#!/usr/bin/python3
"""Reference pipeline for the benchmark harness (bench/cmd/slopebench).

Reads the same file as `slopewise analyze`, fits the same model with the
same variance estimator and prints the same group effects, so that the
harness can check the numbers and compare time and memory. It uses only
Debian's packages (python3-statsmodels 0.13, python3-pandas 1.5,
python3-openpyxl 3.0), run with /usr/bin/python3.

    /usr/bin/python3 bench/reference.py FILE --se hc3|cluster [--cluster COL]

The model is Slopewise's (README, DEVELOPERS.md): outcome on intercept,
treatment, indicators of the moderator's groups but the reference (the
largest group, ties to the first in sorted order), treatment × those
indicators, and the controls; rows with a missing value in any column used
are left out. HC3 is statsmodels' cov_type="HC3". CR1 is
cov_type="cluster" with use_correction=True, which scales the sandwich by
G/(G−1)·(N−1)/(N−K) (statsmodels 0.13 source,
stats/sandwich_covariance.py, cov_cluster), with df_correction=True for
G − 1 degrees of freedom.

Prints one JSON object: the timings (read_s, fit_s) and the effects.
"""

import argparse
import json
import sys
import time

import numpy as np
import pandas as pd
import statsmodels.api as sm


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("file")
    ap.add_argument("--outcome", default="score")
    ap.add_argument("--treatment", default="tutored")
    ap.add_argument("--moderator", default="area")
    ap.add_argument("--controls", default="baseline,age,attendance,prior_sessions,household")
    ap.add_argument("--se", choices=["hc3", "cluster"], default="hc3")
    ap.add_argument("--cluster", default="school")
    a = ap.parse_args()

    t0 = time.perf_counter()
    if a.file.endswith((".xlsx", ".xlsm")):
        df = pd.read_excel(a.file, engine="openpyxl")
    else:
        df = pd.read_csv(a.file)
    t1 = time.perf_counter()

    controls = [c for c in a.controls.split(",") if c]
    used = [a.outcome, a.treatment, a.moderator] + controls
    if a.se == "cluster":
        used.append(a.cluster)
    df = df[used].dropna()
    mod = df[a.moderator].astype(str)
    counts = mod.value_counts()
    levels = sorted(counts.index)
    ref = max(levels, key=lambda l: (counts[l], -levels.index(l)))
    others = [l for l in levels if l != ref]

    n = len(df)
    t = df[a.treatment].to_numpy(dtype=float)
    cols = [np.ones(n), t]
    names = ["(intercept)", a.treatment]
    dummies = [(mod == l).to_numpy(dtype=float) for l in others]
    cols += dummies
    names += [f"{a.moderator} = {l}" for l in others]
    cols += [t * d for d in dummies]
    names += [f"{a.treatment} × {a.moderator} = {l}" for l in others]
    for c in controls:
        cols.append(df[c].to_numpy(dtype=float))
        names.append(c)
    x = np.column_stack(cols)
    y = df[a.outcome].to_numpy(dtype=float)

    if a.se == "hc3":
        res = sm.OLS(y, x).fit(cov_type="HC3")
    else:
        groups = pd.factorize(df[a.cluster])[0]
        res = sm.OLS(y, x).fit(cov_type="cluster", cov_kwds={
            "groups": groups, "use_correction": True, "df_correction": True})
    b = res.params
    v = res.cov_params()

    k = len(names)
    order = [ref] + others
    combos = {}
    for l in order:
        c = np.zeros(k)
        c[1] = 1
        if l != ref:
            c[2 + len(others) + others.index(l)] = 1
        combos[l] = c
    groups_out = []
    for l in order:
        c = combos[l]
        groups_out.append({"label": l, "estimate": float(c @ b), "se": float(np.sqrt(c @ v @ c))})
    diffs = []
    for i, la in enumerate(order):
        for lb in order[i + 1:]:
            c = combos[lb] - combos[la]
            diffs.append({"label": f"{lb} vs {la}", "estimate": float(c @ b), "se": float(np.sqrt(c @ v @ c))})
    t2 = time.perf_counter()

    json.dump({"n_used": n, "read_s": t1 - t0, "fit_s": t2 - t1,
               "groups": groups_out, "differences": diffs}, sys.stdout)
    print()


if __name__ == "__main__":
    main()
