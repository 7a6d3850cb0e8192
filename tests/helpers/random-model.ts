/**
 * Random small models for property tests of the model formats (fast-check): built through
 * ModelBuilder, with terminal states, zero and non-zero features and intent, labels (repeated ones,
 * and labels that read as another state's index), groups, a potential and (shaped) reward variants.
 */
import fc from "fast-check";
import { ModelBuilder } from "../../src/model/builder.js";
import type { RewardVariant } from "../../src/model/types.js";

export const smallDouble = fc.double({ min: -1e6, max: 1e6, noNaN: true });

/** Random small models built through ModelBuilder, with groups, potentials and (shaped) variants. */
export const randomModel = fc
  .record({ nS: fc.integer({ min: 1, max: 6 }), nA: fc.integer({ min: 1, max: 3 }), nF: fc.integer({ min: 0, max: 3 }) })
  .chain(({ nS, nA, nF }) =>
    fc.record({
      nS: fc.constant(nS),
      nA: fc.constant(nA),
      nF: fc.constant(nF),
      terminal: fc.array(fc.boolean(), { minLength: nS, maxLength: nS }),
      rows: fc.array(
        fc.array(
          fc.record({
            next: fc.integer({ min: 0, max: nS - 1 }),
            w: fc.oneof(fc.constant(0), fc.double({ min: 0.01, max: 1, noNaN: true })),
            f: fc.array(fc.oneof(fc.constant(0), smallDouble), { minLength: nF, maxLength: nF }),
            intent: fc.oneof(fc.constant(0), smallDouble),
          }),
          { minLength: 1, maxLength: 3 },
        ),
        { minLength: nS * nA, maxLength: nS * nA },
      ),
      start: fc.array(fc.oneof(fc.constant(0), fc.double({ min: 0.1, max: 1, noNaN: true })), { minLength: nS, maxLength: nS }),
      labels: fc.option(fc.array(fc.constantFrom("a", "b", "0", "1", "2", "x y", "s.3"), { minLength: nS, maxLength: nS }), { nil: undefined }),
      groups: fc.option(fc.array(fc.option(fc.constantFrom("north", "south"), { nil: null }), { minLength: nS, maxLength: nS }), { nil: undefined }),
      gamma: fc.oneof(fc.constant(1), fc.double({ min: 0.01, max: 1, noNaN: true })),
      horizon: fc.integer({ min: 1, max: 5000 }),
      variants: fc.array(
        fc.record({
          weights: fc.array(fc.oneof(fc.constant(0), smallDouble), { minLength: nF, maxLength: nF }),
          shaping: fc.option(
            fc.record({
              potential: fc.oneof(fc.constant("phi"), fc.array(smallDouble, { minLength: nS, maxLength: nS })),
              scale: fc.double({ min: -10, max: 10, noNaN: true }),
            }),
            { nil: undefined },
          ),
        }),
        { maxLength: 3 },
      ),
      phi: fc.array(smallDouble, { minLength: nS, maxLength: nS }),
    }),
  )
  .map((g) => {
    const features = Array.from({ length: g.nF }, (_, f) => ["step", "coin", "shaping.v0"][f]);
    const b = new ModelBuilder({
      name: "random",
      nStates: g.nS,
      actions: Array.from({ length: g.nA }, (_, a) => `act${a}`),
      features,
      gamma: g.gamma,
      horizon: g.horizon,
      stateLabels: g.labels,
    });
    g.terminal.forEach((t, s) => t && b.setTerminal(s));
    g.rows.forEach((row, k) => {
      const s = Math.floor(k / g.nA);
      const a = k % g.nA;
      const total = row.reduce((acc, o) => acc + o.w, 0);
      row.forEach((o, i) => b.addOutcome(s, a, o.next, total === 0 ? (i === 0 ? 1 : 0) : o.w / total, o.f, o.intent));
    });
    const st = g.start.reduce((a, x) => a + x, 0);
    g.start.forEach((x, s) => b.setStart(s, st === 0 ? (s === 0 ? 1 : 0) : x / st));
    if (g.groups) b.setGroups(g.groups);
    b.setPotential("phi", Float64Array.from(g.phi));
    const variants: Record<string, RewardVariant> = {};
    g.variants.forEach((v, i) => {
      const weights: Record<string, number> = {};
      features.forEach((f, j) => v.weights[j] !== 0 && (weights[f] = v.weights[j]));
      variants[`v${i}`] = v.shaping ? { name: `v${i}`, weights, shaping: v.shaping } : { name: `v${i}`, weights };
    });
    if (g.variants.length) b.setVariants(variants);
    return b.build();
  });
