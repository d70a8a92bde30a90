#!/usr/bin/python3
"""Reference pipeline of the before-and-after benchmark (bench/did.sh,
issue 14), with Debian's python3-statsmodels 0.13 and python3-pandas 1.5,
run with /usr/bin/python3.

    /usr/bin/python3 bench/reference_did.py FILE

The model is Slopewise's difference in differences by group with unit
effects (METHODS.md section 10): earnings on post, coached × post, post ×
region, coached × post × region and age, each unit's own level taken out.
One indicator column per unit (100,000 of them on 1,000,000 rows) does not
fit in memory as a dense design, so this reference does what the engine
does, by hand: it demeans every column within unit with pandas
(groupby().transform("mean"), the within transformation), leaves out the
columns that do not vary within any unit (coached, region, coached ×
region), and fits OLS without a constant. CR1 by unit is statsmodels'
cov_type="cluster" (use_correction=True: G/(G−1)·(N−1)/(N−K), K the
demeaned columns, which is the engine's factor when units are nested in
the clusters). The region reference is the largest group, as Slopewise's.

Prints one JSON object: the timings (read_s, fit_s) and the effect in each
region with its standard error.
"""

import json
import sys
import time

import pandas as pd
import statsmodels.api as sm


def main():
    path = sys.argv[1]
    t0 = time.perf_counter()
    df = pd.read_csv(path)
    t1 = time.perf_counter()
    df = df[["unit", "post", "coached", "region", "age", "earnings"]].dropna()
    counts = df["region"].value_counts()
    levels = sorted(counts.index)
    ref = max(levels, key=lambda l: (counts[l], -levels.index(l)))
    others = [l for l in levels if l != ref]
    tp = df["coached"] * df["post"]
    X = pd.DataFrame({"post": df["post"].astype(float), "tp": tp.astype(float)})
    for l in others:
        m = (df["region"] == l).astype(float)
        X["post:" + l] = df["post"] * m
    for l in others:
        m = (df["region"] == l).astype(float)
        X["tp:" + l] = tp * m
    X["age"] = df["age"].astype(float)
    g = df["unit"]
    Xd = X - X.groupby(g).transform("mean")
    yd = df["earnings"] - df["earnings"].groupby(g).transform("mean")
    fit = sm.OLS(yd, Xd).fit(cov_type="cluster", cov_kwds={"groups": pd.factorize(g)[0], "use_correction": True, "df_correction": True})
    t2 = time.perf_counter()
    b, V = fit.params, fit.cov_params()
    effects = {}
    for l in [ref] + others:
        a = pd.Series(0.0, index=b.index)
        a["tp"] = 1
        if l != ref:
            a["tp:" + l] = 1
        effects[l] = {"estimate": float(a @ b), "se": float((a @ V @ a) ** 0.5)}
    json.dump({"read_s": t1 - t0, "fit_s": t2 - t1, "rows": int(len(df)), "effects": effects}, sys.stdout)
    print()


if __name__ == "__main__":
    main()
