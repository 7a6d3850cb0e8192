/**
 * Track family: dynamics, gates, checkpoints, laps, slip, config errors, and invariants over random
 * configs. Expected values are computed by hand from the dynamics stated in src/model/track.ts
 * (v' = clamp(v + a), pos' = (pos + v') mod length; a gate at g sits between g-1 and g), not read back
 * from the implementation.
 */
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { compileTrack, compileTrackScenario, TRACK_EVENTS, trackStateIndex, type TrackConfig } from "../../src/model/track.js";
import { formatError, InputError } from "../../src/errors.js";
import { valueIteration } from "../../src/solve/value-iteration.js";
import { designerReward } from "../../src/model/reward.js";
import type { FiniteModel } from "../../src/model/types.js";
import type { ScenarioMeta } from "../../src/model/scenario.js";
import { cycleAverage } from "../helpers/cycle-average.js";

const ALL = [...TRACK_EVENTS];
const ACC = 0;
const COAST = 1;
const BRAKE = 2;

function cfg(over: Partial<TrackConfig> = {}): TrackConfig {
  return { name: "t", length: 12, vmax: 2, gates: [2, 6, 10], gamma: 0.9, horizon: 50, features: ALL, intentWeights: { checkpoint: 0.25, lap: 1 }, ...over };
}

interface Outcome {
  p: number;
  next: number;
  pos: number;
  vel: number;
  gateIdx: number;
  ev: Record<string, number>;
  intent: number;
}

/** The `next` gate index of a state, read from its label ("p3 v+1 next2"). */
function nextIdxOf(m: FiniteModel, s: number): number {
  return Number(/next(\d+)$/.exec(m.stateLabels[s])![1]);
}

function outcomes(m: FiniteModel, s: number, a: number): Outcome[] {
  const lay = m.layout!;
  if (lay.kind !== "track") throw new Error("not a track layout");
  const k = s * m.nActions + a;
  const out: Outcome[] = [];
  for (let o = m.saStart[k]; o < m.saStart[k + 1]; o++) {
    const ev: Record<string, number> = {};
    m.features.forEach((f, i) => (ev[f] = m.featureValues[o * m.features.length + i]));
    const n = m.next[o];
    out.push({ p: m.prob[o], next: n, pos: lay.posOf[n], vel: lay.velOf[n], gateIdx: nextIdxOf(m, n), ev, intent: m.intent[o] });
  }
  return out;
}

/** The single outcome of a slip-free (s, a). */
function step(m: FiniteModel, L: { length: number; vmax: number }, pos: number, vel: number, idx: number, a: number): Outcome {
  const os = outcomes(m, trackStateIndex(L, pos, vel, idx), a);
  expect(os.length).toBe(1);
  return os[0];
}

