/**
 * Is a shaping term potential-based? Given F per outcome (F(s, a, s') on every outcome of the model),
 * decide whether some Phi : S -> R gives F(s, a, s') = gamma * Phi(s') - Phi(s) on every outcome of
 * every non-terminal state (Ng, Harada & Russell 1999, Theorem 1: exactly the shaping terms that
 * cannot change which policies are optimal).
 *
 * Conventions.
 *  - Terminal states play the paper's absorbing state s0: Phi(terminal) = 0 for every gamma. Solvers
 *    fix V = 0 on terminals, so a non-zero Phi there would add gamma^T * Phi(s_T) to a return and depend
 *    on the episode length T; `designerReward` uses the same convention.
 *  - Only outcomes with probability > 0 are constraints (an outcome that never happens cannot matter).
 *    Terminal self-loops are not constraints.
 *  - Tolerance: |F - (gamma Phi(s') - Phi(s))| <= tol on every constraint, with
 *    tol = 1e-9 * (1 + max|F| + max|Phi|) unless given.
 *
 * gamma < 1: Phi is unique. Every non-terminal state has at least one constraint; following the first
 * one listed (its "determining constraint") from any state reaches either a terminal (Phi = 0) or a
 * closed loop c_0 -> ... -> c_{L-1} -> c_0, on which Phi(c_0) = -sum_i gamma^i F_i / (1 - gamma^L).
 * Back-substitution Phi(s) = gamma Phi(s') - F then fixes every state (errors shrink by gamma per
 * step). A failed check names one violated constraint and the two determining chains that disagree:
 * the chain from s gives `phiFromChain` = Phi(s); the violated outcome followed by the chain from s'
 * gives `phiFromEdge` = gamma Phi(s') - F(o). Both are sets of constraints F must satisfy, and they
 * force different values of Phi(s).
 *
 * gamma = 1: Phi is determined by differences on the undirected constraint graph (all terminals merged
 * into s0, Phi(s0) = 0); components that do not touch a terminal get a free constant (set so that
 * their BFS root has Phi = 0; counted in `freeComponents`). A failed check names a violated constraint
 * and a cycle of the constraint graph through it whose signed F sum is non-zero (edges walked forward
 * count +F, walked backward -F; a step between two terminal states is the merged s0 and counts 0).
 * When every step is forward the witness is a directed loop the agent can ride for net bonus.
 *
 * Pure; no I/O.
 */
import { InputError } from "../errors.js";
import type { FiniteModel } from "../model/types.js";
import { choiceLoop, modelChoiceGraph } from "./choice-graph.js";
import { maxMeanCycle, minMeanCycle } from "./cycles.js";
import { walkBuffers, walkFunctionalGraph } from "./mean-cycle/functional-walk.js";

/** One constraint F(s, a, s') = gamma Phi(s') - Phi(s), i.e. one outcome of a non-terminal state. */
export interface ShapingConstraint {
  state: number;
  action: number;
  outcome: number;
  next: number;
  f: number;
}

/** One step of a gamma = 1 witness cycle, in walking order. */
export interface CycleStep {
  /** Vertex walked from and to (state indices). */
  from: number;
  to: number;
  /** The outcome walked (-1 for a step between two terminal states, which share Phi = 0). */
  outcome: number;
  /** True when walked in the outcome's direction (counts +F), false when walked backwards (counts -F). */
  forward: boolean;
  /** Signed contribution to the cycle sum. */
  contribution: number;
}

