"""Computes each file's expected fit and writes manifest.json.

Usage: expected.py FRAGMENTS_DIR DATA.csv MANIFEST.json [--prefix P]

The fit is independent of Slopewise: statsmodels OLS of
earnings ~ coached * C(client_type) + controls, cov_type "HC3", on the rows
of DATA.csv that the fragment's _fit names (all rows when it names none).
For each level of client_type the effect of coached in that group is
a'b with a the indicator of b_coached (plus b_interaction for the other
level), and its standard error sqrt(a'Va) from the full HC3 covariance.
Numbers are written with 17 significant digits.
"""

import argparse
import glob
import json
import os
import re
import sys

import numpy as np
import pandas as pd
import statsmodels
import statsmodels.formula.api as smf


def fit(df, controls):
    formula = "earnings ~ coached * C(client_type)"
    for c in controls:
        formula += " + " + c
    res = smf.ols(formula, data=df).fit(cov_type="HC3")
    names = list(res.params.index)
    V = np.asarray(res.cov_params())
    b = np.asarray(res.params)
    levels = sorted(df["client_type"].unique())
    out = {}
    for lev in levels:
        a = np.zeros(len(names))
        a[names.index("coached")] = 1
        if lev != levels[0]:
            a[names.index(f"coached:C(client_type)[T.{lev}]")] = 1
        out[lev] = {"estimate": float(a @ b), "se": float(np.sqrt(a @ V @ a))}
    return int(res.nobs), out


FLOAT_TAG = "\u0001F"


def tag_floats(obj):
    if isinstance(obj, float):
        return FLOAT_TAG + format(obj, ".17g")
    if isinstance(obj, dict):
        return {k: tag_floats(v) for k, v in obj.items()}
    if isinstance(obj, list):
        return [tag_floats(v) for v in obj]
    return obj


def dumps17(obj):
    s = json.dumps(tag_floats(obj), ensure_ascii=False, indent=1)
    return re.sub(r'"\\u0001F([^"]*)"', r"\1", s)


ORDER = ["file", "writer", "family", "sheet", "header_row", "table", "spec",
         "expect", "reason", "formula_columns", "n", "effects", "checks",
         "notes"]


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("fragments")
    ap.add_argument("data")
    ap.add_argument("manifest")
    a = ap.parse_args()

    df = pd.read_csv(a.data, dtype={"client_type": str, "site": str})
    frags = []
    for p in sorted(glob.glob(os.path.join(a.fragments, "*.json"))):
        with open(p, encoding="utf-8") as f:
            frags.extend(json.load(f))
    frags.sort(key=lambda e: e["file"])
    seen = set()
    manifest = []
    for e in frags:
        if e["file"] in seen:
            sys.exit(f"two fragments name {e['file']}")
        seen.add(e["file"])
        ids = e["_fit"]["ids"]
        d = df if ids is None else df[df["client_id"].isin(ids)]
        if ids is not None and len(d) != len(ids):
            sys.exit(f"{e['file']}: fit ids not all in the data")
        n, eff = fit(d, e["_fit"]["controls"])
        e = dict(e, n=n, effects=eff)
        manifest.append({k: e[k] for k in ORDER})
    with open(a.manifest, "w", encoding="utf-8") as f:
        f.write(dumps17(manifest))
        f.write("\n")
    print(f"expected.py: {len(manifest)} entries, statsmodels "
          f"{statsmodels.__version__}, written to {a.manifest}")


if __name__ == "__main__":
    main()
