/**
 * The one representation everything reads: a finite model compiled to typed arrays.
 *
 * Layout (CSR-like). For state `s` and action `a`, let `k = s * nActions + a`; the outcomes of
 * (s, a) are the indices `o` in `saStart[k] .. saStart[k + 1] - 1`. Outcome `o` leads to `next[o]`
 * with probability `prob[o]`, carries designer-reward feature values
 * `featureValues[o * features.length + f]` and the held-out intent increment `intent[o]`.
 *
 * Terminal states are absorbing: every action has exactly one outcome, a self-loop with probability 1,
 * zero features and zero intent. Solvers fix V = 0 there; samplers end the episode on entering one.
 *
 * Only `src/monitor`, `src/audit`, `src/pressure` and `src/solve` may read `intent`. Learners get a
 * `LearnerView` (see learner-view.ts), which has no intent in it.
 */

/** How to draw a model's states for people. Optional; exact solvers never read it. */
export type Layout =
  | {
      kind: "grid";
      rows: number;
      cols: number;
      /** The map as text, one string per row (legend characters). */
      map: string[];
      /** For each state, the cell index `row * cols + col`. */
      cellOf: Int32Array;
    }
  | {
      kind: "track";
      /** Number of positions around the loop. */
      length: number;
      /** Gate positions: a gate at `g` sits on the boundary between positions g-1 and g. */
      gates: number[];
      posOf: Int32Array;
      velOf: Int32Array;
    };

/** A reward variant is data: weights over the model's features, plus optional potential-based shaping. */
export interface RewardVariant {
  name: string;
  /** Scenario (or model) this variant was written for. */
  env?: string;
  /** The reward file it was read from (named in error messages). */
  source?: string;
  /** Weight per feature name; a missing feature has weight 0. */
  weights: Record<string, number>;
  /**
   * Shaping term `scale * (gamma * Phi(s') - Phi(s))`, with Phi(terminal) = 0. `potential` names one
   * of the model's `potentials`, or gives Phi per state.
   */
  shaping?: { potential: string | number[]; scale: number };
}

export interface FiniteModel {
  readonly name: string;
  /** Default discount used by solvers, monitors and audits unless a command overrides it. */
  readonly gamma: number;
  readonly nStates: number;
  readonly nActions: number;
  readonly actions: readonly string[];
  readonly stateLabels: readonly string[];
  /** Designer-reward feature names (what a reward variant may weight). */
  readonly features: readonly string[];
  /** 1 where the state is terminal (absorbing). */
  readonly terminal: Uint8Array;
  /** Start distribution over states; sums to 1. */
  readonly start: Float64Array;
  readonly saStart: Int32Array;
  readonly next: Int32Array;
  readonly prob: Float64Array;
  /**
   * Feature value per (outcome, feature), row-major. Float32 when every value is exactly a float32
   * (the builder's choice, e.g. 0/1 indicator features): half the bytes, the same numbers when read.
   */
  readonly featureValues: Float64Array | Float32Array;
  /** Held-out intended-outcome increment per outcome. Never shown to a learner. */
  readonly intent: Float64Array;
  /** Episode step limit used when sampling: a truncation, not a termination. */
  readonly horizon: number;
  /** Group label per state (meaningful on start states), or null. */
  readonly groups?: readonly (string | null)[];
  /** Named potentials Phi(s), per state, usable for shaping. */
  readonly potentials?: Readonly<Record<string, Float64Array>>;
  /** Numeric observation per state for function-approximation learners (row-major, `dim` per state). */
  readonly observations?: { readonly dim: number; readonly names: readonly string[]; readonly values: Float64Array };
  /** Reward variants that travel with the model (built-in scenarios, model files). */
  readonly variants?: Readonly<Record<string, RewardVariant>>;
  readonly layout?: Layout;
  readonly description?: string;
  /** Where the model came from, for messages: a scenario name or a file path. */
  readonly source?: string;
}

/** Number of outcomes of the model. */
export function outcomeCount(m: FiniteModel): number {
  return m.saStart[m.nStates * m.nActions];
}