export type ShapingWitness =
  | {
      kind: "cycle";
      /** gamma = 1: a cycle of the constraint graph through the violated constraint. */
      steps: CycleStep[];
      /** Signed F sum around the cycle (equals the violated constraint's residual). */
      sum: number;
      /** True when every step follows an outcome forward: a loop the agent can actually take. */
      directed: boolean;
    }
  | {
      kind: "conflict";
      /** gamma < 1: determining constraints from `edge.state` (to a terminal or around a loop). */
      chainFromState: ShapingConstraint[];
      /** The determining chain from `edge.next` (empty when it is terminal). */
      chainFromNext: ShapingConstraint[];
      /** Phi(state) forced by `chainFromState`. */
      phiFromChain: number;
      /** Phi(state) forced by `edge` plus `chainFromNext`: gamma * Phi(next) - F(edge). */
      phiFromEdge: number;
    };

export type ShapingCheck =
  | {
      potentialBased: true;
      /** A potential with F = gamma Phi(s') - Phi(s) on every constraint; 0 on terminals. */
      phi: Float64Array;
      maxResidual: number;
      /** gamma = 1 only: constraint-graph components without a terminal (Phi there is up to a constant). */
      freeComponents: number;
      tol: number;
    }
  | {
      potentialBased: false;
      /** The potential fitted by the determining constraints (gamma < 1) or a spanning forest (gamma = 1). */
      phi: Float64Array;
      /** The constraint with the largest residual. */
      edge: ShapingConstraint;
      /** F - (gamma Phi(s') - Phi(s)) on `edge`. */
      residual: number;
      witness: ShapingWitness;
      /**
       * gamma = 1 only: a directed loop of positive-probability outcomes whose F sum is non-zero (the
       * maximum-mean loop if its mean is > tol, else the minimum-mean loop if < -tol), i.e. a loop an
       * agent can ride for a net bonus (or penalty) per lap. Absent when no directed loop has one.
       */
      loop?: ShapingLoop;
      tol: number;
    };

export interface ShapingLoop {
  /** States in order; `outcomes[i]` leads from `states[i]` to `states[(i + 1) % length]`. */
  states: number[];
  outcomes: number[];
  /** Undiscounted F sum per lap, and per step. */
  sum: number;
  mean: number;
}

export interface ShapingCheckOptions {
  /** Discount of the shaping identity. Default: the model's gamma. */
  gamma?: number;
  /** Absolute tolerance on residuals. Default 1e-9 * (1 + max|F| + max|Phi|). */
  tol?: number;
}

function constraintOf(model: FiniteModel, s: number, o: number, F: Float64Array): ShapingConstraint {
  const nA = model.nActions;
  let a = 0;
  while (model.saStart[s * nA + a + 1] <= o) a++;
  return { state: s, action: a, outcome: o, next: model.next[o], f: F[o] };
}

/** Decide whether `F` (one value per outcome) is potential-based shaping on `model`. */
export function checkPotentialShaping(model: FiniteModel, F: Float64Array, opts: ShapingCheckOptions = {}): ShapingCheck {
  const gamma = opts.gamma ?? model.gamma;
  if (!(gamma > 0 && gamma <= 1)) throw new InputError("input.gamma", `gamma must be in (0, 1], got ${gamma}`, "shaping check");
  const nO = model.next.length;
  if (F.length !== nO) throw new InputError("input.shaping", `shaping term has ${F.length} entries, expected one per outcome (${nO})`, "shaping check");
  for (let o = 0; o < nO; o++) {
    if (!Number.isFinite(F[o])) throw new InputError("input.shaping", `shaping term of outcome ${o} is not finite (${F[o]})`, "shaping check");
  }
  const fit = gamma < 1 ? fitDiscounted(model, F, gamma) : fitUndiscounted(model, F);
  const { phi } = fit;
  // Residuals on every constraint.
  const { nStates: nS, nActions: nA, saStart, next, prob, terminal } = model;
  let maxF = 0;
  for (let o = 0; o < nO; o++) maxF = Math.max(maxF, Math.abs(F[o]));
  let maxPhi = 0;
  for (let s = 0; s < nS; s++) maxPhi = Math.max(maxPhi, Math.abs(phi[s]));
  const tol = opts.tol ?? 1e-9 * (1 + maxF + maxPhi);
  let worst = 0;
  let worstO = -1;
  let worstS = -1;
  for (let s = 0; s < nS; s++) {
    if (terminal[s]) continue;
    for (let o = saStart[s * nA]; o < saStart[(s + 1) * nA]; o++) {
      if (!(prob[o] > 0)) continue;
      const r = F[o] - (gamma * phi[next[o]] - phi[s]);
      if (Math.abs(r) > Math.abs(worst)) {
        worst = r;
        worstO = o;
        worstS = s;
      }
    }
  }
  if (worstO < 0 || Math.abs(worst) <= tol) {
    return { potentialBased: true, phi, maxResidual: Math.abs(worst), freeComponents: fit.freeComponents, tol };
  }
  const edge = constraintOf(model, worstS, worstO, F);
  if (gamma < 1) return { potentialBased: false, phi, edge, residual: worst, witness: conflictWitness(model, F, gamma, phi, fit.det!, edge), tol };
  const loop = directedLoop(model, F, tol);
  return { potentialBased: false, phi, edge, residual: worst, witness: cycleWitness(model, F, fit, edge), ...(loop ? { loop } : {}), tol };
}

