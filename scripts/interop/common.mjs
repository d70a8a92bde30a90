// Shared helpers of the node writers of the interoperability corpus: the
// same data and manifest fragments as common.py (see there).

import fs from "node:fs";
import path from "node:path";
import { fileURLToPath } from "node:url";

const here = path.dirname(fileURLToPath(import.meta.url));

export const BASE = ["client_id", "site", "client_type", "coached", "baseline", "hours", "earnings"];
export const ERRORS = ["#N/A", "#DIV/0!"];
export const ERROR_ROWS = [7, 23]; // 1-based data rows, as in common.py

export function outDir() {
  const d = process.env.INTEROP_OUT;
  if (!d) throw new Error("INTEROP_OUT is not set");
  return d;
}

export function version(pkg) {
  const p = JSON.parse(fs.readFileSync(path.join(here, "node_modules", pkg, "package.json"), "utf8"));
  return `${pkg} ${p.version}`;
}

export function loadRows() {
  const text = fs.readFileSync(path.join(outDir(), "data.csv"), "utf8").trim().split("\n");
  const head = text[0].split(",");
  return text.slice(1).map((line) => {
    const f = Object.fromEntries(line.split(",").map((v, i) => [head[i], v]));
    const [y, m, d] = f.visit_date.split("-").map(Number);
    return {
      client_id: Number(f.client_id),
      site: f.site,
      client_type: f.client_type,
      coached: Number(f.coached),
      baseline: Number(f.baseline),
      baseline_text: f.baseline,
      hours_a: Number(f.hours_a),
      hours_b: Number(f.hours_b),
      hours: Number(f.hours),
      earnings: Number(f.earnings),
      earnings_raw: Number(f.earnings_raw),
      visit_date: new Date(Date.UTC(y, m - 1, d)),
      visit_date_text: f.visit_date,
      consented: f.consented === "TRUE",
    };
  });
}

export function spec(over = {}) {
  return { outcome: "earnings", treatment: "coached", treated: "", moderator: "client_type",
    controls: ["baseline"], variance: "HC3", ...over };
}

export function entry(file, writer, family, o = {}) {
  const e = { file, writer, family, sheet: "", header_row: 0, table: "", spec: spec(),
    expect: "match", reason: "", formula_columns: {}, checks: [], notes: "",
    _fit: { ids: null, controls: ["baseline"] }, _verify: [] };
  for (const [k, v] of Object.entries(o)) {
    if (k === "fit_ids") e._fit.ids = v;
    else if (k === "fit_controls") e._fit.controls = v;
    else if (k === "verify") e._verify = v;
    else e[k] = v;
  }
  return e;
}

export function idsWithoutRows(rows, drop) {
  return rows.filter((_, i) => !drop.includes(i + 1)).map((r) => r.client_id);
}

export function saveFragments(name, items) {
  const d = process.env.INTEROP_FRAGMENTS;
  if (!d) throw new Error("INTEROP_FRAGMENTS is not set");
  fs.writeFileSync(path.join(d, `${name}.json`), JSON.stringify(items, null, 1));
}

export function target(rel) {
  const p = path.join(outDir(), rel);
  fs.mkdirSync(path.dirname(p), { recursive: true });
  return p;
}

export const DOC_TIME = new Date(Date.UTC(2024, 2, 1, 9, 0, 0));
