/**
 * runAudit on every built-in scenario: gaming variants get a critical finding naming the trap the
 * scenario declares, sound variants get none; hand-computed loop rates; properties of the loop and
 * task-rate definitions on random models; model files audit like the scenarios they were exported from.
 */
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { runAudit, runAuditDetailed } from "../../src/audit/run.js";
import { prepareAudit } from "../../src/audit/context.js";
import { bestLoop } from "../../src/audit/checks/reward-loop.js";
import { weightIntervals } from "../../src/audit/checks/sensitivity.js";
import { ModelBuilder } from "../../src/model/builder.js";
import { exportModel, formatModelDocument } from "../../src/model/format/export.js";
import { loadModelFile } from "../../src/model/format/model-file.js";
import { builtinScenarioNames, loadScenario, readScenarioMeta } from "../../src/env/index.js";
import type { TrapKind } from "../../src/model/scenario.js";
import { designerReward } from "../../src/model/reward.js";
import type { FiniteModel, RewardVariant } from "../../src/model/types.js";
import { evaluatePolicy } from "../../src/solve/evaluation.js";
import { deterministicPolicy, startValue } from "../../src/solve/policy.js";
import { valueIteration } from "../../src/solve/value-iteration.js";
import { solveVariant } from "../../src/solve/compare.js";

/** Which check names each declared trap kind (our mapping; see README "Static audit and pressure"). */
const TRAP_CHECK: Record<TrapKind, string> = {
  "repeatable-event": "reward-loop",
  "speed-proxy": "reward-loop",
  "omitted-feature": "regret",
  "mis-scaled-risk": "risk-indifference",
  "shared-budget": "regret",
};

describe("built-in scenarios", () => {
  for (const name of builtinScenarioNames()) {
    const meta = readScenarioMeta(name);
    const model = loadScenario(name).model;
    for (const v of meta.gaming) {
      it(`${name}/${v} (gaming) gets a critical ${TRAP_CHECK[meta.trap]} finding`, () => {
        const r = runAudit(model, model.variants![v], { sensitivity: name === "fresh-coat-tug" });
        const crit = r.findings.filter((f) => f.severity === "critical").map((f) => f.check);
        expect(crit).toContain(TRAP_CHECK[meta.trap]);
      });
    }
    for (const v of meta.sound) {
      it(`${name}/${v} (sound) gets no critical finding`, () => {
        const r = runAudit(model, model.variants![v], { sensitivity: name !== "assay-carousel" });
        expect(r.findings.filter((f) => f.severity === "critical")).toEqual([]);
        expect(r.regretNorm).toBeLessThan(0.05);
      });
    }
  }
});