/** The directed loop with the largest |mean F| beyond tol, preferring a positive one (gamma = 1). */
function directedLoop(model: FiniteModel, F: Float64Array, tol: number): ShapingLoop | undefined {
  const graph = modelChoiceGraph(model, F, { positive: true });
  const hi = maxMeanCycle(graph);
  const lo = hi && hi.mean > tol ? hi : minMeanCycle(graph);
  const pick = hi && hi.mean > tol ? hi : lo && lo.mean < -tol ? lo : null;
  if (!pick) return undefined;
  const sum = pick.weights.reduce((x, y) => x + y, 0);
  const { states, outcomes } = choiceLoop(graph, pick);
  return { states, outcomes, sum, mean: pick.mean };
}

/** Does reward `a` equal reward `b` plus potential-based shaping? Checks F = a - b. */
export function checkRewardDifference(model: FiniteModel, a: Float64Array, b: Float64Array, opts: ShapingCheckOptions = {}): ShapingCheck {
  if (a.length !== b.length) throw new InputError("input.reward", `rewards have ${a.length} and ${b.length} entries`, "shaping check");
  const F = new Float64Array(a.length);
  for (let o = 0; o < a.length; o++) F[o] = a[o] - b[o];
  return checkPotentialShaping(model, F, opts);
}

interface Fit {
  phi: Float64Array;
  freeComponents: number;
  /** gamma < 1: determining outcome per non-terminal state. */
  det?: Int32Array;
  /** gamma = 1: BFS forest (parent state, outcome to parent, direction, depth, root). */
  parent?: Int32Array;
  parentOutcome?: Int32Array;
  depth?: Int32Array;
  root?: Int32Array;
}

/** First outcome with positive probability of each non-terminal state (its determining constraint). */
function determining(model: FiniteModel): Int32Array {
  const { nStates: nS, nActions: nA, saStart, prob, terminal } = model;
  const det = new Int32Array(nS).fill(-1);
  for (let s = 0; s < nS; s++) {
    if (terminal[s]) continue;
    for (let o = saStart[s * nA]; o < saStart[(s + 1) * nA]; o++) {
      if (prob[o] > 0) {
        det[s] = o;
        break;
      }
    }
  }
  return det;
}

