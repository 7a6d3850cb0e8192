/**
 * The shared benchmark problem "open field with lava" (shared/bench/PROBLEM.md sections 1-3) as a
 * FiniteModel built with ModelBuilder, so the benchmark measures our generic solvers and learners on
 * the same representation every scenario uses.
 *
 * Cells (x, y), state s = y * W + x. Start (0, 0); goal (W-1, H-1), terminal; lava on row
 * floor(H/2), columns 0 .. W-3, terminal. Actions up, right, down, left (that order); a move off the
 * grid stays. Reward by landing cell: goal +1, lava -1, anything else -0.01. Episode cap 4 (W + H).
 */
import { InputError } from "../errors.js";
import { ModelBuilder } from "../model/builder.js";
import { designerReward } from "../model/reward.js";
import type { FiniteModel, RewardVariant } from "../model/types.js";

export const LAVA_ACTIONS = ["up", "right", "down", "left"] as const;
export const LAVA_FEATURES = ["goal", "lava", "step"] as const;
export const LAVA_GAMMA = 0.99;

/** Designer reward of the benchmark: +1 goal, -1 lava, -0.01 otherwise (each is w * 1, exact). */
export const LAVA_VARIANT: RewardVariant = { name: "default", env: "lava", weights: { goal: 1, lava: -1, step: -0.01 } };

/** Cell kind per state: 0 ordinary, 1 goal, 2 lava. */
export const KIND_ORDINARY = 0;
export const KIND_GOAL = 1;
export const KIND_LAVA = 2;

export interface LavaProblem {
  W: number;
  H: number;
  model: FiniteModel;
  /** Designer reward per outcome (LAVA_VARIANT). */
  reward: Float64Array;
  /** 0 ordinary, 1 goal, 2 lava, per state. */
  kind: Uint8Array;
  start: number;
  goal: number;
  /** Episode cap 4 (W + H), also the model's horizon. */
  cap: number;
}

export function lavaKinds(W: number, H: number): Uint8Array {
  const kind = new Uint8Array(W * H);
  const hy = Math.floor(H / 2);
  for (let x = 0; x <= W - 3; x++) kind[hy * W + x] = KIND_LAVA;
  kind[W * H - 1] = KIND_GOAL;
  return kind;
}

/** Build the W x H lava field (W, H >= 3). */
export function lavaModel(W: number, H: number): LavaProblem {
  if (!Number.isInteger(W) || !Number.isInteger(H) || W < 3 || H < 3) {
    throw new InputError("config.benchSize", `lava field needs integer W, H >= 3, got ${W}x${H}`, "bench");
  }
  const S = W * H;
  const kind = lavaKinds(W, H);
  const cap = 4 * (W + H);
  const b = new ModelBuilder({
    name: `lava-${W}x${H}`,
    nStates: S,
    actions: LAVA_ACTIONS,
    features: LAVA_FEATURES,
    gamma: LAVA_GAMMA,
    horizon: cap,
    stateLabels: Array.from({ length: S }, (_, s) => `(${s % W},${Math.floor(s / W)})`),
    description: "open field with lava (shared benchmark problem)",
    source: "bench",
  });
  const feat = new Float64Array(LAVA_FEATURES.length);
  for (let y = 0; y < H; y++) {
    for (let x = 0; x < W; x++) {
      const s = y * W + x;
      if (kind[s] !== KIND_ORDINARY) {
        b.setTerminal(s);
        continue;
      }
      for (let a = 0; a < 4; a++) {
        let nx = x;
        let ny = y;
        if (a === 0) ny = y > 0 ? y - 1 : y;
        else if (a === 1) nx = x < W - 1 ? x + 1 : x;
        else if (a === 2) ny = y < H - 1 ? y + 1 : y;
        else nx = x > 0 ? x - 1 : x;
        const ns = ny * W + nx;
        const k = kind[ns];
        feat.fill(0);
        feat[k === KIND_GOAL ? 0 : k === KIND_LAVA ? 1 : 2] = 1;
        // Intent (held out): reaching the goal is what we want.
        b.addOutcome(s, a, ns, 1, feat, k === KIND_GOAL ? 1 : 0);
      }
    }
  }
  b.setStart(0, 1);
  const model = b.build();
  return { W, H, model, reward: designerReward(model, LAVA_VARIANT), kind, start: 0, goal: S - 1, cap };
}
