"""Writes the two 50,000-row files of the corpus (not committed).

Usage: w_big.py WORKDIR   (INTEROP_OUT is the big directory, holding its own
                           data.csv; INTEROP_FRAGMENTS a fragments directory)

  openpyxl/big_write_only.xlsx    openpyxl in write_only mode
  libreoffice/big_from_csv.xlsx   LibreOffice headless from data.csv
"""

import os
import subprocess
import sys

import openpyxl
from openpyxl.cell import WriteOnlyCell

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import common as C  # noqa: E402
import w_libreoffice as LO  # noqa: E402

BASE = ["client_id", "site", "client_type", "coached", "baseline", "hours",
        "earnings"]


def main():
    work = sys.argv[1]
    os.makedirs(work, exist_ok=True)
    rows = C.load_rows(C.data_path())
    n = len(rows)
    fr = C.Fragments("big")

    rel = "openpyxl/big_write_only.xlsx"
    path = os.path.join(C.out_dir(), rel)
    C.ensure_dir(path)
    wb = openpyxl.Workbook(write_only=True)
    ws = wb.create_sheet("Data")
    ws.append(BASE + ["visit_date"])
    for r in rows:
        d = WriteOnlyCell(ws, value=r["visit_date"])
        d.number_format = "yyyy-mm-dd"
        ws.append([r[c] for c in BASE] + [d])
    wb.save(path)
    fr.add(C.entry(
        rel, f"openpyxl {openpyxl.__version__}",
        f"{n} rows written in openpyxl write_only mode",
        checks=[{"column": "visit_date", "row": 1, "date": rows[0]["visit_date"].isoformat()}],
        notes="Streamed rows; strings inline (t=\"inlineStr\"); write_only "
              "mode writes no <dimension> element.",
        verify=[[r"xl/worksheets/sheet1\.xml", r"<dimension", "absent"]]))

    rel = "libreoffice/big_from_csv.xlsx"
    path = os.path.join(C.out_dir(), rel)
    C.ensure_dir(path)
    src = os.path.join(work, "big_from_csv.csv")
    with open(C.data_path(), "rb") as f, open(src, "wb") as g:
        g.write(f.read())
    # CSV import options: comma, double quote, UTF-8, from line 1, no
    # column formats, English (USA), quoted fields not as text, detect
    # special numbers (dates).
    prof = "file://" + os.path.join(work, "lo-profile-big")
    subprocess.run(["soffice", "-env:UserInstallation=" + prof, "--headless", "--norestore",
                    "--infilter=CSV:44,34,76,1,,1033,false,true",
                    "--convert-to", "xlsx:Calc MS Excel 2007 XML",
                    "--outdir", os.path.dirname(path), src],
                   check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    fr.add(C.entry(
        rel, LO.lo_version(), f"{n} rows of CSV saved as xlsx by LibreOffice headless",
        checks=[{"column": "visit_date", "row": 1, "date": rows[0]["visit_date"].isoformat()}],
        notes="Imported with CSV:44,34,76,1,,1033,false,true (dates detected); "
              "consented TRUE/FALSE become the numbers 1/0.",
        verify=[[r"xl/workbook\.xml", r'<fileVersion appName="Calc"/>', "present"]]))
    fr.save()


if __name__ == "__main__":
    main()
