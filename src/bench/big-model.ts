/**
 * Benchmark entry "big-model": loading a large model file. A car-rental model of our own (two
 * locations of at most 20 cars each: 441 states; 11 actions moving -5..5 cars overnight; Poisson
 * requests (means 3 and 4, truncated at 18 with the tail on 18) and returns (means 3 and 2, truncated
 * at 19); one outcome per reachable next state, its features the expected rentals given that state and
 * the cars moved: 2,080,577 outcomes) is written as a JSON model file and as a compact .gwbin file in
 * a temporary folder. Each load runs in its own child process (this file with `--child`), which
 * reports the CPU and wall time of its timed region, its peak resident set size and a CRC-32 of the model it loaded. Printed: JSON.parse
 * of the text, the gapwatch JSON load (read + parse + checks + arrays) and its ratio to JSON.parse, its
 * peak RSS, the compact load and its speed-up over the JSON load, and whether both checksums match the
 * generated model. Targets are reported, never enforced.
 */
import { spawnSync } from "node:child_process";
import { closeSync, mkdtempSync, openSync, readFileSync, rmSync, writeFileSync, writeSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { fileURLToPath } from "node:url";
import { ModelBuilder } from "../model/builder.js";
import { crc32, encodeBinaryModel, loadBinaryModelFile } from "../model/format/binary.js";
import { loadModelFile } from "../model/format/model-file.js";
import { MODEL_FORMAT } from "../model/format/schema.js";
import type { FiniteModel } from "../model/types.js";

const MAX_CARS = 20;
const MAX_MOVE = 5;
const REQUEST_MEANS = [3, 4];
const RETURN_MEANS = [3, 2];
const REQUEST_CAP = 18;
const RETURN_CAP = 19;
const RENT_PRICE = 10;
const MOVE_COST = 2;

/** Poisson(mean) probabilities of 0..cap, the tail beyond cap added to cap. */
function truncatedPoisson(mean: number, cap: number): Float64Array {
  const p = new Float64Array(cap + 1);
  let term = Math.exp(-mean);
  let sum = 0;
  for (let k = 0; k < cap; k++) {
    p[k] = term;
    sum += term;
    term *= mean / (k + 1);
  }
  p[cap] = 1 - sum;
  return p;
}

/** For one location holding `m` cars in the morning: P(next = n) and E[rentals; next = n]. */
function dayAt(loc: number): { prob: Float64Array[]; rent: Float64Array[] } {
  const req = truncatedPoisson(REQUEST_MEANS[loc], REQUEST_CAP);
  const ret = truncatedPoisson(RETURN_MEANS[loc], RETURN_CAP);
  const prob: Float64Array[] = [];
  const rent: Float64Array[] = [];
  for (let m = 0; m <= MAX_CARS; m++) {
    const p = new Float64Array(MAX_CARS + 1);
    const r = new Float64Array(MAX_CARS + 1);
    for (let q = 0; q <= REQUEST_CAP; q++) {
      const rented = Math.min(q, m);
      for (let b = 0; b <= RETURN_CAP; b++) {
        const n = Math.min(MAX_CARS, m - rented + b);
        const w = req[q] * ret[b];
        p[n] += w;
        r[n] += w * rented;
      }
    }
    prob.push(p);
    rent.push(r);
  }
  return { prob, rent };
}

/** The car-rental model: 441 states, 11 actions, 2,080,577 outcomes. */
export function carRentalModel(): FiniteModel {
  const side = MAX_CARS + 1;
  const nS = side * side;
  const actions = Array.from({ length: 2 * MAX_MOVE + 1 }, (_, a) => `move${a - MAX_MOVE >= 0 ? "+" : ""}${a - MAX_MOVE}`);
  const b = new ModelBuilder({
    name: "car-rental-441",
    nStates: nS,
    actions,
    features: ["rented", "moved"],
    gamma: 0.9,
    horizon: 1000,
    stateLabels: Array.from({ length: nS }, (_, s) => `${Math.floor(s / side)}/${s % side}`),
  });
  const [d1, d2] = [dayAt(0), dayAt(1)];
  const feat = new Float64Array(2);
  for (let s = 0; s < nS; s++) {
    const c1 = Math.floor(s / side);
    const c2 = s % side;
    for (let a = 0; a < actions.length; a++) {
      // Positive moves go from location 1 to 2; a move is limited by the cars there, extra cars vanish.
      const move = Math.max(-c2, Math.min(c1, a - MAX_MOVE));
      const m1 = Math.min(MAX_CARS, c1 - move);
      const m2 = Math.min(MAX_CARS, c2 + move);
      const [p1, r1, p2, r2] = [d1.prob[m1], d1.rent[m1], d2.prob[m2], d2.rent[m2]];
      for (let n1 = 0; n1 < side; n1++) {
        if (p1[n1] === 0) continue;
        for (let n2 = 0; n2 < side; n2++) {
          if (p2[n2] === 0) continue;
          feat[0] = r1[n1] / p1[n1] + r2[n2] / p2[n2];
          feat[1] = Math.abs(move);
          b.addOutcome(s, a, n1 * side + n2, p1[n1] * p2[n2], feat, RENT_PRICE * feat[0] - MOVE_COST * feat[1]);
        }
      }
    }
  }
  b.setStart(10 * side + 10, 1);
  b.setVariants({ profit: { name: "profit", weights: { rented: RENT_PRICE, moved: -MOVE_COST } } });
  return b.build();
}

/** Write a model as a gapwatch-mdp/1 file, one transition per line, without building its document. */
export function writeModelJson(m: FiniteModel, file: string): void {
  const fd = openSync(file, "w");
  try {
    const head = { format: MODEL_FORMAT, name: m.name, gamma: m.gamma, actions: m.actions, states: m.stateLabels, start: Array.from(m.start).indexOf(1), terminal: [], features: m.features };
    writeSync(fd, JSON.stringify(head).slice(0, -1) + ',\n "transitions": [\n');
    const nA = m.nActions;
    const nF = m.features.length;
    let chunk: string[] = [];
    for (let k = 0; k < m.nStates * nA; k++) {
      const outcomes = [];
      for (let o = m.saStart[k]; o < m.saStart[k + 1]; o++) {
        const features: Record<string, number> = {};
        for (let f = 0; f < nF; f++) if (m.featureValues[o * nF + f] !== 0) features[m.features[f]] = m.featureValues[o * nF + f];
        outcomes.push({ next: m.next[o], p: m.prob[o], features, intent: m.intent[o] });
      }
      chunk.push(`  ${JSON.stringify({ state: Math.floor(k / nA), action: k % nA, outcomes })}${k < m.nStates * nA - 1 ? "," : ""}\n`);
      if (chunk.length >= 64) {
        writeSync(fd, chunk.join(""));
        chunk = [];
      }
    }
    writeSync(fd, chunk.join(""));
    const rewards = Object.fromEntries(Object.entries(m.variants ?? {}).map(([k, v]) => [k, { weights: v.weights }]));
    writeSync(fd, ` ],\n "rewards": ${JSON.stringify(rewards)},\n "horizon": ${m.horizon}\n}\n`);
  } finally {
    closeSync(fd);
  }
}

/** CRC-32 over what defines a model: names, gamma, horizon and every array. */
export function modelChecksum(m: FiniteModel): string {
  const parts: Uint8Array[] = [Buffer.from(JSON.stringify([m.name, m.gamma, m.horizon, m.actions, m.stateLabels, m.features]))];
  for (const a of [m.terminal, m.start, m.saStart, m.next, m.prob, m.featureValues, m.intent]) parts.push(new Uint8Array(a.buffer, a.byteOffset, a.byteLength));
  return crc32(Buffer.from(parts.map((p) => crc32(p).toString(16)).join(" "))).toString(16).padStart(8, "0");
}

const now = (): number => Number(process.hrtime.bigint()) / 1e9;

/** Child mode: `parse FILE` (read, then time JSON.parse), `json FILE` or `gwbin FILE` (time the load). */
function child(mode: string, file: string): void {
  let checksum = "";
  const text = mode === "parse" ? readFileSync(file, "utf8") : "";
  const t = now();
  const cpu = process.cpuUsage();
  const loaded = mode === "parse" ? (JSON.parse(text) as { transitions: unknown[] }) : mode === "json" ? loadModelFile(file) : loadBinaryModelFile(file);
  const used = process.cpuUsage(cpu);
  const seconds = now() - t;
  checksum = "transitions" in loaded ? String(loaded.transitions.length) : modelChecksum(loaded);
  process.stdout.write(JSON.stringify({ seconds, cpuSeconds: (used.user + used.system) / 1e6, maxRssMB: process.resourceUsage().maxRSS / 1024, checksum }) + "\n");
}

interface ChildResult {
  seconds: number;
  cpuSeconds: number;
  maxRssMB: number;
  checksum: string;
}

function runChild(mode: string, file: string): ChildResult {
  const r = spawnSync(process.execPath, [fileURLToPath(import.meta.url), "--child", mode, file], { encoding: "utf8", maxBuffer: 1 << 20 });
  if (r.status !== 0) throw new Error(`big-model child ${mode} failed (${r.status}): ${r.stderr.slice(0, 400)}`);
  return JSON.parse(r.stdout.trim().split("\n").pop()!) as ChildResult;
}

export const bigModelEntry = {
  name: "big-model",
  title: "loading a 441-state, 11-action, 2.08M-outcome car-rental model: JSON file vs JSON.parse, peak RSS, compact .gwbin",
  run(): { ok: boolean; summary: string[] } {
    const dir = mkdtempSync(join(tmpdir(), "gapwatch-bench-big-"));
    try {
      let t = now();
      const model = carRentalModel();
      const want = modelChecksum(model);
      const jsonFile = join(dir, "car-rental.json");
      const binFile = join(dir, "car-rental.gwbin");
      writeModelJson(model, jsonFile);
      writeFileSync(binFile, encodeBinaryModel(model));
      const outcomes = model.next.length;
      const sizes = [jsonFile, binFile].map((f) => readFileSync(f).length / 1e6);
      process.stdout.write(`model ${model.nStates} states, ${model.nActions} actions, ${outcomes} outcomes; JSON ${sizes[0].toFixed(0)} MB, gwbin ${sizes[1].toFixed(0)} MB (generated and written in ${(now() - t).toFixed(1)} s)\n`);
      t = now();
      const parse = runChild("parse", jsonFile);
      const json = runChild("json", jsonFile);
      const bin = runChild("gwbin", binFile);
      // The machine may be shared: targets are judged on CPU time (user + system) of the timed region;
      // wall times are printed beside them.
      const ratio = json.cpuSeconds / parse.cpuSeconds;
      const speedup = json.cpuSeconds / bin.cpuSeconds;
      const cpuWall = (r: ChildResult) => `${r.cpuSeconds.toFixed(3)} s CPU (${r.seconds.toFixed(3)} s wall)`;
      const same = json.checksum === want && bin.checksum === want;
      const lines = [
        `JSON.parse of the text          ${cpuWall(parse)}`,
        `gapwatch load, JSON file        ${cpuWall(json)}   ${ratio.toFixed(2)}x JSON.parse by CPU, ${(json.seconds / parse.seconds).toFixed(2)}x by wall (target <= 2x: ${ratio <= 2 ? "met" : "NOT met"})`,
        `peak RSS of the JSON load       ${json.maxRssMB.toFixed(0)} MB (target < 600 MB: ${json.maxRssMB < 600 ? "met" : "NOT met"}; JSON.parse child: ${parse.maxRssMB.toFixed(0)} MB)`,
        `gapwatch load, .gwbin file      ${cpuWall(bin)}   ${speedup.toFixed(1)}x faster than the JSON load by CPU, ${(json.seconds / bin.seconds).toFixed(1)}x by wall (target >= 5x: ${speedup >= 5 ? "met" : "NOT met"}; peak RSS ${bin.maxRssMB.toFixed(0)} MB)`,
        `model checksum (CRC-32)         generated ${want}, JSON load ${json.checksum}, gwbin load ${bin.checksum}: ${same ? "same" : "MISMATCH"}`,
      ];
      process.stdout.write(lines.join("\n") + "\n\n");
      return {
        ok: same,
        summary: [
          `big-model JSON load ${json.cpuSeconds.toFixed(2)} s CPU = ${ratio.toFixed(2)}x JSON.parse (target <= 2x: ${ratio <= 2 ? "met" : "NOT met"}), peak RSS ${json.maxRssMB.toFixed(0)} MB (target < 600: ${json.maxRssMB < 600 ? "met" : "NOT met"})`,
          `big-model gwbin load ${bin.cpuSeconds.toFixed(3)} s CPU = ${speedup.toFixed(1)}x faster than JSON (target >= 5x: ${speedup >= 5 ? "met" : "NOT met"}); checksums ${same ? "same" : "MISMATCH"}`,
        ],
      };
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  },
};

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1] && process.argv[2] === "--child") {
  child(process.argv[3] ?? "", process.argv[4] ?? "");
}