describe("track dynamics (hand-computed from v' = clamp(v + a), pos' = (pos + v') mod length)", () => {
  const c = cfg();
  const m = compileTrack(c, "test");

  it("has length * (2 vmax + 1) * gates states, three actions in order, no terminals", () => {
    expect(m.nStates).toBe(12 * 5 * 3);
    expect(m.actions).toEqual(["accelerate", "coast", "brake"]);
    expect(Array.from(m.terminal).every((t) => t === 0)).toBe(true);
    // Start: position 0 at rest, first gate ahead is gates[0] = 2.
    const s0 = trackStateIndex(c, 0, 0, 0);
    expect(m.start[s0]).toBe(1);
  });

  it("clamps velocity at +-vmax and brakes through zero into reverse", () => {
    expect(step(m, c, 0, 2, 0, ACC).vel).toBe(2); // clamp at vmax
    expect(step(m, c, 0, -2, 0, BRAKE).vel).toBe(-2); // clamp at -vmax
    expect(step(m, c, 0, 2, 0, BRAKE).vel).toBe(1);
    const rev = step(m, c, 4, 0, 1, BRAKE); // stopped: brake reverses
    expect(rev.vel).toBe(-1);
    expect(rev.pos).toBe(3);
    expect(rev.ev.reverse).toBe(1);
    expect(step(m, c, 4, -1, 1, BRAKE).ev.reverse).toBe(0); // already in reverse
    expect(step(m, c, 4, 1, 1, COAST).ev.actuation).toBe(0);
    expect(step(m, c, 4, 1, 1, ACC).ev.actuation).toBe(1);
    expect(step(m, c, 4, 1, 1, ACC).ev.distance).toBe(2);
  });

  it("wraps around the loop in both directions", () => {
    const f = step(m, c, 11, 1, 0, COAST);
    expect([f.pos, f.vel]).toEqual([0, 1]);
    const f2 = step(m, c, 11, 2, 0, COAST);
    expect(f2.pos).toBe(1);
    const b = step(m, c, 0, -1, 0, COAST);
    expect([b.pos, b.vel]).toEqual([11, -1]);
    const b2 = step(m, c, 1, -1, 0, BRAKE);
    expect([b2.pos, b2.vel]).toEqual([11, -2]);
  });

  it("crosses a gate at g exactly when p < g <= p + v' (forward) or p + v' < g <= p (backward)", () => {
    // Gate at 6 sits between positions 5 and 6. Expected next gate index 1 (= gate 6).
    expect(step(m, c, 4, 2, 1, COAST).ev.gateForward).toBe(1); // 4 -> 6: 4 < 6 <= 6
    expect(step(m, c, 5, 1, 1, COAST).ev.gateForward).toBe(1); // 5 -> 6
    expect(step(m, c, 6, 1, 1, COAST).ev.gate).toBe(0); // 6 -> 7: already past
    expect(step(m, c, 3, 2, 1, COAST).ev.gate).toBe(0); // 3 -> 5: stops short
    expect(step(m, c, 6, -1, 1, COAST).ev.gateBackward).toBe(1); // 6 -> 5: 5 < 6 <= 6
    expect(step(m, c, 7, -2, 1, COAST).ev.gateBackward).toBe(1); // 7 -> 5
    expect(step(m, c, 8, -2, 1, COAST).ev.gate).toBe(0); // 8 -> 6: 6 < 6 is false
    expect(step(m, c, 5, -1, 1, COAST).ev.gate).toBe(0); // 5 -> 4
  });

  it("handles a gate at position 0 across the wrap", () => {
    const c0 = cfg({ length: 10, gates: [0, 5] });
    const m0 = compileTrack(c0, "test");
    const f = step(m0, c0, 9, 1, 0, COAST); // 9 -> 10 = 0 crosses the gate at 0
    expect([f.ev.gateForward, f.ev.checkpoint, f.gateIdx]).toEqual([1, 1, 1]);
    const b = step(m0, c0, 0, -1, 1, COAST); // 0 -> -1 = 9 crosses it backward
    expect([b.ev.gateBackward, b.ev.checkpoint, b.gateIdx]).toEqual([1, 0, 1]);
    expect(step(m0, c0, 8, 2, 0, COAST).ev.gateForward).toBe(1); // 8 -> 10
    expect(step(m0, c0, 1, -2, 0, COAST).ev.gateBackward).toBe(1); // 1 -> -1
  });

  it("counts a checkpoint only for the expected gate, forward, and never twice by rocking", () => {
    // Crossing gate 6 forward while gate 2 (index 0) is expected: a gate pass, not a checkpoint.
    const wrong = step(m, c, 5, 0, 0, ACC);
    expect([wrong.ev.gateForward, wrong.ev.checkpoint, wrong.gateIdx]).toEqual([1, 0, 0]);
    const right = step(m, c, 5, 0, 1, ACC);
    expect([right.ev.gateForward, right.ev.checkpoint, right.gateIdx]).toEqual([1, 1, 2]);
    expect(right.intent).toBeCloseTo(0.25, 12);
    // Rock over gate 6 after its checkpoint: back (no checkpoint, index kept), forward again (no checkpoint).
    const back = step(m, c, 6, 0, 2, BRAKE);
    expect([back.pos, back.ev.gateBackward, back.gateIdx]).toEqual([5, 1, 2]);
    const stop = step(m, c, 5, -1, 2, ACC);
    const fwd = step(m, c, stop.pos, stop.vel, stop.gateIdx, ACC);
    expect([fwd.pos, fwd.ev.gateForward, fwd.ev.checkpoint, fwd.gateIdx]).toEqual([6, 1, 0, 2]);
    expect(fwd.intent).toBe(0);
  });

  it("a checkpoint is a service only at speed <= serveSpeed; a fast pass still moves the sequence on", () => {
    // Our rule (src/model/track.ts): serveSpeed 1, gates 2, 6, 10. From 5 at rest, accelerate: v' = 1,
    // arrives at 6 crossing gate 6 (index 1) at speed 1: checkpoint and service. From 4 at speed 1,
    // accelerate: v' = 2, arrives at 6 at speed 2: checkpoint, no service, index advanced to 2 all the same.
    const cs = cfg({ serveSpeed: 1, intentWeights: { service: 1 } });
    const ms = compileTrack(cs, "test");
    const slow = step(ms, cs, 5, 0, 1, ACC);
    expect([slow.ev.checkpoint, slow.ev.service, slow.gateIdx, slow.intent]).toEqual([1, 1, 2, 1]);
    const fast = step(ms, cs, 4, 1, 1, ACC);
    expect([fast.ev.checkpoint, fast.ev.service, fast.gateIdx, fast.intent]).toEqual([1, 0, 2, 0]);
    // Default serveSpeed = vmax: every checkpoint is a service.
    expect(step(m, c, 4, 1, 1, ACC).ev.service).toBe(1);
    expect(() => compileTrack(cfg({ serveSpeed: 3 }), "x.json")).toThrow(/serveSpeed/);
  });

  it("takes several gates in one step in sequence order", () => {
    // length 8, gates 3 and 4, start 0: sequence (3, 4); the checkpoint at 4 completes a lap.
    const c2 = cfg({ length: 8, gates: [3, 4] });
    const m2 = compileTrack(c2, "test");
    const o = step(m2, c2, 2, 1, 0, ACC); // 2 -> 4 at v' = 2 crosses 3 and 4
    expect([o.ev.gate, o.ev.checkpoint, o.ev.lap, o.gateIdx]).toEqual([2, 2, 1, 0]);
    expect(o.intent).toBeCloseTo(2 * 0.25 + 1, 12);
  });

  it("counts laps along an always-accelerate run (hand-computed positions 1, 3, 5, ... = 2t - 1)", () => {
    // length 12, gates 2, 6, 10, start 0: unwrapped position after t steps is 2t - 1 (t >= 1).
    // Checkpoints by step t: gate positions 2 + 4j <= 2t - 1; laps: positions 10 + 12j <= 2t - 1.
    let s = trackStateIndex(c, 0, 0, 0);
    let cps = 0;
    let laps = 0;
    const seen: [number, number, number][] = [];
    for (let t = 1; t <= 24; t++) {
      const o = outcomes(m, s, ACC)[0];
      cps += o.ev.checkpoint;
      laps += o.ev.lap;
      s = o.next;
      if (t === 6 || t === 12 || t === 24) seen.push([t, cps, laps]);
    }
    // t=6: P=11 -> checkpoints at 2, 6, 10 (3), laps at 10 (1). t=12: P=23 -> 2..22 (6), laps 10, 22 (2).
    // t=24: P=47 -> 2..46 (12), laps 10, 22, 34, 46 (4).
    expect(seen).toEqual([
      [6, 3, 1],
      [12, 6, 2],
      [24, 12, 4],
    ]);
  });

  it("completes a lap at the gate behind the start when the start sits just past a gate", () => {
    // length 12, gates 0, 4, 8, start 0: sequence 4, 8, 0; always accelerate reaches P = 13 at t = 7.
    const c3 = cfg({ gates: [0, 4, 8], start: 0 });
    const m3 = compileTrack(c3, "test");
    let s = trackStateIndex(c3, 0, 0, 1);
    expect(m3.start[s]).toBe(1);
    const lapAt: number[] = [];
    for (let t = 1; t <= 13; t++) {
      const o = outcomes(m3, s, ACC)[0];
      if (o.ev.lap) lapAt.push(t);
      s = o.next;
    }
    // P_t = 2t - 1 crosses 12 at t = 7 and 24 at t = 13.
    expect(lapAt).toEqual([7, 13]);
  });

  it("provides lapProgress, observations and a track layout", () => {
    const phi = m.potentials!.lapProgress;
    // At position 0 expecting gate 2: forward distance 2 -> Phi = 1 - 2/12.
    expect(phi[trackStateIndex(c, 0, 0, 0)]).toBeCloseTo(1 - 2 / 12, 12);
    // At position 2 still expecting gate 2 (came back over it): a full loop away -> Phi = 0.
    expect(phi[trackStateIndex(c, 2, 0, 0)]).toBeCloseTo(0, 12);
    // Right behind gate 6 expecting it: distance 1.
    expect(phi[trackStateIndex(c, 5, 0, 1)]).toBeCloseTo(1 - 1 / 12, 12);
    const obs = m.observations!;
    expect(obs.dim).toBe(3);
    const s = trackStateIndex(c, 9, -2, 2);
    expect(Array.from(obs.values.slice(s * 3, s * 3 + 3))).toEqual([9 / 12, -1, 2 / 3]);
    const lay = m.layout!;
    expect(lay.kind).toBe("track");
    if (lay.kind === "track") {
      expect([lay.length, lay.gates, lay.posOf[s], lay.velOf[s]]).toEqual([12, [2, 6, 10], 9, -2]);
    }
  });
});