function fitDiscounted(model: FiniteModel, F: Float64Array, gamma: number): Fit {
  const nS = model.nStates;
  const { next, terminal } = model;
  const det = determining(model);
  const phi = new Float64Array(nS);
  const done = new Uint8Array(nS);
  for (let s = 0; s < nS; s++) if (terminal[s] || det[s] < 0) done[s] = 1;
  walkFunctionalGraph(
    nS,
    (u) => next[det[u]],
    done,
    walkBuffers(nS),
    (stack, c0, sp) => {
      // Phi(c0) = -sum_i gamma^i F_i / (1 - gamma^L), L = sp - c0 the cycle's length.
      const u = stack[c0];
      let acc = 0;
      let g = 1;
      for (let i = c0; i < sp; i++) {
        acc += g * F[det[stack[i]]];
        g *= gamma;
      }
      phi[u] = -acc / (1 - g);
      done[u] = 1;
      for (let i = sp - 1; i > c0; i--) {
        const w = stack[i];
        phi[w] = gamma * phi[next[det[w]]] - F[det[w]];
        done[w] = 1;
      }
    },
    (w) => {
      phi[w] = gamma * phi[next[det[w]]] - F[det[w]];
    },
  );
  return { phi, freeComponents: 0, det };
}

function fitUndiscounted(model: FiniteModel, F: Float64Array): Fit {
  const { nStates: nS, nActions: nA, saStart, next, prob, terminal } = model;
  // Incoming constraints per state (CSR of outcome ids).
  const inStart = new Int32Array(nS + 1);
  for (let s = 0; s < nS; s++) {
    if (terminal[s]) continue;
    for (let o = saStart[s * nA]; o < saStart[(s + 1) * nA]; o++) if (prob[o] > 0) inStart[next[o] + 1]++;
  }
  for (let s = 0; s < nS; s++) inStart[s + 1] += inStart[s];
  const inO = new Int32Array(inStart[nS]);
  const inFrom = new Int32Array(inStart[nS]);
  const fill = inStart.slice(0, nS);
  for (let s = 0; s < nS; s++) {
    if (terminal[s]) continue;
    for (let o = saStart[s * nA]; o < saStart[(s + 1) * nA]; o++) {
      if (!(prob[o] > 0)) continue;
      const i = fill[next[o]]++;
      inO[i] = o;
      inFrom[i] = s;
    }
  }
  const phi = new Float64Array(nS);
  const visited = new Uint8Array(nS);
  const parent = new Int32Array(nS).fill(-1);
  const parentOutcome = new Int32Array(nS).fill(-1);
  const depth = new Int32Array(nS);
  const root = new Int32Array(nS).fill(-1);
  const queue = new Int32Array(nS);
  let qh = 0;
  let qt = 0;
  // Multi-source BFS from the merged terminal s0.
  for (let s = 0; s < nS; s++) {
    if (!terminal[s]) continue;
    visited[s] = 1;
    root[s] = s;
    queue[qt++] = s;
  }
  let freeComponents = 0;
  let seed = 0;
  for (;;) {
    while (qh < qt) {
      const u = queue[qh++];
      if (!terminal[u]) {
        for (let o = saStart[u * nA]; o < saStart[(u + 1) * nA]; o++) {
          if (!(prob[o] > 0)) continue;
          const v = next[o];
          if (visited[v]) continue;
          visited[v] = 1;
          phi[v] = phi[u] + F[o];
          parent[v] = u;
          parentOutcome[v] = o;
          depth[v] = depth[u] + 1;
          root[v] = root[u];
          queue[qt++] = v;
        }
      }
      for (let i = inStart[u]; i < inStart[u + 1]; i++) {
        const w = inFrom[i];
        if (visited[w]) continue;
        visited[w] = 1;
        phi[w] = phi[u] - F[inO[i]];
        parent[w] = u;
        parentOutcome[w] = inO[i];
        depth[w] = depth[u] + 1;
        root[w] = root[u];
        queue[qt++] = w;
      }
    }
    while (seed < nS && visited[seed]) seed++;
    if (seed >= nS) break;
    visited[seed] = 1;
    root[seed] = seed;
    phi[seed] = 0;
    queue[qt++] = seed;
    freeComponents++;
  }
  return { phi, freeComponents, parent, parentOutcome, depth, root };
}

