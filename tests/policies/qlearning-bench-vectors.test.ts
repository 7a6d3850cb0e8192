/**
 * Q-learning reproduces the shared benchmark's small test vectors bit for bit
 * (bench PROBLEM.md section 5 loop; vectors from bench/peers/testvectors.txt, produced by the C peer).
 * Both the fast path over a model view and the generic TabularEnv loop are checked.
 */
import { describe, expect, it } from "vitest";
import { Xorshift32 } from "../../src/rng/rng.js";
import { trainQLearning } from "../../policies/qlearning.js";
import { envOf, lavaKind, lavaModel, opaqueEnv } from "./textbook-models.js";

// bench/peers/testvectors.txt (expected CHECK lines of the C peer gridrl.c)
const VECTORS = [
  { W: 3, H: 3, steps: 1000, seed: 12345, episodes: 227, goals: 214, hazards: 13, timeouts: 0, qsum: "8.047106606565", qbits: "4020181e5b6d3f83", greedyLen: 4 },
  { W: 7, H: 5, steps: 200000, seed: 2654435769, episodes: 18636, goals: 17290, hazards: 1341, timeouts: 5, qsum: "54.288233609573", qbits: "404b24e4d6c35c7f", greedyLen: 10 },
  { W: 8, H: 8, steps: 100000, seed: 1, episodes: 6482, goals: 5909, hazards: 548, timeouts: 25, qsum: "70.765075249870", qbits: "4051b0f6fe2e4b0e", greedyLen: 14 },
];

function bits(x: number): string {
  const dv = new DataView(new ArrayBuffer(8));
  dv.setFloat64(0, x);
  return dv.getBigUint64(0).toString(16).padStart(16, "0");
}

describe("Q-learning on the benchmark grid (bench PROBLEM.md section 5)", () => {
  it("the first six xorshift32 draws match PROBLEM.md section 4", () => {
    const r = new Xorshift32(2654435769);
    expect(Array.from({ length: 6 }, () => r.uint32())).toEqual([1359758873, 3761132862, 2075758394, 25405621, 3862129951, 4186559031]);
  });

  for (const v of VECTORS) {
    for (const path of ["fast", "generic"] as const) {
      it(`ql ${v.W} ${v.H} ${v.steps} ${v.seed} (${path} loop)`, () => {
        const model = lavaModel(v.W, v.H);
        const env = path === "fast" ? envOf(model) : opaqueEnv(envOf(model));
        const res = trainQLearning(env, { alpha: 0.1, gamma: 0.99, epsilon: 0.1 }, { steps: v.steps, rng: new Xorshift32(v.seed) });
        let goals = 0;
        let hazards = 0;
        res.stats.terminatedAt.forEach((count, s) => {
          if (lavaKind(v.W, v.H, s) === "goal") goals += count;
          else if (lavaKind(v.W, v.H, s) === "hazard") hazards += count;
        });
        const q = res.agent.qValues!();
        let qsum = 0;
        for (let i = 0; i < q.length; i++) qsum += q[i]; // left to right, state-major (section 5)
        // Greedy rollout, lowest-index ties, cap 4(W+H).
        let s = 0;
        let len = 0;
        const cap = 4 * (v.W + v.H);
        while (len < cap) {
          s = model.next[model.saStart[s * 4 + res.agent.greedyAction(s)]];
          len++;
          if (model.terminal[s]) break;
        }
        expect({
          episodes: res.episodes,
          goals,
          hazards,
          timeouts: res.stats.truncated,
          qsum: qsum.toFixed(12),
          qbits: bits(qsum),
          greedyLen: len,
          end: lavaKind(v.W, v.H, s),
        }).toEqual({
          episodes: v.episodes,
          goals: v.goals,
          hazards: v.hazards,
          timeouts: v.timeouts,
          qsum: v.qsum,
          qbits: v.qbits,
          greedyLen: v.greedyLen,
          end: "goal",
        });
        expect(res.stats.steps).toBe(v.steps);
      });
    }
  }

  it("checkpoints in chunks do not change the result (chunked = one pass)", () => {
    const v = VECTORS[2];
    const run = (every?: number) =>
      trainQLearning(envOf(lavaModel(v.W, v.H)), {}, { steps: v.steps, rng: new Xorshift32(v.seed), checkpointEvery: every, onCheckpoint: () => {} });
    const seen: number[] = [];
    const a = run(undefined).agent.qValues!();
    const b = trainQLearning(envOf(lavaModel(v.W, v.H)), {}, {
      steps: v.steps,
      rng: new Xorshift32(v.seed),
      checkpointEvery: 7919,
      onCheckpoint: (step) => {
        seen.push(step);
      },
    }).agent.qValues!();
    expect(bits(b.reduce((x, y) => x + y, 0))).toBe(v.qbits);
    expect(Array.from(a)).toEqual(Array.from(b));
    expect(seen[0]).toBe(7919);
    expect(seen[seen.length - 1]).toBe(v.steps);
    expect(seen.length).toBe(Math.ceil(v.steps / 7919));
  });
});
