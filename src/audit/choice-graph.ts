/**
 * The "deterministic-choice graph" of a finite model (the loops an optimizer can ride forever on
 * purpose), and the walk along one of its cycles that names the states, actions and outcomes of the
 * loop. The reward-loop and shaping-term checks and the gamma = 1 shaping witness all build their loops
 * here. Pure; no I/O.
 */
import { InputError } from "../errors.js";
import type { FiniteModel } from "../model/types.js";
import type { MeanCycle } from "./cycles.js";
import { edgeSource, type CsrDigraph } from "./mean-cycle/graph.js";

/** Label of a choice-graph edge: the (state, action) pair and which of its outcomes the edge is. */
export interface ChoiceLabel {
  state: number;
  action: number;
  /** Outcome index into the model's per-outcome arrays. */
  outcome: number;
}

export interface ChoiceGraph extends CsrDigraph<ChoiceLabel> {
  /** Action index per edge. */
  action: Int32Array;
  /** Outcome index per edge. */
  outcome: Int32Array;
  label: (edge: number) => ChoiceLabel;
}

export interface ChoiceGraphOptions {
  /**
   * Keep an outcome as an edge when its probability is at least this. Default 1: only certain
   * outcomes, so every cycle of the graph can be ridden forever by choice. A value below 1 adds
   * "optimistic" edges: a cycle that uses one is reachable with positive probability per lap but not
   * guaranteed (the optimizer would need luck on that edge every lap). Compared with a 1e-12 slack.
   */
  minProb?: number;
  /** Keep every outcome with positive probability instead (`minProb` is then not used). */
  positive?: boolean;
  /** Keep only the edges out of states s with `from[s]` non-zero (e.g. the reachable states). */
  from?: ArrayLike<number>;
}

/**
 * The deterministic-choice graph of a model: an edge s -> s' for every outcome of every (s, a) of a
 * non-terminal s whose probability passes `minProb`, weighted with `rewardPerOutcome[o]` (normally the
 * designer reward of a variant), labelled with the action and outcome. Terminal states have no edges.
 * Edges are numbered in (state, action, outcome) order.
 */
export function modelChoiceGraph(model: FiniteModel, rewardPerOutcome: Float64Array, opts: ChoiceGraphOptions = {}): ChoiceGraph {
  const minProb = opts.minProb ?? 1;
  if (!(minProb > 0 && minProb <= 1)) throw new InputError("input.minProb", `minProb must be in (0, 1], got ${minProb}`, "choice graph options");
  const nO = model.next.length;
  if (rewardPerOutcome.length !== nO) {
    throw new InputError("input.reward", `reward has ${rewardPerOutcome.length} entries, expected one per outcome (${nO})`, "choice graph reward");
  }
  // Kept: probability >= minProb (with a 1e-12 slack), or > 0 with `positive`.
  const thr = opts.positive === true ? Number.MIN_VALUE : minProb - 1e-12;
  const from = opts.from;
  const { nStates: nS, nActions: nA, saStart, prob, next, terminal } = model;
  const start = new Int32Array(nS + 1);
  for (let s = 0; s < nS; s++) {
    let cnt = 0;
    if (!terminal[s] && (!from || from[s])) for (let o = saStart[s * nA]; o < saStart[(s + 1) * nA]; o++) if (prob[o] >= thr) cnt++;
    start[s + 1] = start[s] + cnt;
  }
  const m = start[nS];
  const to = new Int32Array(m);
  const weight = new Float64Array(m);
  const action = new Int32Array(m);
  const outcome = new Int32Array(m);
  let j = 0;
  for (let s = 0; s < nS; s++) {
    if (start[s + 1] === start[s]) continue;
    for (let a = 0; a < nA; a++) {
      const k = s * nA + a;
      for (let o = saStart[k]; o < saStart[k + 1]; o++) {
        if (!(prob[o] >= thr)) continue;
        to[j] = next[o];
        weight[j] = rewardPerOutcome[o];
        action[j] = a;
        outcome[j] = o;
        j++;
      }
    }
  }
  return {
    n: nS,
    start,
    to,
    weight,
    action,
    outcome,
    label: (e: number) => ({ state: edgeSource(start, e), action: action[e], outcome: outcome[e] }),
  };
}

/**
 * A cycle of a choice graph followed edge by edge: from `states[i]` the loop takes action `actions[i]`
 * and outcome `outcomes[i]` to `states[(i + 1) % length]`.
 */
export interface ChoiceLoop {
  states: number[];
  actions: number[];
  outcomes: number[];
}

export function choiceLoop(g: ChoiceGraph, c: MeanCycle): ChoiceLoop {
  return { states: c.vertices, actions: c.edges.map((e) => g.action[e]), outcomes: c.edges.map((e) => g.outcome[e]) };
}

/** The same graph with the weights of another reward per outcome (edges, labels and order unchanged). */
export function reweighted(g: ChoiceGraph, rewardPerOutcome: Float64Array): ChoiceGraph {
  const weight = new Float64Array(g.to.length);
  for (let e = 0; e < weight.length; e++) weight[e] = rewardPerOutcome[g.outcome[e]];
  return { ...g, weight };
}

/**
 * 1 for each edge that lies on some cycle of the graph (both ends in one strongly connected
 * component; a self-loop counts): every cycle, and so every cycle mean, uses only these edges.
 * `comp`: component per vertex (`stronglyConnectedComponents`).
 */
export function cyclicEdges(g: CsrDigraph, comp: Int32Array): Uint8Array {
  const on = new Uint8Array(g.to.length);
  for (let v = 0; v < g.n; v++) for (let e = g.start[v]; e < g.start[v + 1]; e++) if (comp[g.to[e]] === comp[v]) on[e] = 1;
  return on;
}