function chainFrom(model: FiniteModel, F: Float64Array, det: Int32Array, s0: number): ShapingConstraint[] {
  const chain: ShapingConstraint[] = [];
  const seen = new Set<number>();
  let s = s0;
  while (!model.terminal[s] && det[s] >= 0 && !seen.has(s)) {
    seen.add(s);
    chain.push(constraintOf(model, s, det[s], F));
    s = model.next[det[s]];
  }
  return chain;
}

function conflictWitness(model: FiniteModel, F: Float64Array, gamma: number, phi: Float64Array, det: Int32Array, edge: ShapingConstraint): ShapingWitness {
  return {
    kind: "conflict",
    chainFromState: chainFrom(model, F, det, edge.state),
    chainFromNext: chainFrom(model, F, det, edge.next),
    phiFromChain: phi[edge.state],
    phiFromEdge: gamma * phi[edge.next] - edge.f,
  };
}

function cycleWitness(model: FiniteModel, F: Float64Array, fit: Fit, edge: ShapingConstraint): ShapingWitness {
  const parent = fit.parent!;
  const parentOutcome = fit.parentOutcome!;
  const depth = fit.depth!;
  const root = fit.root!;
  const { next, terminal } = model;
  // Step from child x up to its parent along the tree outcome.
  const up = (x: number): CycleStep => {
    const o = parentOutcome[x];
    // The tree outcome joins x and parent[x]; walking x -> parent is forward when x is its source.
    const fwd = next[o] === parent[x] && stateOfOutcome(model, o) === x;
    return { from: x, to: parent[x], outcome: o, forward: fwd, contribution: fwd ? F[o] : -F[o] };
  };
  const { state: u, next: v, outcome } = edge;
  const steps: CycleStep[] = [{ from: u, to: v, outcome, forward: true, contribution: F[outcome] }];
  // Climb from v and from u to their lowest common ancestor (or to their roots, joined through s0).
  const fromV: CycleStep[] = [];
  const fromU: CycleStep[] = [];
  let a = v;
  let b = u;
  while (depth[a] > depth[b]) {
    fromV.push(up(a));
    a = parent[a];
  }
  while (depth[b] > depth[a]) {
    fromU.push(up(b));
    b = parent[b];
  }
  while (a !== b && root[a] === root[b]) {
    fromV.push(up(a));
    a = parent[a];
    fromU.push(up(b));
    b = parent[b];
  }
  if (a !== b) {
    // Different trees: both roots are terminal (the merged s0), or the climb ends at one root.
    while (parent[a] >= 0) {
      fromV.push(up(a));
      a = parent[a];
    }
    while (parent[b] >= 0) {
      fromU.push(up(b));
      b = parent[b];
    }
  }
  steps.push(...fromV);
  if (a !== b) {
    // a and b are terminal states: the merged absorbing state, Phi = 0 on both.
    if (!(terminal[a] && terminal[b])) throw new Error("shaping witness: tree roots of one component differ");
    steps.push({ from: a, to: b, outcome: -1, forward: true, contribution: 0 });
  }
  for (let i = fromU.length - 1; i >= 0; i--) {
    const s = fromU[i];
    steps.push({ from: s.to, to: s.from, outcome: s.outcome, forward: !s.forward, contribution: -s.contribution });
  }
  let sum = 0;
  let directed = true;
  for (const s of steps) {
    sum += s.contribution;
    if (!s.forward || s.outcome < 0) directed = false;
  }
  return { kind: "cycle", steps, sum, directed };
}

function stateOfOutcome(model: FiniteModel, o: number): number {
  // Binary search saStart for the (s, a) block holding o.
  const nSA = model.nStates * model.nActions;
  let lo = 0;
  let hi = nSA - 1;
  while (lo < hi) {
    const mid = (lo + hi + 1) >> 1;
    if (model.saStart[mid] <= o) lo = mid;
    else hi = mid - 1;
  }
  return Math.floor(lo / model.nActions);
}
