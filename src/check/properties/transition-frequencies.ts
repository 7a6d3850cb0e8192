import fc from "fast-check";
import { createRng } from "../../rng/rng.js";
import { chiSquareTest } from "../chisq.js";
import { outcomeKey, play, resetChecked, startsChecked, stateKey, stepChecked, transitionsChecked, Violation } from "../drive.js";
import { groups, modelIsDeterministic, type PropertySpec, actionsArb, runFc, failedStatic, text } from "../harness.js";

/** Family-wise significance of the transition-frequency test (Bonferroni over the tested pairs). */
export const FREQUENCY_ALPHA = 0.001;
/** Draws per tested state-action pair (and for the start distribution). */
export const FREQUENCY_SAMPLES = 2000;

// transition-frequencies: where exact outcome probabilities exist (transitions()), sampled step()
// results agree with them. Each run plays a generated episode and tests one reached state-action pair
// with two or more distinct outcomes (the `pick`-th such pair): FREQUENCY_SAMPLES draws of step() from
// that state, each matched to the listed outcome with the same state key, features, intent and
// termination (a draw matching none fails at once), then Pearson's chi-square against the listed
// probabilities, cells with expected count < 5 pooled (Cochran's rule, common practice). The
// family-wise significance is alpha = 0.001 with a Bonferroni correction over the tests made: each
// test rejects at alpha / (runs + 1) (at most one pair per run, plus the start distribution via
// starts() and reset(), tested once the same way).
function frequencyTest(
  label: string,
  listed: Map<string, number>,
  draw: (i: number) => string,
  alpha: number,
): void {
  const labels = [...listed.keys()];
  const index = new Map(labels.map((l, i) => [l, i]));
  const counts = new Array<number>(labels.length).fill(0);
  for (let i = 0; i < FREQUENCY_SAMPLES; i++) {
    const k = draw(i);
    const j = index.get(k);
    if (j === undefined) throw new Violation(`${label}: step gave ${k}, which is not among the ${labels.length} listed outcomes`);
    counts[j]++;
  }
  const total = [...listed.values()].reduce((a, b) => a + b, 0);
  const res = chiSquareTest(labels, counts, [...listed.values()].map((p) => p / total), alpha);
  if (res?.reject) {
    const cells = res.cells.map((c) => `${c.label.length > 60 ? c.label.slice(0, 57) + "..." : c.label}: observed ${c.observed}, expected ${c.expected.toFixed(1)}`).join("; ");
    throw new Violation(
      `${label}: sampled frequencies disagree with the listed probabilities (chi-square ${res.statistic.toFixed(2)} > ${res.critical.toFixed(2)}, df ${res.df}, p = ${res.pValue.toExponential(2)}, per-test alpha ${alpha.toExponential(2)}; ${FREQUENCY_SAMPLES} draws): ${cells}`,
    );
  }
}
export const transitionFrequencies: PropertySpec = {
  name: "transition-frequencies",
  summary: "sampled outcomes match the exact probabilities (chi-square, family-wise alpha 0.001)",
  run(sub, ctx) {
    const name = "transition-frequencies";
    const def = sub.def;
    if (sub.model && modelIsDeterministic(sub)) return { name, status: "skipped", runs: 0, note: "deterministic: nothing to sample" };
    if (!def.transitions && !def.starts) return { name, status: "skipped", runs: 0, note: "no transitions() or starts(): no exact probabilities to compare with" };
    const alpha = FREQUENCY_ALPHA / (ctx.runs + 1);
    let tested = 0;
    if (def.starts) {
      const listed = new Map<string, number>();
      for (const st of startsChecked(sub)) listed.set(stateKey(def, st.state), (listed.get(stateKey(def, st.state)) ?? 0) + st.p);
      if (listed.size > 1) {
        tested++;
        const rng = createRng(`frequencies/${ctx.seed}/reset`);
        try {
          frequencyTest("reset()", listed, () => stateKey(def, resetChecked(sub, rng)), alpha);
        } catch (e) {
          if (e instanceof Violation) return failedStatic(name, { seed: ctx.seed, reset: true }, e.message);
          throw e;
        }
      }
    }
    const arb = fc.record({ seed: fc.nat({ max: 2 ** 31 - 1 }), actions: actionsArb(sub), pick: fc.nat({ max: 1000 }) });
    return runFc(
      name,
      sub,
      ctx,
      arb,
      ({ seed, actions, pick }) => {
        if (!def.transitions) return;
        const t = play(sub, seed, actions);
        const pairs = t.steps.map((st) => ({ st, g: groups(sub, transitionsChecked(sub, st.from, st.action)) })).filter((x) => x.g.size > 1);
        if (pairs.length === 0) return;
        const { st, g } = pairs[pick % pairs.length];
        tested++;
        const rng = createRng(`frequencies/${seed}/${pick}`);
        frequencyTest(`step(${text(sub, st.from)}, ${def.actions[st.action]})`, g, () => outcomeKey(def, stepChecked(sub, st.from, st.action, rng)), alpha);
      },
      {
        skip: () => (tested === 0 ? `no stochastic step reached in ${ctx.runs} runs` : undefined),
        note: () => `${tested} tests at per-test alpha ${alpha.toExponential(2)} (family-wise ${FREQUENCY_ALPHA}, Bonferroni)`,
      },
    );
  },
};
