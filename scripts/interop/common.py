"""Shared helpers of the interoperability corpus scripts.

The base data set lives in testdata/interop/data.csv (written by
gen_data.py). Each writer script writes its workbooks and, for each one, a
"fragment": the manifest entry without n and effects, plus two private keys
that expected.py and verify.py read and drop:

  _fit     which rows of data.csv the author meant as data, and which
           base columns stand for the spec's controls
  _verify  facts about the file's XML to check: [member regex, regex,
           "present" or "absent"]
"""

import csv
import datetime as dt
import json
import os
import re

BASE_COLUMNS = ["client_id", "site", "client_type", "coached", "baseline",
                "hours", "earnings"]

DEFAULT_SPEC = {"outcome": "earnings", "treatment": "coached", "treated": "",
                "moderator": "client_type", "controls": ["baseline"],
                "variance": "HC3"}


def load_rows(path):
    """Reads data.csv into a list of dicts with typed values."""
    rows = []
    with open(path, newline="", encoding="utf-8") as f:
        for r in csv.DictReader(f):
            rows.append(typed(r))
    return rows


def typed(r):
    return {
        "client_id": int(r["client_id"]),
        "site": r["site"],
        "client_type": r["client_type"],
        "coached": int(r["coached"]),
        "baseline": float(r["baseline"]),
        "baseline_text": r["baseline"],
        "hours_a": int(r["hours_a"]),
        "hours_b": float(r["hours_b"]),
        "hours": float(r["hours"]),
        "earnings": float(r["earnings"]),
        "earnings_text": r["earnings"],
        "earnings_raw": r["earnings_raw"],
        "visit_date": dt.date.fromisoformat(r["visit_date"]),
        "consented": r["consented"] == "TRUE",
    }


def col_letter(i):
    """0-based column index to letters."""
    s = ""
    i += 1
    while i:
        i, rem = divmod(i - 1, 26)
        s = chr(65 + rem) + s
    return s


def spec(**kw):
    s = dict(DEFAULT_SPEC)
    s["controls"] = list(DEFAULT_SPEC["controls"])
    s.update(kw)
    return s


def entry(file, writer, family, **kw):
    """A manifest fragment with the defaults of the manifest form."""
    e = {
        "file": file,
        "writer": writer,
        "family": family,
        "sheet": "",
        "header_row": 0,
        "table": "",
        "spec": spec(),
        "expect": "match",
        "reason": "",
        "formula_columns": {},
        "checks": [],
        "notes": "",
        "_fit": {"ids": None, "controls": ["baseline"]},
        "_verify": [],
    }
    for k, v in kw.items():
        if k == "fit_ids":
            e["_fit"]["ids"] = v
        elif k == "fit_controls":
            e["_fit"]["controls"] = v
        elif k == "verify":
            e["_verify"] = v
        else:
            e[k] = v
    return e


class Fragments:
    """Collects fragments and writes them to FRAGMENTS_DIR/<writer>.json."""

    def __init__(self, name):
        self.name = name
        self.items = []

    def add(self, e):
        self.items.append(e)

    def save(self):
        d = os.environ.get("INTEROP_FRAGMENTS")
        if not d:
            raise SystemExit("INTEROP_FRAGMENTS is not set")
        with open(os.path.join(d, self.name + ".json"), "w",
                  encoding="utf-8") as f:
            json.dump(self.items, f, ensure_ascii=False, indent=1)


def out_dir():
    d = os.environ.get("INTEROP_OUT")
    if not d:
        raise SystemExit("INTEROP_OUT is not set")
    return d


def data_path():
    return os.path.join(out_dir(), "data.csv")


def ensure_dir(path):
    os.makedirs(os.path.dirname(path), exist_ok=True)


# The error codes a workbook can hold.
ERRORS = ("#N/A", "#DIV/0!")

# Rows (1-based data row numbers) whose baseline is an error value in the
# error family: left out of that file's expected fit.
ERROR_ROWS = (7, 23)

# A fixed document time, for the writers that let us set it.
DOC_TIME = dt.datetime(2024, 3, 1, 9, 0, 0)


def ids_without_rows(rows, drop_rownums):
    return [r["client_id"] for i, r in enumerate(rows, start=1)
            if i not in drop_rownums]


def jdump(obj, path):
    with open(path, "w", encoding="utf-8") as f:
        json.dump(obj, f, ensure_ascii=False, indent=1)
        f.write("\n")


def re_ok(pattern):
    re.compile(pattern)
    return pattern
