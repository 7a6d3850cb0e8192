/**
 * The benchmark problem built as a FiniteModel (src/bench/lava.ts) and run through our generic
 * value iteration and our Q-learner reproduces the shared conformance vectors
 * (shared/bench/PROBLEM.md sections 4, 6 and 8; peers/testvectors.txt).
 */
import { describe, expect, it } from "vitest";
import { hexBits, leftSum } from "../../src/bench/check.js";
import { KIND_GOAL, KIND_LAVA, lavaModel } from "../../src/bench/lava.js";
import { runLavaQl, runLavaVi } from "../../src/bench/lava-run.js";
import { checkKey, parseOutput } from "../../src/bench/peers.js";
import { Xorshift32 } from "../../src/rng/rng.js";
import { valueIteration } from "../../src/solve/value-iteration.js";

// PROBLEM.md section 8 / peers/testvectors.txt, copied verbatim.
const VECTORS: [string, string][] = [
  ["ql 3 3 1000 12345", "CHECK ql W=3 H=3 steps=1000 seed=12345 episodes=227 goals=214 hazards=13 timeouts=0 qsum=8.047106606565 qbits=4020181e5b6d3f83 greedy_len=4 greedy_end=goal"],
  ["ql 7 5 200000 2654435769", "CHECK ql W=7 H=5 steps=200000 seed=2654435769 episodes=18636 goals=17290 hazards=1341 timeouts=5 qsum=54.288233609573 qbits=404b24e4d6c35c7f greedy_len=10 greedy_end=goal"],
  ["ql 8 8 100000 1", "CHECK ql W=8 H=8 steps=100000 seed=1 episodes=6482 goals=5909 hazards=548 timeouts=25 qsum=70.765075249870 qbits=4051b0f6fe2e4b0e greedy_len=14 greedy_end=goal"],
  ["vi 3 3", "CHECK vi W=3 H=3 iters=5 vsum=6.840798000000 vbits=401b5cfa26a22b38 vstart=0.940598000000 greedy_len=4 greedy_end=goal"],
  ["vi 7 5", "CHECK vi W=7 H=5 iters=11 vsum=26.731036039913 vbits=403abb252d8b9f94 vstart=0.827034494967 greedy_len=10 greedy_end=goal"],
  ["vi 31 47", "CHECK vi W=31 H=47 iters=77 vsum=567.230984757711 vbits=4081b9d90e8961f3 vstart=-0.058826716829 greedy_len=76 greedy_end=goal"],
];

describe("lava benchmark conformance vectors (PROBLEM.md section 8)", () => {
  for (const [args, want] of VECTORS) {
    it(`${args} reproduces the CHECK line byte for byte`, () => {
      // shared/bench/PROBLEM.md section 8 (peers/testvectors.txt)
      const [mode, ...nums] = args.split(" ");
      const [W, H, steps, seed] = nums.map(Number);
      const got = mode === "vi" ? runLavaVi(W, H).check : runLavaQl(W, H, steps, seed).check;
      expect(got).toBe(want);
    });
  }
});

describe("xorshift32 (PROBLEM.md section 4)", () => {
  it("first six draws from seed 2654435769", () => {
    // shared/bench/PROBLEM.md section 4
    const rng = new Xorshift32(2654435769);
    expect(Array.from({ length: 6 }, () => rng.uint32())).toEqual([1359758873, 3761132862, 2075758394, 25405621, 3862129951, 4186559031]);
  });
});

describe("lava field model (PROBLEM.md sections 1-3)", () => {
  it("8 x 6 layout: lava on row 3, columns 0..5; goal bottom-right; rewards by landing cell", () => {
    // shared/bench/PROBLEM.md section 1 example map
    const p = lavaModel(8, 6);
    const lava = [...p.kind.keys()].filter((s) => p.kind[s] === KIND_LAVA);
    expect(lava).toEqual([24, 25, 26, 27, 28, 29]);
    expect(p.kind[47]).toBe(KIND_GOAL);
    expect(p.cap).toBe(56);
    const out = (s: number, a: number) => p.model.saStart[s * 4 + a];
    // (0,0) up bumps and stays: -0.01; (0,2) down into lava: -1; (6,5) right into the goal: +1
    expect(p.model.next[out(0, 0)]).toBe(0);
    expect(p.reward[out(0, 0)]).toBe(-0.01);
    expect(p.model.next[out(16, 2)]).toBe(24);
    expect(p.reward[out(16, 2)]).toBe(-1);
    expect(p.model.next[out(46, 1)]).toBe(47);
    expect(p.reward[out(46, 1)]).toBe(1);
  });
});