describe("evidence on the scenarios, hand-computed", () => {
  it("seed-vault-courier/per-scan: the arch loop pays (0.2 - 2 * 0.01) / 2 per step and no intent", () => {
    // Hand computation from envs/seed-vault-courier: entering the arch cell logs (tag 0.2), each step costs 0.01.
    const m = loadScenario("seed-vault-courier").model;
    const r = runAudit(m, m.variants!["per-scan"], { sensitivity: false });
    expect(r.loops[0].meanDesignerPerStep).toBeCloseTo(0.09, 12);
    expect(r.loops[0].meanIntentPerStep).toBe(0);
    expect(r.loops[0].states).toHaveLength(2);
  });

  it("assay-carousel/belt-travel: the flat-out loop moves 2 positions per step and reads nothing; the energy charge never applies on it", () => {
    // Hand computation from the scenario: at top speed 2 on a ring of 24 the loop visits 24 / 2 = 12
    // states, pays 2 (distance) per step and passes every probe at speed 2 > serveSpeed 1 (no reading).
    // Coasting never actuates, so slip (which only turns accelerate/brake into coast) cannot break the
    // loop (lap probability 1) and the energy variant's actuation charge is never paid on it.
    const m = loadScenario("assay-carousel").model;
    const a = runAuditDetailed(m, m.variants!["belt-travel"], { sensitivity: false });
    expect(a.loops[0].meanDesignerPerStep).toBeCloseTo(2, 12);
    expect(a.loops[0].meanIntentPerStep).toBe(0);
    expect(a.loops[0].states).toHaveLength(12);
    expect(a.loopEvidence[0].lapProbability).toBeCloseTo(1, 12);
    const e = runAudit(m, m.variants!["belt-travel-energy"], { sensitivity: false });
    expect(e.loops[0].meanDesignerPerStep).toBeCloseTo(2, 12);
    expect(e.loops[0].meanIntentPerStep).toBe(0);
  });

  it("fresh-coat-tug/fast: the regret finding names the omitted fragile feature and the north store is served worse", () => {
    const m = loadScenario("fresh-coat-tug").model;
    const r = runAudit(m, m.variants!.fast);
    const regret = r.findings.find((f) => f.check === "regret")!;
    expect(regret.severity).toBe("critical");
    const omitted = regret.evidence.omittedFeatures as { feature: string; fixAt: number }[];
    expect(omitted.map((o) => o.feature)).toContain("fragile");
    const fix = omitted.find((o) => o.feature === "fragile")!.fixAt;
    expect(fix).toBeLessThan(0);
    // Independent re-solve: with fragile weighted a little beyond the edge, the designer optimum keeps the intent.
    const fixed: RewardVariant = { ...m.variants!.fast, weights: { ...m.variants!.fast.weights, fragile: fix * 1.05 } };
    expect(solveVariant(m, fixed).regretNorm).toBeLessThan(1e-9);
    const broken: RewardVariant = { ...m.variants!.fast, weights: { ...m.variants!.fast.weights, fragile: fix * 0.95 } };
    expect(solveVariant(m, broken).regretNorm).toBeGreaterThan(0.3);
    const g = r.findings.find((f) => f.check === "regret-by-group")!;
    expect(g.evidence.worst).toBe("north-store");
  });

  it("quench-hall-run/light-loss: the route's failure probability and p* agree with a direct lottery on its exact returns", () => {
    const m = loadScenario("quench-hall-run").model;
    const r = runAudit(m, m.variants!["light-loss"], { sensitivity: false });
    const f = r.findings.find((x) => x.check === "risk-indifference")!;
    const ev = f.evidence as Record<string, number>;
    expect(ev.failProbability).toBeGreaterThan(0.01);
    // (1 - p) ok + p fail must reproduce the route's overall return; p* solves (1 - p) ok + p fail = safe.
    expect((1 - ev.failProbability) * ev.returnIfOk + ev.failProbability * ev.returnIfFail).toBeCloseTo(ev.riskyReturn, 9);
    const p = ev.indifferenceProbability;
    expect((1 - p) * ev.returnIfOk + p * ev.returnIfFail).toBeCloseTo(ev.safeReturn, 9);
    // failValueNeeded puts p* at max-risk.
    expect((ev.returnIfOk - ev.safeReturn) / (ev.returnIfOk - ev.failValueNeeded)).toBeCloseTo(0.01, 12);
  });
});

/** A random model (optionally without terminals) for properties. */
function randomModel(seed: number[], nS: number, nA: number, withTerminal: boolean): FiniteModel {
  let i = 0;
  const next = () => seed[i++ % seed.length];
  const b = new ModelBuilder({ name: "rand", nStates: nS, actions: Array.from({ length: nA }, (_, a) => `a${a}`), features: ["f"], gamma: 0.9, horizon: 50, stateLabels: Array.from({ length: nS }, (_, s) => `s${s}`) });
  if (withTerminal) b.setTerminal(nS - 1);
  const last = withTerminal ? nS - 1 : nS;
  for (let s = 0; s < last; s++) {
    for (let a = 0; a < nA; a++) {
      const t1 = next() % nS;
      const t2 = next() % nS;
      const f1 = (next() % 7) - 3;
      const f2 = (next() % 7) - 3;
      if (t1 === t2 || next() % 2 === 0) b.addOutcome(s, a, t1, 1, [f1], (next() % 5) - 2);
      else {
        b.addOutcome(s, a, t1, 0.7, [f1], (next() % 5) - 2);
        b.addOutcome(s, a, t2, 0.3, [f2], (next() % 5) - 2);
      }
    }
  }
  b.setStart(0, 1);
  return b.build();
}

