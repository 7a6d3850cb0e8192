import fc from "fast-check";
import { play, stateKey, Violation } from "../drive.js";
import { type PropertySpec, actionsArb, runFc } from "../harness.js";
import { ownValue } from "../../util/own.js";

// observation-hides-intent. What a learner sees of a state: the numbers in its key (the numeric tokens
// of key(state), by position, when every state seen has the same number of them) and the components of
// observe(state). A channel c "reveals the intent" on a set of generated episodes when, over all their
// steps t, c(s_t) = alpha * X_t + beta exactly (alpha != 0, within 1e-9 relative) for X = the intent
// accumulated so far or X = the intent increment of the step into s_t, with X taking at least three
// distinct values (two points always fit a line), while the same channel is NOT such an affine function
// of any designer-side quantity: a feature's running sum or its last value, or a declared reward
// variant's running designer return or its last reward. Such a channel hands the learner the held-out
// score itself; a channel that tracks the designer reward as well carries nothing the learner does not
// already get. Each run generates four episodes from one seed; any revealing channel is a failure.
const LEAK_EPISODES = 4;
function numericTokens(k: string): number[] {
  return (k.match(/-?\d+(?:\.\d+)?(?:e[-+]?\d+)?/gi) ?? []).map(Number);
}
function affine(x: number[], y: number[], minDistinct: number): { a: number; b: number } | null {
  if (new Set(x).size < minDistinct) return null;
  let i0 = 0;
  let i1 = 0;
  for (let i = 1; i < x.length; i++) {
    if (x[i] < x[i0]) i0 = i;
    if (x[i] > x[i1]) i1 = i;
  }
  const a = (y[i1] - y[i0]) / (x[i1] - x[i0]);
  if (!Number.isFinite(a) || a === 0) return null;
  const b = y[i0] - a * x[i0];
  for (let i = 0; i < x.length; i++) if (Math.abs(y[i] - (a * x[i] + b)) > 1e-9 * (1 + Math.abs(y[i]))) return null;
  return { a, b };
}
export const observationHidesIntent: PropertySpec = {
  name: "observation-hides-intent",
  summary: "no observed number is the intent score where the designer reward is not",
  run(sub, ctx) {
    const def = sub.def;
    const feats = def.features;
    const variants = Object.entries(def.rewards ?? {});
    const arb = fc.record({ seed: fc.nat({ max: 2 ** 31 - 1 }), episodes: fc.array(actionsArb(sub), { minLength: LEAK_EPISODES, maxLength: LEAK_EPISODES }) });
    return runFc("observation-hides-intent", sub, ctx, arb, ({ seed, episodes }) => {
      const channels = new Map<string, number[]>();
      const series = { intentSum: [] as number[], intentLast: [] as number[] };
      const designer = new Map<string, number[]>();
      const push = (m: Map<string, number[]>, k: string, v: number) => {
        let arr = m.get(k);
        if (!arr) m.set(k, (arr = []));
        arr.push(v);
      };
      let tokenCount: number | undefined;
      let tokensUsable = true;
      const keyTokens: number[][] = [];
      episodes.forEach((actions, e) => {
        const t = play(sub, seed + e, actions);
        let isum = 0;
        const fsum = new Array<number>(feats.length).fill(0);
        const vsum = new Array<number>(variants.length).fill(0);
        for (const st of t.steps) {
          isum += st.intent;
          series.intentSum.push(isum);
          series.intentLast.push(st.intent);
          feats.forEach((f, j) => {
            const v = ownValue(st.features, f) ?? 0;
            fsum[j] += v;
            push(designer, `running sum of feature ${f}`, fsum[j]);
            push(designer, `feature ${f}`, v);
          });
          variants.forEach(([n, r], j) => {
            let v = 0;
            for (const [f, w] of Object.entries(r.weights)) v += w * (ownValue(st.features, f) ?? 0);
            vsum[j] += v;
            push(designer, `designer return of ${n}`, vsum[j]);
            push(designer, `designer reward of ${n}`, v);
          });
          const toks = numericTokens(stateKey(def, st.state));
          if (tokenCount === undefined) tokenCount = toks.length;
          else if (toks.length !== tokenCount) tokensUsable = false;
          keyTokens.push(toks);
          if (def.observe) def.observe(st.state).forEach((v, d) => push(channels, `observe()[${d}]`, v));
        }
      });
      if (tokensUsable && tokenCount) for (let d = 0; d < tokenCount; d++) channels.set(`key number #${d + 1}`, keyTokens.map((t) => t[d]));
      const explains = [...designer.values()];
      for (const [cname, c] of channels) {
        for (const [xname, x] of [["intent accumulated so far", series.intentSum], ["the last intent increment", series.intentLast]] as const) {
          const fit = affine(x, c, 3);
          if (!fit) continue;
          if (explains.some((d) => affine(d, c, 2))) continue;
          throw new Violation(
            `the learner can read the intent: ${cname} = ${+fit.a.toPrecision(6)} * (${xname}) + ${+fit.b.toPrecision(6)} on all ${c.length} steps of these episodes, and no designer feature or reward explains it`,
          );
        }
      }
    });
  },
};
