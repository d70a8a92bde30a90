#!/usr/bin/env python3
"""The save's fault trials of issue 13, as a person would meet them.

Usage: scripts/save-trials.py BIN MODE N [WORKBOOK]
  BIN       the headless program (bin/slopewise, or a -tags nowindow build)
  MODE      pairs: two analyses started together on one workbook;
            edits: another program saves the workbook (an extra part) at a
                   random moment, 0-2.5 s into an analysis;
            kills: the analysis is killed (SIGKILL) at a random moment.
  N         trials (the issue's figures: 12 pairs, 30 edits, 40 kills)
  WORKBOOK  an .xlsx with columns y, t (0/1), g (text), x; made when not
            given: 400,000 invented rows written by LibreOffice (about
            7 MB), cached as /tmp/slopewise-trials.xlsx.
Prints how many trials ended each way. Not part of make test (minutes).
"""
import os, random, shutil, subprocess, sys, tempfile, time, zipfile, re, hashlib

BIN = sys.argv[1]
SRC = sys.argv[4] if len(sys.argv) > 4 else "/tmp/slopewise-trials.xlsx"


def make_workbook(path):
    """400,000 rows with a known truth (effect 2 in group a, 1 in b)."""
    rng = random.Random(13)
    d = tempfile.mkdtemp(prefix="trials-make-")
    csv = os.path.join(d, "trials.csv")
    with open(csv, "w") as f:
        f.write("y,t,g,x\n")
        for _ in range(400000):
            t, g, x = rng.randint(0, 1), rng.choice("ab"), rng.gauss(0, 1)
            y = 1 + (2 if g == "a" else 1) * t + 0.5 * x + rng.gauss(0, 1)
            f.write(f"{y:.6f},{t},{g},{x:.6f}\n")
    subprocess.run(["soffice", "--headless", "--convert-to", "xlsx", "--outdir", d, csv],
                   check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    shutil.move(os.path.join(d, "trials.xlsx"), path)
    shutil.rmtree(d)


if not os.path.exists(SRC):
    make_workbook(SRC)
ARGS = ["analyze", None, "--outcome", "y", "--treatment", "t", "--moderator", "g", "--controls", "x"]

def sheets(p):
    try:
        with zipfile.ZipFile(p) as z:
            return re.findall(r'<sheet [^>]*name="([^"]+)"', z.read("xl/workbook.xml").decode())
    except Exception as e:
        return None

def run(path):
    a = list(ARGS); a[1] = path
    return subprocess.Popen([BIN] + a, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)

def sha(p):
    return hashlib.sha256(open(p, "rb").read()).hexdigest()

def edited_copy(d):
    # "another program's edit": the workbook with one more sheet-less change
    # (its bytes differ): we append a customXml part by rewriting the zip.
    e = os.path.join(d, "edit.xlsx")
    with zipfile.ZipFile(SRC) as zi, zipfile.ZipFile(e, "w", zipfile.ZIP_DEFLATED) as zo:
        for it in zi.infolist():
            zo.writestr(it, zi.read(it.filename))
        zo.writestr("docProps/custom-edit.xml", "<edit/>")
    return e

mode = sys.argv[2]
n = int(sys.argv[3])
stats = {}
def count(k): stats[k] = stats.get(k, 0) + 1
for i in range(n):
    d = tempfile.mkdtemp(prefix="trial-")
    p = os.path.join(d, "book.xlsx")
    shutil.copy(SRC, p)
    if mode == "pairs":
        a, b = run(p), run(p)
        ra, rb = a.wait(), b.wait()
        ok = (ra == 0) + (rb == 0)
        res = [s for s in (sheets(p) or []) if s.startswith("Results")]
        count(f"{ok} succeeded, {len(res)} results sheet(s)")
    elif mode == "edits":
        e = edited_copy(d)
        want = sha(e)
        pr = run(p)
        time.sleep(random.uniform(0.0, 2.5))
        tmp = p + ".edit-tmp"
        shutil.copy(e, tmp); os.replace(tmp, p)   # the other program saves
        rc = pr.wait()
        now = sha(p)
        backups = [f for f in os.listdir(d) if "(before Slopewise" in f]
        inb = any(sha(os.path.join(d, f)) == want for f in backups)
        names = sheets(p) or []
        if now == want:
            count("edit in place (results not written)")
        elif "docProps/custom-edit.xml" in zipfile.ZipFile(p).namelist():
            count("edit in place, with results")
        elif inb:
            count("edit only in the backup")
        else:
            count("edit lost")
    elif mode == "kills":
        orig = sha(p)
        pr = run(p)
        time.sleep(random.uniform(0.2, 2.5))
        pr.kill(); pr.wait()
        now = sha(p)
        ok = now == orig or any(s.startswith("Results") for s in (sheets(p) or []))
        backups = [f for f in os.listdir(d) if "(before Slopewise" in f]
        partial = [f for f in backups if sha(os.path.join(d, f)) != orig]
        debris = [f for f in os.listdir(d) if f.startswith(".")]
        count("workbook whole" if ok else "workbook broken")
        if partial: count("partial backup")
        if debris: count("debris left")
    shutil.rmtree(d)
for k, v in sorted(stats.items()):
    print(f"{mode}: {v} × {k}")
