/**
 * The compact model file (src/model/format/binary.ts): exact round trip of every built-in scenario and
 * of random models (fast-check), and one clear error per kind of damage. The CRC-32 check value is the
 * standard one of the ISO-HDLC polynomial ("123456789" -> 0xCBF43926, the catalogue of parametrised
 * CRC algorithms, entry CRC-32/ISO-HDLC).
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { formatError, InputError } from "../../src/errors.js";
import { builtinScenarioNames, loadScenario } from "../../src/env/scenarios.js";
import { crc32, decodeBinaryModel, encodeBinaryModel } from "../../src/model/format/binary.js";
import type { FiniteModel } from "../../src/model/types.js";
import { designerReward } from "../../src/model/reward.js";
import { valueIteration } from "../../src/solve/value-iteration.js";
import { randomModel } from "../helpers/random-model.js";

/** The model without `source` (which names the file it was read from). */
const bare = (m: FiniteModel) => ({ ...m, source: undefined });

function errorOf(fn: () => unknown): string {
  try {
    fn();
  } catch (e) {
    expect(e).toBeInstanceOf(InputError);
    expect((e as InputError).exitCode).toBe(2);
    const line = formatError(e);
    expect(line).not.toMatch(/\n/);
    return line;
  }
  throw new Error("expected an InputError");
}

describe("compact model files", () => {
  it("CRC-32 check value (CRC-32/ISO-HDLC of the ASCII digits 1..9 is 0xCBF43926)", () => {
    expect(crc32(new Uint8Array(Buffer.from("123456789")))).toBe(0xcbf43926);
  });

  it.each(builtinScenarioNames())("%s: round trip gives identical arrays, variants and solve values", (name) => {
    const m = loadScenario(name).model;
    const back = decodeBinaryModel(encodeBinaryModel(m), `${name}.gwbin`);
    expect(back.source).toBe(`${name}.gwbin`);
    expect(bare(back)).toEqual(bare(m));
    for (const [key, v] of Object.entries(m.variants ?? {})) {
      const a = valueIteration(m, designerReward(m, v), { tol: 1e-10 });
      const b = valueIteration(back, designerReward(back, back.variants![key]), { tol: 1e-10 });
      expect(Array.from(b.values)).toEqual(Array.from(a.values));
    }
  });

  it("property: random models (terminal states, groups, potentials, shaped variants, -0) round-trip bit for bit", () => {
    fc.assert(
      fc.property(randomModel, (m) => {
        const back = decodeBinaryModel(encodeBinaryModel(m), "r.gwbin");
        expect(bare(back)).toEqual(bare(m));
        for (const key of ["start", "prob", "featureValues", "intent"] as const) {
          for (let i = 0; i < m[key].length; i++) expect(Object.is(back[key][i], m[key][i])).toBe(true);
        }
      }),
      { numRuns: 100 },
    );
  });

  describe("damaged files: one line naming the file and what is wrong", () => {
    const good = encodeBinaryModel(loadScenario("quench-hall-run").model);
    const headerLen = good.readUInt32LE(12);
    const header = JSON.parse(good.toString("utf8", 24, 24 + headerLen)) as { sections: { name: string; offset: number; count: number }[] };
    const sec = (name: string) => header.sections.find((s) => s.name === name)!;
    const load = (b: Uint8Array) => errorOf(() => decodeBinaryModel(b, "bad.gwbin"));

    it("wrong magic, too short, unknown version", () => {
      expect(load(Buffer.from('{"format": "gapwatch-mdp/1"}'))).toMatch(/bad\.gwbin.*does not start with the 8 bytes "gapwatch"/);
      expect(load(good.subarray(0, 10))).toMatch(/it has 10 bytes/);
      const v = Buffer.from(good);
      v.writeUInt32LE(7, 8);
      expect(load(v)).toMatch(/format version 7 at byte 8/);
    });

    it("truncated in the header and in a section (the section and its byte range named)", () => {
      expect(load(good.subarray(0, 30))).toMatch(/truncated: the header needs bytes 24\.\./);
      const intent = sec("intent");
      expect(load(good.subarray(0, intent.offset + 3))).toMatch(new RegExp(`truncated: section "intent" at byte ${intent.offset} needs bytes ${intent.offset}\\.\\.${intent.offset + intent.count * 8}`));
    });

    it("a flipped byte in the header or in a section fails its CRC-32", () => {
      const h = Buffer.from(good);
      h[30] ^= 1;
      expect(load(h)).toMatch(/header \(bytes 24\.\.\d+\): CRC-32 mismatch/);
      const p = Buffer.from(good);
      p[sec("prob").offset + 5] ^= 0x40;
      expect(load(p)).toMatch(new RegExp(`section "prob" at byte ${sec("prob").offset}: CRC-32 mismatch`));
    });

    it("a consistent file with bad contents is refused by the checks every model passes", () => {
      const m = loadScenario("quench-hall-run").model;
      const prob = Float64Array.from(m.prob);
      const k = m.terminal[0] ? m.nActions * m.terminal.indexOf(0) : 0;
      prob[m.saStart[k]] += 0.5;
      expect(errorOf(() => decodeBinaryModel(encodeBinaryModel({ ...m, prob }), "bad.gwbin"))).toMatch(/model\.probability.*bad\.gwbin/);
    });
  });
});

describe("compact model files: -0 in the JSON header", () => {
  it("weights, shaping scales and inline potentials keep their sign of zero", () => {
    const m = loadScenario("quench-hall-run").model;
    const f = m.features[0];
    const shaped = { ...m, variants: { z: { name: "z", weights: { [f]: -0 }, shaping: { potential: Array.from({ length: m.nStates }, (_, s) => (s === 0 ? -0 : 1)), scale: -0 } } } };
    const back = decodeBinaryModel(encodeBinaryModel(shaped), "z.gwbin").variants!.z;
    expect(Object.is(back.weights[f], -0)).toBe(true);
    expect(Object.is(back.shaping!.scale, -0)).toBe(true);
    expect(Object.is((back.shaping!.potential as number[])[0], -0)).toBe(true);
  });
});
