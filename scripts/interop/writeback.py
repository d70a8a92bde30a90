"""Runs a Slopewise program over the corpus and checks what it wrote back.

Usage: writeback.py BIN CORPUS_DIR [--keep DIR] [--only SUBSTRING]

For each "match" file of CORPUS_DIR/manifest.json: copy it to a scratch
directory, run
  BIN analyze COPY --outcome .. --treatment .. --moderator .. --controls a,b
      [--treated X] [--sheet S] [--header-row N] [--table NAME] --json
(--table is passed as is; a program without that option says so and the
file is reported as failed), compare the effects and n it prints with the
manifest (relative difference at most 1e-8), then compare the copy with
the original through check_writeback.compare. For each "refuse" file: run
the same and expect a non-zero exit and the copy unchanged, byte for byte.
Prints one line per file and a summary; exits 1 if any file failed.
"""

import argparse
import filecmp
import json
import math
import os
import shutil
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import check_writeback  # noqa: E402

TOL = 1e-8


def args_for(e, path):
    s = e["spec"]
    a = ["analyze", path, "--outcome", s["outcome"], "--treatment", s["treatment"],
         "--moderator", s["moderator"], "--se", s["variance"].lower()]
    if s["controls"]:
        a += ["--controls", ",".join(s["controls"])]
    if s["treated"]:
        a += ["--treated", s["treated"]]
    if e["sheet"]:
        a += ["--sheet", e["sheet"]]
    if e["header_row"]:
        a += ["--header-row", str(e["header_row"])]
    if e["table"]:
        a += ["--table", e["table"]]
    return a + ["--json"]


def close(a, b):
    return abs(a - b) <= TOL * max(1.0, abs(b))


def check_effects(out, e):
    try:
        j = json.loads(out)
    except json.JSONDecodeError as ex:
        return [f"--json output is not JSON: {ex}"]
    bad = []
    if j.get("n_used") != e["n"]:
        bad.append(f"n {j.get('n_used')} != {e['n']}")
    got = {g["label"]: g for g in j.get("groups", [])}
    for lev, want in e["effects"].items():
        g = got.get(lev)
        if g is None:
            bad.append(f"no group {lev!r} (groups {sorted(got)})")
            continue
        for k in ("estimate", "se"):
            if not (isinstance(g.get(k), (int, float)) and math.isfinite(g[k]) and close(g[k], want[k])):
                bad.append(f"{lev} {k} {g.get(k)!r} != {want[k]!r}")
    return bad


def first_line(text):
    for line in text.splitlines():
        if line.strip():
            return line.strip()[:200]
    return ""


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("bin")
    ap.add_argument("corpus")
    ap.add_argument("--keep")
    ap.add_argument("--only", default="")
    a = ap.parse_args()
    with open(os.path.join(a.corpus, "manifest.json"), encoding="utf-8") as f:
        manifest = json.load(f)
    scratch = a.keep or tempfile.mkdtemp(prefix="slopewise-writeback-")
    results = []
    for e in manifest:
        if a.only and a.only not in e["file"]:
            continue
        src = os.path.join(a.corpus, e["file"])
        dst = os.path.join(scratch, e["file"])
        os.makedirs(os.path.dirname(dst), exist_ok=True)
        shutil.copyfile(src, dst)
        cmd = [a.bin] + args_for(e, dst)
        try:
            p = subprocess.run(cmd, capture_output=True, text=True, timeout=300)
            rc, out, err = p.returncode, p.stdout, p.stderr
        except subprocess.TimeoutExpired:
            rc, out, err = -1, "", "timed out after 300 s"
        problems, notes = [], []
        if e["expect"] == "refuse":
            if rc == 0:
                problems.append("accepted a file it should refuse")
            elif rc == 2:
                problems.append(f"usage error: {first_line(err)}")
            else:
                notes.append(f"refused: {first_line(err)}")
            if not filecmp.cmp(src, dst, shallow=False):
                problems.append("the refused file was changed")
        elif rc != 0:
            what = "usage error" if rc == 2 else f"exit {rc}"
            problems.append(f"{what}: {first_line(err)}")
        else:
            problems += check_effects(out, e)
            try:
                diffs, n = check_writeback.compare(src, dst)
            except Exception as ex:
                diffs, n = [f"could not compare: {type(ex).__name__}: {ex}"], []
            problems += [f"write-back: {d}" for d in diffs]
            notes += n
        status = "ok  " if not problems else "FAIL"
        results.append((status, e["file"], e["expect"], problems, notes))
        print(f"{status} {e['file']} [{e['expect']}]")
        for x in problems[:6]:
            print(f"       {x}")
        if len(problems) > 6:
            print(f"       ... {len(problems) - 6} more")
        for x in notes:
            print(f"       note: {x}")
    nf = sum(1 for r in results if r[0] == "FAIL")
    print(f"writeback.py: {len(results) - nf} of {len(results)} files ok, {nf} failed "
          f"(copies in {scratch})")
    sys.exit(1 if nf else 0)


if __name__ == "__main__":
    main()
