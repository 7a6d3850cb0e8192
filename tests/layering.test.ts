/**
 * The house's layers point one way. Reads the import graph of src/ and policies/ (static imports,
 * re-exports, `import type` and dynamic `import()`, all counted) and fails on any import cycle between
 * files and on any import from a lower layer to a higher one. The order is written once, here, and in
 * DEVELOPERS.md's map. Learners additionally never see intent: policies/ may take only the learner view
 * from src/model and never names intent.
 */
import { mkdtempSync, readdirSync, readFileSync, rmSync, statSync, writeFileSync, mkdirSync } from "node:fs";
import { tmpdir } from "node:os";
import { dirname, join, relative, resolve } from "node:path";
import { describe, expect, it } from "vitest";

/** Lowest first. A unit is a folder of src/ (or a top-level file of src/, or policies/). */
export const LAYERS: readonly (readonly string[])[] = [
  ["errors", "util"],
  ["rng"],
  ["stats", "run"],
  ["model"],
  ["sim", "ingest"],
  ["env", "solve", "policies", "store"],
  ["audit", "pressure", "monitor", "check"],
  ["train", "tune"],
  ["batch", "report"],
  ["app", "bench"],
  ["cli"],
  ["index"],
];

const ROOT = resolve(import.meta.dirname, "..");

interface Graph {
  files: string[];
  /** file -> imported files (both relative to the tree root). */
  imports: Map<string, string[]>;
}