describe("track slip", () => {
  it("splits accelerate/brake into (1 - slip) as commanded and slip as coast; probabilities sum to 1", () => {
    const c = cfg({ slip: 0.2 });
    const m = compileTrack(c, "test");
    for (let s = 0; s < m.nStates; s++) {
      const coast = outcomes(m, s, COAST);
      expect(coast.length).toBe(1);
      for (const a of [ACC, BRAKE]) {
        const os = outcomes(m, s, a);
        expect(os.map((o) => o.p)).toEqual([0.8, 0.2]);
        expect(os[0].p + os[1].p).toBeCloseTo(1, 15);
        expect(os[1].next).toBe(coast[0].next); // the slipped command is a coast
        expect(os[1].ev.actuation).toBe(0);
      }
    }
  });

  it("has one outcome per state-action without slip", () => {
    const m = compileTrack(cfg(), "test");
    expect(m.saStart[m.nStates * m.nActions]).toBe(m.nStates * m.nActions);
  });
});

describe("track config errors: one line naming the file and the key", () => {
  const cases: [string, Partial<TrackConfig> | Record<string, unknown>, string, string][] = [
    ["gate outside the track", { gates: [2, 12] }, "track.gates", "$.gates[1]"],
    ["negative gate", { gates: [-1] }, "track.gates", "$.gates[0]"],
    ["gates not increasing", { gates: [6, 2] }, "track.gates", "$.gates[1]"],
    ["no gates", { gates: [] }, "track.gates", "$.gates"],
    ["vmax < 1", { vmax: 0 }, "track.vmax", "$.vmax"],
    ["vmax >= length", { vmax: 12 }, "track.vmax", "$.vmax"],
    ["fractional vmax", { vmax: 1.5 }, "track.vmax", "$.vmax"],
    ["slip = 1", { slip: 1 }, "track.slip", "$.slip"],
    ["negative slip", { slip: -0.1 }, "track.slip", "$.slip"],
    ["length < 2", { length: 1, vmax: 1, gates: [0] }, "track.length", "$.length"],
    ["start off the track", { start: 12 }, "track.start", "$.start"],
    ["gamma = 1", { gamma: 1 }, "track.gamma", "$.gamma"],
    ["horizon 0", { horizon: 0 }, "track.horizon", "$.horizon"],
    ["unknown feature", { features: ["step", "speedBonus"] }, "track.features", "$.features[1]"],
    ["duplicate feature", { features: ["gate", "gate"] }, "track.features", "$.features[1]"],
    ["unknown intent event", { intentWeights: { laps: 1 } }, "track.intentWeights", "$.intentWeights.laps"],
    ["non-numeric intent weight", { intentWeights: { lap: "1" } }, "track.intentWeights", "$.intentWeights.lap"],
  ];
  for (const [what, over, code, key] of cases) {
    it(`${what} -> ${code}`, () => {
      let err: unknown;
      try {
        compileTrack({ ...cfg(), ...over } as TrackConfig, "envs/x/scenario.json");
      } catch (e) {
        err = e;
      }
      expect(err).toBeInstanceOf(InputError);
      const ie = err as InputError;
      expect(ie.code).toBe(code);
      expect(ie.exitCode).toBe(2);
      expect(ie.where).toBe(`envs/x/scenario.json ${key}`);
      const line = formatError(ie);
      expect(line).not.toContain("\n");
      expect(line).toContain("envs/x/scenario.json");
      expect(line).toContain(key);
    });
  }

  it("compileTrackScenario names the scenario.json of the folder", () => {
    const meta = { ...cfg({ vmax: 0 }), name: "x", family: "track", title: "", description: "", trap: "speed-proxy", intent: "", gaming: [], sound: [] } as unknown as ScenarioMeta;
    expect(() => compileTrackScenario("/tmp/envs/x", meta)).toThrow(expect.objectContaining({ code: "track.vmax", where: "/tmp/envs/x/scenario.json $.vmax" }));
  });
});

