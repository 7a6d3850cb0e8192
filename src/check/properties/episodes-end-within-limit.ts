import { play, Violation } from "../drive.js";
import type { CheckSubject } from "../subject.js";
import { type PropertySpec, trajArb, runFc, failedStatic, stepCapOf, stepLimitOf } from "../harness.js";

// episodes-end-within-limit: (a) under the episode wrapper every episode ends by step H (the horizon),
// truncated exactly at H when not terminated, never both; (b) with a finite model that has terminal
// states, termination is reachable within H: from every start state some terminal state is at most H
// steps away (exact breadth-first search over outcomes with p > 0). A model with no terminal state is
// a continuing task, ended only by the step limit; without a finite model (b) is not checked. When the
// step limit is above the check's step cap (`--max-steps`), episodes are played for the cap only: (a)
// checks that none runs past the limit or is truncated early, and the note says the limit was not reached.
function shortestToTerminal(m: NonNullable<CheckSubject["model"]>): Int32Array {
  // Reverse BFS from terminal states.
  const nS = m.nStates;
  const preds: number[][] = Array.from({ length: nS }, () => []);
  for (let s = 0; s < nS; s++) {
    if (m.terminal[s]) continue;
    for (let k = s * m.nActions; k < (s + 1) * m.nActions; k++) for (let o = m.saStart[k]; o < m.saStart[k + 1]; o++) if (m.prob[o] > 0) preds[m.next[o]].push(s);
  }
  const dist = new Int32Array(nS).fill(-1);
  const queue: number[] = [];
  for (let s = 0; s < nS; s++) if (m.terminal[s]) {
    dist[s] = 0;
    queue.push(s);
  }
  for (let q = 0; q < queue.length; q++) {
    const s = queue[q];
    for (const p of preds[s]) if (dist[p] < 0) {
      dist[p] = dist[s] + 1;
      queue.push(p);
    }
  }
  return dist;
}
export const episodesEnd: PropertySpec = {
  name: "episodes-end-within-limit",
  summary: "every episode ends by the step limit, and termination is reachable within it",
  run(sub, ctx) {
    const name = "episodes-end-within-limit";
    const H = stepLimitOf(sub);
    const cap = stepCapOf(sub, ctx);
    const m = sub.model;
    const continuing = m !== undefined && !m.terminal.some((x) => x === 1);
    if (m && !continuing) {
      const dist = shortestToTerminal(m);
      for (let s = 0; s < m.nStates; s++) {
        if (!(m.start[s] > 0)) continue;
        if (dist[s] < 0 || dist[s] > H) {
          return failedStatic(name, { start: m.stateLabels[s], horizon: H }, dist[s] < 0 ? `no terminal state is reachable from start ${m.stateLabels[s]}` : `the nearest terminal state is ${dist[s]} steps from start ${m.stateLabels[s]}, beyond the step limit ${H}`);
        }
      }
    }
    let terminatedRuns = 0;
    const result = runFc(name, sub, ctx, trajArb(sub), ({ seed, actions }) => {
      const t = play(sub, seed, actions, { pad: true, maxSteps: cap });
      const last = t.steps[t.steps.length - 1];
      if (last && last.truncated && (last.terminated || last.t !== H)) throw new Violation(`truncated at step ${last.t} (limit ${H}, terminated=${last.terminated})`);
      if (!t.episode.done && cap < H) return; // still running at the cap, below the limit: nothing wrong yet
      if (!t.episode.done) throw new Violation(`the episode did not end after ${t.episode.t} steps (limit ${H})`);
      if (t.steps.length > H) throw new Violation(`the episode ran ${t.steps.length} steps, past the limit ${H}`);
      if (last?.terminated) terminatedRuns++;
    });
    if (result.status === "failed") return result;
    if (cap < H) return { ...result, note: `step limit ${H} is above the check's cap of ${cap} steps (--max-steps): episodes played for ${cap} steps; ${terminatedRuns} of ${result.runs} terminated` };
    if (continuing) return { ...result, note: "continuing task (no terminal state): every episode ends at the step limit" };
    if (!m) return { ...result, note: `no finite model: reachability not checked; ${terminatedRuns} of ${result.runs} generated episodes terminated` };
    return { ...result, note: `${terminatedRuns} of ${result.runs} generated episodes terminated` };
  },
};