describe("analytic cross-check (PROBLEM.md section 6)", () => {
  it.each([
    [9, 9],
    [16, 16],
    [32, 32],
  ])("%ix%i: V = 2 gamma^(d-1) - 1 at distance d, iters = W + H - 1, vstart = 2 * 0.99^(W+H-3) - 1", (W, H) => {
    // shared/bench/PROBLEM.md section 6, "Analytic cross-check"
    const p = lavaModel(W, H);
    const vi = valueIteration(p.model, p.reward, { tol: 1e-10 });
    expect(vi.iters).toBe(W + H - 1);
    expect(vi.values[0]).toBeCloseTo(2 * 0.99 ** (W + H - 3) - 1, 12);
    // Shortest-path distance to the goal avoiding lava (BFS over the model's own transitions).
    const S = W * H;
    const dist = new Int32Array(S).fill(-1);
    dist[p.goal] = 0;
    let frontier = [p.goal];
    while (frontier.length) {
      const nextFrontier: number[] = [];
      for (let s = 0; s < S; s++) {
        if (p.kind[s] !== 0 || dist[s] >= 0) continue;
        for (let a = 0; a < 4; a++) {
          const sp = p.model.next[p.model.saStart[s * 4 + a]];
          if (frontier.includes(sp)) {
            dist[s] = dist[sp] + 1;
            nextFrontier.push(s);
            break;
          }
        }
      }
      frontier = nextFrontier;
    }
    for (let s = 0; s < S; s++) if (p.kind[s] === 0) expect(vi.values[s]).toBeCloseTo(2 * 0.99 ** (dist[s] - 1) - 1, 12);
  });
});

describe("CHECK-line plumbing", () => {
  it("hexBits is the IEEE-754 pattern (1.0 = 3ff0000000000000; -2 = c000000000000000)", () => {
    // IEEE 754-2008 binary64 encoding
    expect(hexBits(1)).toBe("3ff0000000000000");
    expect(hexBits(-2)).toBe("c000000000000000");
  });
  it("leftSum adds left to right (differs from exact-sum order on a cancelling sequence)", () => {
    // (1e16 + 1) + (-1e16) = 0 in binary64 left to right; the exact sum is 1
    expect(leftSum(Float64Array.from([1e16, 1, -1e16]))).toBe(0);
  });
  it("parses a peer's output and keys CHECK lines by their inputs", () => {
    // shared/bench/PROBLEM.md section 7 (output format); peers/bench.py keys CHECK lines the same way
    const txt = `${VECTORS[0][1]}\nTIME ql impl=c train_s=0.000010 steps_per_s=1\n`;
    expect(parseOutput(txt, "t").seconds).toBe(0.00001);
    expect(checkKey(VECTORS[0][1])).toBe("CHECK ql W=3 H=3 steps=1000 seed=12345");
    expect(checkKey(VECTORS[3][1])).toBe("CHECK vi W=3 H=3");
  });
});

describe("bench options", () => {
  it("--quick means one run and no warm-up unless given; unknown entries and options are input errors", async () => {
    // gapwatch convention (DEVELOPERS.md): bad input is an InputError with a cli.* code
    const { parseBenchArgs, ENTRIES } = await import("../../src/bench/main.js");
    expect(ENTRIES.map((e) => e.name).slice(0, 2)).toEqual(["vi", "ql"]);
    expect(new Set(ENTRIES.map((e) => e.name)).size).toBe(ENTRIES.length);
    expect(parseBenchArgs(["--quick"])).toMatchObject({ quick: true, runs: 1, warmup: 0 });
    expect(parseBenchArgs(["--quick", "--runs", "4"])).toMatchObject({ runs: 4 });
    expect(parseBenchArgs(["--only", "ql"]).only).toEqual(["ql"]);
    expect(() => parseBenchArgs(["--only", "nope"])).toThrow(expect.objectContaining({ code: "cli.benchOption" }));
    expect(() => parseBenchArgs(["--runs", "x"])).toThrow(expect.objectContaining({ code: "cli.benchOption" }));
    expect(() => parseBenchArgs(["--fast"])).toThrow(expect.objectContaining({ code: "cli.benchOption" }));
  });
});
