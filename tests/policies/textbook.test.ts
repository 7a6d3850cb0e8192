/**
 * Textbook behaviour of the tabular learners (Sutton & Barto 2018, chapter 6; REFERENCE_VALUES.md 1.2, 1.3).
 * Every claim is asserted for all seeds of a fixed set.
 */
import { describe, expect, it } from "vitest";
import { createRng } from "../../src/rng/rng.js";
import { train, type LearnerName } from "../../policies/index.js";
import type { Agent } from "../../policies/driver.js";
import { cliffModel, envOf, greedyRollout, windyModel } from "./textbook-models.js";

const SEEDS = [1, 2, 3, 4, 5];
const cliff = cliffModel();
const windy = windyModel();
const book = { alpha: 0.5, gamma: 1, epsilon: 0.1 }; // Examples 6.5 / 6.6

/** Greedy path of the agent on the cliff: length if it reaches the goal, and whether it touched row 3 in between. */
function cliffPath(agent: Agent) {
  const r = greedyRollout(cliff, agent, 200);
  const inner = r.states.slice(1, -1);
  return { reached: r.reachedTerminal, len: r.states.length - 1, touchesRow3: inner.some((s) => Math.floor(s / 12) === 3) };
}

/** Train for `episodes` episodes and collect the greedy path every 200 steps during the second half. */
function cliffRun(learner: LearnerName, seed: number, episodes = 500) {
  const paths: ReturnType<typeof cliffPath>[] = [];
  const res = train(envOf(cliff), { learner, ...book }, {
    steps: 10_000_000,
    maxEpisodes: episodes,
    rng: createRng(seed),
    checkpointEvery: 200,
    onCheckpoint: (_step, agent, stats) => {
      if (stats.episodes >= episodes / 2) paths.push(cliffPath(agent));
    },
  });
  return { final: cliffPath(res.agent), paths };
}

/** First step at which the greedy episode on the windy grid has the optimal length 15 (or -1). */
function windyFirstOptimal(learner: LearnerName, seed: number, steps: number): number {
  let first = -1;
  train(envOf(windy), { learner, ...book }, {
    steps,
    rng: createRng(seed),
    checkpointEvery: 250,
    onCheckpoint: (step, agent) => {
      const r = greedyRollout(windy, agent, 100);
      if (first < 0 && r.reachedTerminal && r.states.length - 1 === 15) {
        first = step;
        return "stop";
      }
    },
  });
  return first;
}

describe("cliff walking (Sutton & Barto 2018, Example 6.6)", () => {
  it("Q-learning's greedy path is the optimal 13-step cliff-edge path (off-policy: it learns q*)", () => {
    for (const seed of SEEDS) {
      const { final, paths } = cliffRun("q-learning", seed);
      expect(final).toEqual({ reached: true, len: 13, touchesRow3: false });
      // and it stays there through the second half of training
      expect(paths.every((p) => p.reached && p.len === 13)).toBe(true);
    }
  });

  // SARSA's constant α = 0.5 keeps its values moving, so its greedy policy at one instant may contain a
  // loop; the book's claim is about the path it settles on. Asserted: every greedy path that reaches
  // the goal in the second half of training is a safe one (never on row 3 between start and goal,
  // longer than 13), and at least a quarter of the checkpoints reach the goal (measured: 38% for the
  // worst seed of this set for SARSA, so this bound is set from observation, not from the book).
  for (const learner of ["sarsa", "expected-sarsa"] as const) {
    it(`${learner} learns a longer, safe path away from the cliff (on-policy for ε-greedy)`, () => {
      for (const seed of SEEDS) {
        const { paths } = cliffRun(learner, seed);
        const reached = paths.filter((p) => p.reached);
        expect(reached.length / paths.length).toBeGreaterThanOrEqual(0.25);
        for (const p of reached) {
          expect(p.touchesRow3).toBe(false);
          expect(p.len).toBeGreaterThan(13);
        }
      }
    });
  }

  // Double Q-learning is off-policy too, but with α = 0.5 it underestimates the rarely visited edge
  // states (one table picks, the other values; van Hasselt 2010 notes the underestimation), so within
  // 500 episodes it does not reliably find the 13-step path. Asserted: it reaches the goal without
  // ever falling off the cliff on its greedy path.
  it("double-q's greedy path reaches the goal and never enters the cliff", () => {
    for (const seed of SEEDS) {
      const { final } = cliffRun("double-q", seed);
      expect(final.reached).toBe(true);
      expect(final.touchesRow3).toBe(false);
      expect(final.len).toBeGreaterThanOrEqual(13); // never shorter than the optimum (a sanity bound)
    }
  });
});

describe("windy gridworld (Sutton & Barto 2018, Example 6.5)", () => {
  // Book: after about 8000 steps the greedy policy is optimal (15 steps). We allow 30000.
  for (const learner of ["sarsa", "expected-sarsa", "q-learning", "linear-sarsa"] as const) {
    it(`${learner}: the greedy episode reaches the optimal length 15`, () => {
      for (const seed of SEEDS) {
        const cfgLearner = learner;
        const first =
          cfgLearner === "linear-sarsa"
            ? (() => {
                let f = -1;
                train(envOf(windy), { learner: "linear-sarsa", features: "one-hot", ...book }, {
                  steps: 30000,
                  rng: createRng(seed),
                  checkpointEvery: 250,
                  onCheckpoint: (step, agent) => {
                    const r = greedyRollout(windy, agent, 100);
                    if (r.reachedTerminal && r.states.length - 1 === 15) {
                      f = step;
                      return "stop";
                    }
                  },
                });
                return f;
              })()
            : windyFirstOptimal(cfgLearner, seed, 30000);
        expect(first).toBeGreaterThan(0);
      }
    });
  }

  it("no greedy episode is ever shorter than the minimum 15 (REFERENCE_VALUES 1.2)", () => {
    const res = train(envOf(windy), { learner: "q-learning", ...book }, { steps: 20000, rng: createRng(9) });
    const r = greedyRollout(windy, res.agent, 100);
    expect(r.reachedTerminal).toBe(true);
    expect(r.states.length - 1).toBe(15);
  });
});