function readGraph(root: string): Graph {
  const files: string[] = [];
  const walk = (d: string) => {
    for (const f of readdirSync(d)) {
      const p = join(d, f);
      if (statSync(p).isDirectory()) walk(p);
      else if (p.endsWith(".ts")) files.push(relative(root, p));
    }
  };
  for (const top of ["src", "policies"]) walk(join(root, top));
  const imports = new Map<string, string[]>();
  for (const f of files) {
    const text = readFileSync(join(root, f), "utf8");
    const specs = [
      ...[...text.matchAll(/^\s*(?:import|export)\s[^;]*?\sfrom\s+"(\.[^"]+)"/gms)].map((m) => m[1]),
      ...[...text.matchAll(/^\s*import\s+"(\.[^"]+)"/gm)].map((m) => m[1]),
      ...[...text.matchAll(/import\(\s*"(\.[^"]+)"\s*\)/g)].map((m) => m[1]),
    ];
    imports.set(f, [...new Set(specs.map((s) => relative(root, resolve(root, dirname(f), s)).replace(/\.js$/, ".ts")))]);
  }
  return { files, imports };
}

/** The layer unit of a file: src/<folder>/..., src/<file>.ts, or policies/. */
export function unitOf(file: string): string {
  const parts = file.split("/");
  if (parts[0] === "policies") return "policies";
  return parts.length === 2 ? parts[1].replace(/\.ts$/, "") : parts[1];
}

function rankOf(unit: string): number {
  const r = LAYERS.findIndex((l) => l.includes(unit));
  return r;
}

/** Imports that go up or sideways between units, and units missing from LAYERS. */
function layerViolations(g: Graph): string[] {
  const out: string[] = [];
  for (const [f, targets] of g.imports) {
    const a = unitOf(f);
    if (rankOf(a) < 0) out.push(`${f}: unit "${a}" is not in LAYERS`);
    for (const t of targets) {
      const b = unitOf(t);
      if (a === b) continue;
      if (rankOf(b) < 0) out.push(`${f} -> ${t}: unit "${b}" is not in LAYERS`);
      else if (rankOf(b) >= rankOf(a)) out.push(`${f} (${a}, layer ${rankOf(a)}) imports ${t} (${b}, layer ${rankOf(b)})`);
    }
  }
  return out;
}

/** Every file-level import cycle, one per strongly connected component (Tarjan 1972, recursive: the graph is small). */
function cycles(g: Graph): string[][] {
  const index = new Map<string, number>();
  const low = new Map<string, number>();
  const stack: string[] = [];
  const on = new Set<string>();
  const out: string[][] = [];
  let n = 0;
  const visit = (v: string) => {
    index.set(v, n);
    low.set(v, n++);
    stack.push(v);
    on.add(v);
    for (const w of g.imports.get(v) ?? []) {
      if (!g.imports.has(w)) continue;
      if (!index.has(w)) {
        visit(w);
        low.set(v, Math.min(low.get(v)!, low.get(w)!));
      } else if (on.has(w)) low.set(v, Math.min(low.get(v)!, index.get(w)!));
    }
    if (low.get(v) === index.get(v)) {
      const comp: string[] = [];
      let w: string;
      do {
        w = stack.pop()!;
        on.delete(w);
        comp.push(w);
      } while (w !== v);
      if (comp.length > 1 || (g.imports.get(v) ?? []).includes(v)) out.push(comp.sort());
    }
  };
  for (const f of g.files) if (!index.has(f)) visit(f);
  return out;
}

describe("layering", () => {
  const g = readGraph(ROOT);

  it("reads the whole tree", () => {
    expect(g.files.length).toBeGreaterThan(100);
    expect(g.imports.get("src/cli/program.ts")?.length).toBeGreaterThan(3);
  });

  it("every unit has a layer, and no import goes from a lower layer to a higher one (or sideways)", () => {
    expect(layerViolations(g)).toEqual([]);
  });

  it("there is no import cycle between files", () => {
    expect(cycles(g)).toEqual([]);
  });

  it("learners see no intent: policies/ imports only the learner view from src/model, nothing of monitor/solve/audit/pressure, and never names intent", () => {
    for (const f of g.files.filter((x) => x.startsWith("policies/"))) {
      for (const t of g.imports.get(f) ?? []) {
        expect(t, f).not.toMatch(/^src\/(monitor|solve|audit|pressure|train|batch|report|app|cli)\//);
        if (t.startsWith("src/model/")) expect(t, f).toMatch(/^src\/model\/(learner-view|sampler)\.ts$/);
      }
      expect(readFileSync(join(ROOT, f), "utf8").toLowerCase(), f).not.toContain("intent");
    }
  });

  it("fails on a deliberately wrong import: an upward import, and a cycle", () => {
    const tmp = mkdtempSync(join(tmpdir(), "gapwatch-layering-"));
    try {
      const put = (file: string, text: string) => {
        mkdirSync(dirname(join(tmp, file)), { recursive: true });
        writeFileSync(join(tmp, file), text);
      };
      put("src/model/types.ts", 'import type { RunResult } from "../run/schema.js";\nimport { runAll } from "../app/all.js";\n');
      put("src/run/schema.ts", "export interface RunResult { ok: boolean }\n");
      put("src/app/all.ts", 'import type { X } from "../model/types.js";\nexport const runAll = 1;\n');
      put("src/solve/a.ts", 'import { b } from "./b.js";\nexport const a = 1;\n');
      put("src/solve/b.ts", 'export { a } from "./a.js";\nexport const b = 2;\n');
      put("policies/learner.ts", 'import { x } from "../src/monitor/evaluate.js";\n');
      mkdirSync(join(tmp, "src/monitor"), { recursive: true });
      put("src/monitor/evaluate.ts", "export const x = 1;\n");
      const bad = readGraph(tmp);
      const v = layerViolations(bad);
      expect(v).toContain("src/model/types.ts (model, layer 3) imports src/app/all.ts (app, layer 9)");
      expect(v.some((l) => l.startsWith("policies/learner.ts (policies"))).toBe(true);
      expect(v.some((l) => l.startsWith("src/model/types.ts") && l.includes("src/run/schema.ts"))).toBe(false);
      expect(cycles(bad)).toEqual(expect.arrayContaining([["src/solve/a.ts", "src/solve/b.ts"], ["src/app/all.ts", "src/model/types.ts"]]));
    } finally {
      rmSync(tmp, { recursive: true, force: true });
    }
  });
});
