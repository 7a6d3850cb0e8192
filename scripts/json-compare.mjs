#!/usr/bin/env node
// Compares two json-snapshot.sh folders: every string, boolean, null and key equal; every number within
// TOL absolute or relative (default 1e-8). Prints each difference beyond that and a summary line;
// exit 1 when any.  Usage: node scripts/json-compare.mjs DIR_A DIR_B [TOL]
import { readdirSync, readFileSync } from "node:fs";
import { join } from "node:path";

const [a, b, tolArg] = process.argv.slice(2);
if (!a || !b) {
  console.error("usage: node scripts/json-compare.mjs DIR_A DIR_B [TOL]");
  process.exit(2);
}
const tol = Number(tolArg ?? 1e-8);
const problems = [];
let numbers = 0;
let maxAbs = 0;
let floatDiffs = 0;
function walk(x, y, path) {
  if (typeof x === "number" && typeof y === "number") {
    numbers++;
    if (x === y) return;
    const d = Math.abs(x - y);
    floatDiffs++;
    if (d > maxAbs) maxAbs = d;
    if (!(d <= tol || d <= tol * Math.max(Math.abs(x), Math.abs(y)))) problems.push(`${path}: ${x} vs ${y}`);
    return;
  }
  if (Array.isArray(x) && Array.isArray(y)) {
    if (x.length !== y.length) return void problems.push(`${path}: length ${x.length} vs ${y.length}`);
    x.forEach((v, i) => walk(v, y[i], `${path}[${i}]`));
    return;
  }
  if (x && y && typeof x === "object" && typeof y === "object" && !Array.isArray(x) && !Array.isArray(y)) {
    const keys = new Set([...Object.keys(x), ...Object.keys(y)]);
    for (const k of keys) {
      if (!(k in x) || !(k in y)) problems.push(`${path}.${k}: only in ${k in x ? "A" : "B"}`);
      else walk(x[k], y[k], `${path}.${k}`);
    }
    return;
  }
  if (x !== y) problems.push(`${path}: ${JSON.stringify(x)} vs ${JSON.stringify(y)}`);
}
const files = new Set([...readdirSync(a), ...readdirSync(b)]);
for (const f of [...files].sort()) {
  let x, y;
  try {
    x = JSON.parse(readFileSync(join(a, f), "utf8"));
    y = JSON.parse(readFileSync(join(b, f), "utf8"));
  } catch (e) {
    problems.push(`${f}: ${e.message}`);
    continue;
  }
  walk(x, y, f);
}
for (const p of problems) console.log(p);
console.log(`${files.size} files, ${numbers} numbers, ${floatDiffs} differ in float noise (max abs ${maxAbs.toExponential(2)}), ${problems.length} differences beyond ${tol}`);
process.exit(problems.length ? 1 : 0);