/** Largest cyclic distance between consecutive gates (length for one gate). */
function maxGap(length: number, gates: number[]): number {
  let gap = 0;
  for (let i = 0; i < gates.length; i++) gap = Math.max(gap, (gates[(i + 1) % gates.length] - gates[i] + length - 1) % length + 1);
  return gap;
}

/** Number of unwrapped positions g + k*length in (lo, hi]: floor((hi - g)/L) - floor((lo - g)/L). */
function between(g: number, length: number, lo: number, hi: number): number {
  return Math.floor((hi - g) / length) - Math.floor((lo - g) / length);
}

const configArb = fc
  .record({
    length: fc.integer({ min: 2, max: 14 }),
    vmaxRaw: fc.integer({ min: 1, max: 3 }),
    gateMask: fc.array(fc.boolean(), { minLength: 14, maxLength: 14 }),
    slip: fc.constantFrom(0, 0.1, 0.5),
    startRaw: fc.nat(13),
  })
  .map(({ length, vmaxRaw, gateMask, slip, startRaw }) => {
    let gates = gateMask.slice(0, length).flatMap((b, i) => (b ? [i] : []));
    if (gates.length === 0) gates = [startRaw % length];
    return cfg({ length, vmax: Math.min(vmaxRaw, length - 1), gates, slip, start: startRaw % length });
  });