describe("properties on random models (fast-check)", () => {
  const arb = fc.record({ seed: fc.array(fc.nat(1000), { minLength: 40, maxLength: 80 }), nS: fc.integer({ min: 2, max: 6 }), nA: fc.integer({ min: 1, max: 3 }) });
  const variant: RewardVariant = { name: "v", weights: { f: 1 } };

  it("continuing models: the task rate is (1 - gamma) times the intent-optimal policy's designer value", () => {
    fc.assert(
      fc.property(arb, ({ seed, nS, nA }) => {
        const m = randomModel(seed, nS, nA, false);
        const ctx = prepareAudit(m, variant);
        const rd = designerReward(m, variant);
        const pol = deterministicPolicy(m, valueIteration(m, m.intent).policy);
        const v = startValue(m, evaluatePolicy(m, rd, pol, { tol: 1e-12 }).values);
        expect(ctx.task.designerRate).toBeCloseTo((1 - m.gamma) * v, 6);
      }),
      { numRuns: 60 },
    );
  });

  it("the best loop is at least as good as every certain self-loop of a reachable state and is a real cycle", () => {
    fc.assert(
      fc.property(arb, fc.boolean(), ({ seed, nS, nA }, term) => {
        const m = randomModel(seed, nS, nA, term);
        const ctx = prepareAudit(m, variant);
        const loop = bestLoop(ctx);
        const rd = ctx.rd;
        for (let s = 0; s < nS; s++) {
          if (m.terminal[s] || !ctx.reachable[s]) continue;
          for (let a = 0; a < nA; a++) {
            const k = s * nA + a;
            for (let o = m.saStart[k]; o < m.saStart[k + 1]; o++) {
              if (m.next[o] === s && m.prob[o] >= 0.5) expect(loop).not.toBeNull(), expect(loop!.meanDesignerPerStep).toBeGreaterThanOrEqual(rd[o] - 1e-12);
            }
          }
        }
        if (loop) {
          // Each outcome leads to the next state of the cycle, and the mean is the mean of its rewards.
          loop.outcomes.forEach((o, i) => expect(m.next[o]).toBe(loop.stateIds[(i + 1) % loop.length]));
          const mean = loop.outcomes.reduce((acc, o) => acc + rd[o], 0) / loop.length;
          expect(loop.meanDesignerPerStep).toBeCloseTo(mean, 9);
        }
      }),
      { numRuns: 80 },
    );
  });

  it("weight intervals: inside a reported interval the designer optimum keeps the intent (independent re-solve)", () => {
    fc.assert(
      fc.property(arb, fc.double({ min: 0.05, max: 0.95, noNaN: true }), ({ seed, nS, nA }, t) => {
        const m = randomModel(seed, nS, nA, true);
        const ctx = prepareAudit(m, variant);
        const [w] = weightIntervals(ctx, ["f"]);
        if (!w.okAtCurrent) return;
        const lo = Number.isFinite(w.lo!) ? w.lo! : w.weight - 10;
        const hi = Number.isFinite(w.hi!) ? w.hi! : w.weight + 10;
        const x = lo + t * (hi - lo);
        const r = solveVariant(m, { name: "x", weights: { f: x } });
        expect(r.regret).toBeLessThan(1e-6 * (1 + Math.abs(r.intentOptimal.intent)));
      }),
      { numRuns: 40 },
    );
  });
});

describe("model files", () => {
  it("an exported scenario audits to the same critical findings as the scenario", () => {
    const m = loadScenario("seed-vault-courier").model;
    const dir = mkdtempSync(join(tmpdir(), "gapwatch-audit-"));
    const file = join(dir, "courier.json");
    writeFileSync(file, formatModelDocument(exportModel(m)));
    const fm = loadModelFile(file);
    const a = runAudit(m, m.variants!["per-scan"], { sensitivity: false });
    const b = runAudit(fm, fm.variants!["per-scan"], { sensitivity: false });
    const crit = (r: typeof a) => r.findings.filter((f) => f.severity === "critical").map((f) => f.check).sort();
    expect(crit(b)).toEqual(crit(a));
    expect(b.regretNorm).toBeCloseTo(a.regretNorm, 9);
    expect(b.loops[0].meanDesignerPerStep).toBeCloseTo(a.loops[0].meanDesignerPerStep, 12);
  });
});
