/**
 * The order in which the engine solves states: components of the transition graph in reverse
 * topological order (scc.ts), and inside each component an order that follows the flow of value.
 *
 * Inside a component, states are listed by a breadth-first search over predecessors started from the
 * component's exits: the states with a transition leaving the component (into an already solved
 * component or a terminal state). Value enters a component through its exits, so a Gauss-Seidel sweep
 * in this order uses, for most states, successors already updated in the same sweep; sweeping back in
 * the reverse order carries value the other way. Ordering Gauss-Seidel updates along the flow of
 * information is the classic advice for shortest-path-like problems (Bertsekas & Tsitsiklis,
 * "Parallel and Distributed Computation", 1989, sections 1.2 and 4.1; Bertsekas, "Dynamic Programming
 * and Optimal Control", vol. II, on Gauss-Seidel orderings; from memory). A component without exits
 * (a closed class) starts from its first member. Every member is reached: in a strongly connected
 * component every state reaches every other.
 */
import { stronglyConnected, transpose, type Components, type CsrGraph } from "./scc.js";

export interface SolveOrder extends Components {
  /**
   * `members` with each component's nodes in breadth-first order from its exits (same `compStart`);
   * components stay in reverse topological order.
   */
  readonly members: Int32Array;
  /** Size of the largest component. */
  readonly largest: number;
  /** 1 for a component nothing leaves (no exit: a closed class of the graph). */
  readonly closed: Uint8Array;
}

/**
 * Components and in-component order of `g`. `exits[i]` is 1 where node i has a transition the graph
 * leaves out (to a terminal state); edges between components are found here.
 */
export function solveOrder(g: CsrGraph, exits: Uint8Array): SolveOrder {
  const scc = stronglyConnected(g);
  const { comp, compStart, count } = scc;
  const pred = transpose(g);
  const members = new Int32Array(g.n);
  const seen = new Uint8Array(g.n);
  const closed = new Uint8Array(count);
  let largest = 0;
  for (let c = 0; c < count; c++) {
    const lo = compStart[c];
    const hi = compStart[c + 1];
    if (hi - lo > largest) largest = hi - lo;
    // The queue is the output range itself: members[lo .. tail) in visiting order.
    let tail = lo;
    for (let m = lo; m < hi; m++) {
      const i = scc.members[m];
      let exit = exits[i] === 1;
      for (let e = g.rowStart[i]; !exit && e < g.rowStart[i + 1]; e++) if (comp[g.col[e]] !== c) exit = true;
      if (exit) {
        seen[i] = 1;
        members[tail++] = i;
      }
    }
    if (tail === lo) {
      closed[c] = 1;
      const i = scc.members[lo];
      seen[i] = 1;
      members[tail++] = i;
    }
    for (let head = lo; head < tail; head++) {
      const i = members[head];
      for (let e = pred.rowStart[i]; e < pred.rowStart[i + 1]; e++) {
        const j = pred.col[e];
        if (seen[j] === 0 && comp[j] === c) {
          seen[j] = 1;
          members[tail++] = j;
        }
      }
    }
  }
  return { ...scc, members, largest, closed };
}