describe("track invariants over random configs (fast-check)", () => {
  it("rows sum to 1, next states are in range, and the state count is length * (2 vmax + 1) * gates", () => {
    fc.assert(
      fc.property(configArb, (c) => {
        const m = compileTrack(c, "prop");
        expect(m.nStates).toBe(c.length * (2 * c.vmax + 1) * c.gates.length);
        for (let k = 0; k < m.nStates * m.nActions; k++) {
          let sum = 0;
          for (let o = m.saStart[k]; o < m.saStart[k + 1]; o++) {
            sum += m.prob[o];
            expect(m.next[o] >= 0 && m.next[o] < m.nStates).toBe(true);
          }
          expect(Math.abs(sum - 1)).toBeLessThan(1e-12);
        }
      }),
      { numRuns: 60 },
    );
  });

  /*
   * Along any trajectory, with P the unwrapped position (start position plus the sum of the new
   * velocities, read from the layout, not from the crossing code):
   *  1. winding: sum over gates of (forward - backward crossings) = sum_g #{g + kL in (P_0, P_T]}
   *     (signed: negative when P_T < P_0), since each crossing of g + kL moves P across it once;
   *  2. gate = gateForward + gateBackward;
   *  3. while the largest drawdown below the running maximum M stays <= L - maxGap, the expected gate is
   *     always the first gate position above M, so checkpoints = sum_g #{g + kL in (P_0, M_T]} and laps
   *     count the positions of the lap gate (the one just behind the start) in (P_0, M_T].
   */
  it("forward minus backward crossings equal the winding; checkpoints follow the running maximum", () => {
    fc.assert(
      fc.property(
        configArb,
        fc.array(fc.tuple(fc.integer({ min: 0, max: 2 }), fc.boolean()), { minLength: 1, maxLength: 80 }),
        (c, actions) => {
          const m = compileTrack(c, "prop");
          const lay = m.layout!;
          if (lay.kind !== "track") throw new Error("layout");
          const L = c.length;
          let s = m.start.indexOf(1);
          const P0 = c.start ?? 0;
          let P = P0;
          let M = P0;
          let drawdown = 0;
          const sum: Record<string, number> = Object.fromEntries(ALL.map((e) => [e, 0]));
          for (const [a, slipped] of actions) {
            const os = outcomes(m, s, a);
            const o = slipped && os.length > 1 ? os[1] : os[0];
            for (const e of ALL) sum[e] += o.ev[e];
            P += o.vel;
            M = Math.max(M, P);
            drawdown = Math.max(drawdown, M - P);
            expect(((P % L) + L) % L).toBe(o.pos);
            s = o.next;
          }
          const winding = c.gates.reduce((acc, g) => acc + between(g, L, P0, P), 0);
          expect(sum.gateForward - sum.gateBackward).toBe(winding);
          expect(sum.gate).toBe(sum.gateForward + sum.gateBackward);
          if (drawdown <= L - maxGap(L, c.gates)) {
            expect(sum.checkpoint).toBe(c.gates.reduce((acc, g) => acc + between(g, L, P0, M), 0));
            const first = c.gates.findIndex((g) => g > P0);
            const lapGate = c.gates[((first < 0 ? 0 : first) + c.gates.length - 1) % c.gates.length];
            expect(sum.lap).toBe(between(lapGate, L, P0, M));
          }
          expect(sum.checkpoint).toBeLessThanOrEqual(sum.gateForward);
        },
      ),
      { numRuns: 200 },
    );
  });
});

