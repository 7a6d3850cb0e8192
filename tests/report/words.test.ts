/**
 * Numbers and keys in words (src/util/share.ts, src/report/evidence.ts, src/report/sections.ts): for
 * any normalized score a percentage appears only inside 0..100, a score below random is called worse
 * than random with its distance below random, and no evidence key comes out in camelCase. Property
 * tests (fast-check); the scale is the project's own (0 = uniform random, 1 = optimal).
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { evidenceList, keyWords } from "../../src/report/evidence.js";
import { pct, regretPct } from "../../src/report/sections.js";
import { regretText, shareText, worseThanRandom } from "../../src/util/share.js";

const percents = (s: string) => [...s.matchAll(/(-?\d+(?:\.\d+)?)\s?%/g)].map((m) => Number(m[1]));

describe("shares in words", () => {
  it("a percentage only inside 0..100, for any score (property)", () => {
    fc.assert(
      fc.property(fc.double({ min: -50, max: 50, noNaN: true }), (x) => {
        for (const s of [shareText(x), regretText(x), pct(x), regretPct(x)]) for (const p of percents(s)) expect(p >= 0 && p <= 100, s).toBe(true);
        if (x < -1e-6) expect(shareText(x)).toMatch(/^worse than random behaviour/);
        if (x <= -0.005) expect(pct(x)).toMatch(/^worse than random/); // below 0% at the printed precision
        if (x > 1 + 1e-6) expect(regretText(x)).toMatch(/worse than random behaviour/);
      }),
    );
  });
  it("says how far below random, in gaps between random and optimal", () => {
    // Intent 0.21 of the random-to-optimal gap below random: normalized score -0.21, regret 1.21.
    expect(worseThanRandom(-0.21)).toContain("below random by 0.21 times the gap");
    expect(regretText(1.206)).toContain("below random by 0.21 times the gap");
    expect(regretText(0.705)).toBe("gives up 70.5% of the achievable intent");
    expect(pct(-1.98)).toBe("worse than random (-1.98)");
    expect(pct(1 + 1e-9)).toBe("100%");
    // Rounding to the printed precision: whole percents by default, so |x| < 0.005 reads as an end.
    expect(pct(-0.00018)).toBe("0%");
    expect(pct(-0.0051)).toBe("worse than random (-0.0051)");
    expect(pct(-0.0004, 1)).toBe("0.0%");
    expect(pct(-0.0006, 1)).toBe("worse than random (-0.00060)");
  });
});

describe("evidence in words", () => {
  it("no key in camelCase, no JSON brackets (property over generated records)", () => {
    const key = fc.stringMatching(/^[a-z]{1,6}([A-Z][a-z]{1,6}){0,3}$/);
    const leaf = fc.oneof(fc.double({ noNaN: true }), fc.boolean(), fc.constantFrom("r1c1", "north"), fc.constant(null));
    const rec = fc.dictionary(key, fc.oneof(leaf, fc.array(leaf, { maxLength: 4 }), fc.dictionary(key, leaf, { maxKeys: 3 })), { maxKeys: 5 });
    fc.assert(
      fc.property(rec, (ev) => {
        const html = evidenceList(ev);
        const text = html.replace(/<[^>]+>/g, " ");
        for (const k of Object.keys(ev)) if (/[a-z][A-Z]/.test(k)) expect(text).not.toContain(k);
        expect(text).not.toMatch(/[[{]/);
      }),
    );
    expect(keyWords("failValueNeeded")).toBe("designer value a failure would need to refuse the risk");
    expect(keyWords("someNewKey")).toBe("some new key");
  });
});