describe("the rocking exploit on a slip-free ring (rates computed by hand from the dynamics)", () => {
  // length 24, vmax 2, gates 0, 8, 16. Computed by hand from the dynamics: rocking over one gate
  // (accelerate: cross forward at v' = +1; brake: stop; brake: cross back at v' = -1; accelerate: stop)
  // crosses 2 gates per 4 steps = 0.5 per step; lapping at top speed crosses G gates per length/vmax
  // steps = 3 * 2 / 24 = 0.25 per step. So the per-crossing reward prefers rocking.
  const c = cfg({ length: 24, vmax: 2, gates: [0, 8, 16], gamma: 0.97, start: 0 });
  const m = compileTrack(c, "test");

  it("lapping at top speed crosses 0.25 gates per step and serves every checkpoint", () => {
    const always = new Int32Array(m.nStates).fill(ACC);
    expect(cycleAverage(m, always, "gate")).toBeCloseTo(0.25, 12);
    expect(cycleAverage(m, always, "checkpoint")).toBeCloseTo(0.25, 12);
    expect(cycleAverage(m, always, "lap")).toBeCloseTo(1 / 12, 12);
  });

  it("the optimum of a per-crossing reward rocks: 0.5 crossings per step and no checkpoints", () => {
    const sol = valueIteration(m, designerReward(m, { name: "axles", weights: { gate: 1 } }));
    expect(cycleAverage(m, sol.policy, "gate")).toBeCloseTo(0.5, 12);
    expect(cycleAverage(m, sol.policy, "checkpoint")).toBe(0);
    expect(cycleAverage(m, sol.policy, "reverse")).toBeCloseTo(0.25, 12);
  });
});
