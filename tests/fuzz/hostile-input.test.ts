/**
 * Hostile model and reward files through the whole CLI (in-process): every case ends with exit 2 and
 * one printable line, or exit 0 with finite results; never exit 1, a hang or non-finite numbers.
 * The expectations are the project's own input contract (DEVELOPERS.md: bad input = one line, exit 2).
 */
import fc from "fast-check";
import { mkdirSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { memoryIO } from "../../src/cli/io.js";
import { runCli } from "../../src/cli/program.js";
import { didYouMean } from "../../src/model/format/json-errors.js";
import { formatError, InputError, terminalText } from "../../src/errors.js";
import { nonFinitePaths } from "../helpers/fuzz.js";
import { tempDirRemovedAfterAll } from "../helpers/temp-dirs.js";

const dir = tempDirRemovedAfterAll("hostile");

async function cli(...argv: string[]) {
  const io = memoryIO();
  const t0 = performance.now();
  const code = await runCli(argv, io);
  return { code, out: io.stdout, err: io.stderr, ms: performance.now() - t0 };
}

/** A two-state chain: state 0 --go--> state 1 (terminal), feature "step" and intent -1 per move. */
function chainDoc(): Record<string, any> {
  return {
    format: "gapwatch-mdp/1",
    name: "chain",
    gamma: 0.9,
    actions: ["go", "stay"],
    states: 2,
    start: 0,
    terminal: [1],
    features: ["step"],
    transitions: [
      { state: 0, action: 0, outcomes: [{ next: 1, p: 1, features: { step: 1 }, intent: 1 }] },
      { state: 0, action: 1, outcomes: [{ next: 0, p: 1, features: { step: 1 }, intent: -1 }] },
    ],
    rewards: { default: { weights: { step: -1 } } },
  };
}

let n = 0;
function write(doc: unknown, raw?: string): string {
  const f = join(dir, `m${n++}.json`);
  writeFileSync(f, raw ?? JSON.stringify(doc));
  return f;
}

function expectOneLine(r: { code: number; err: string }, pattern?: RegExp) {
  expect(r.code, r.err).toBe(2);
  const lines = r.err.trimEnd().split("\n");
  expect(lines).toHaveLength(1);
  expect(lines[0].length).toBeLessThanOrEqual(500);
  if (pattern) expect(lines[0]).toMatch(pattern);
}

describe("a huge declared state count (defect 1)", () => {
  for (const states of [1e9, 1e12]) {
    it(`states = ${states}: solve, audit and check refuse it at once with exit 2`, async () => {
      const f = write({ ...chainDoc(), states });
      for (const cmd of [["solve"], ["audit", "--no-sensitivity"], ["check", "--runs", "5"]]) {
        const r = await cli(...cmd, "--env", f);
        expectOneLine(r, /--max-states/);
        expect(r.ms).toBeLessThan(1000); // a refusal before any allocation (a hang is the defect)
      }
    });
  }
  it("a count the file cannot describe names the missing pairs (bound raised)", async () => {
    const f = write({ ...chainDoc(), states: 5_000_000 });
    const r = await cli("solve", "--env", f, "--max-states", "1000000000");
    expectOneLine(r, /no entry for state 2 action 0 .*missing in all.*"state": 2/);
  });
});

describe("names that are Object.prototype members (defect 3)", () => {
  for (const name of ["valueOf", "toString", "constructor", "hasOwnProperty"]) {
    it(`feature ${name}: solve gives finite values`, async () => {
      const d = chainDoc();
      d.features = [name];
      d.transitions.forEach((t: any) => (t.outcomes[0].features = { [name]: 1 }));
      d.rewards = { default: { weights: { [name]: -1 } }, other: { weights: {} } };
      const f = write(d);
      const r = await cli("solve", "--env", f, "--reward", "other", "--json");
      expect(r.code, r.err).toBe(0);
      const doc = JSON.parse(r.out);
      // designer return 0 under an all-zero reward; intent 1 (one move to the goal, undiscounted first step)
      expect(doc.designerOptimal.values).toEqual([0, 0]);
      expect(doc.intentOptimal.intent).toBe(1);
      expect(nonFinitePaths(doc)).toEqual([]);
      const r2 = await cli("solve", "--env", f, "--json");
      expect(r2.code, r2.err).toBe(0);
      // weight -1 per step: going at once costs 1 (the designer's optimum)
      expect(JSON.parse(r2.out).designerOptimal.values[0]).toBe(-1);
    });
  }
  it("a weight key __proto__ is refused with one line", async () => {
    const f = write(null, JSON.stringify(chainDoc()).replace('"weights":{"step":-1}', '"weights":{"step":-1,"__proto__":2}'));
    expectOneLine(await cli("solve", "--env", f), /reservedName.*__proto__/);
  });
  it("a feature named __proto__ is refused", async () => {
    const d = chainDoc();
    d.features = ["__proto__"];
    d.transitions.forEach((t: any) => delete t.outcomes[0].features);
    d.rewards = { default: { weights: {} } };
    expectOneLine(await cli("solve", "--env", write(d)), /reservedName/);
  });
  for (const spec of ["constructor", "__proto__", "toString"]) {
    it(`--reward ${spec} is an unknown variant (exit 2)`, async () => {
      expectOneLine(await cli("solve", "--env", write(chainDoc()), "--reward", spec), /reward\.unknown/);
    });
  }
  it("a reward file weighting `constructor` against a model without it: unknown feature", async () => {
    const rf = write({ format: "gapwatch-reward/1", name: "r", env: "chain", weights: { constructor: 1 } });
    expectOneLine(await cli("solve", "--env", write(chainDoc()), "--reward", rf), /unknownFeature/);
  });
});

describe("magnitudes near the double limit (defect 4)", () => {
  for (const v of [1e308, -1e308, 1.7e308]) {
    it(`feature value ${v} is refused naming the file and the feature`, async () => {
      const d = chainDoc();
      d.transitions[0].outcomes[0].features = { step: v };
      const f = write(d);
      expectOneLine(await cli("solve", "--env", f), new RegExp(`model\\.magnitude.*${f.replace(/[.\\/]/g, "\\$&")}.*features\\.step`));
    });
    it(`weight ${v} in a reward file is refused naming the file`, async () => {
      const rf = write({ format: "gapwatch-reward/1", name: "r", env: "chain", weights: { step: v } });
      expectOneLine(await cli("solve", "--env", write(chainDoc()), "--reward", rf), /reward\.weight.*m\d+\.json \$\.weights\.step/);
    });
  }
  it("intent 1e308 is refused", async () => {
    const d = chainDoc();
    d.transitions[1].outcomes[0].intent = 1e308;
    expectOneLine(await cli("audit", "--env", write(d)), /model\.magnitude.*intent/);
  });
});

describe("reward files applied to another model (defect 13)", () => {
  it("a reward file written for another environment is refused", async () => {
    const rf = write({ format: "gapwatch-reward/1", name: "r", env: "elsewhere", weights: { step: -1 } });
    expectOneLine(await cli("solve", "--env", write(chainDoc()), "--reward", rf), /reward\.env.*"elsewhere"/);
  });
  it("an unknown feature names the reward file and suggests the nearest feature", async () => {
    const rf = write({ format: "gapwatch-reward/1", name: "r", env: "chain", weights: { stpe: -1 } });
    const r = await cli("solve", "--env", write(chainDoc()), "--reward", rf);
    expectOneLine(r, /m\d+\.json \$\.weights\.stpe.*did you mean "step"/);
  });
});

describe("bounded work on long inputs (defect 24)", () => {
  it("a 1e6-character unknown key is refused quickly with a short line", async () => {
    const d: Record<string, unknown> = chainDoc();
    d["k".repeat(1e6)] = 1;
    const r = await cli("solve", "--env", write(d));
    expectOneLine(r, /unknownKey/);
    expect(r.ms).toBeLessThan(5000);
  });
  it("didYouMean does not compare long words", () => {
    expect(didYouMean("x".repeat(100_000), ["xx"])).toBeUndefined();
    expect(didYouMean("stpe", ["step"])).toBe("step");
  });
});

describe("exit 2 where exit 2 belongs; no raw control characters (defect 25)", () => {
  it("--reward naming a directory", async () => {
    const d = join(dir, "folder.json");
    mkdirSync(d);
    expectOneLine(await cli("solve", "--env", write(chainDoc()), "--reward", d), /reward\.read/);
  });
  it("--learner constructor", async () => {
    expectOneLine(await cli("train", "--env", write(chainDoc()), "--learner", "constructor", "--steps", "1000", "--runs-dir", join(dir, "runs")), /learner/);
  });
  it("check --replay zz:yy", async () => {
    expectOneLine(await cli("check", "--env", write(chainDoc()), "--property", "start-distribution", "--replay", "zz:yy"));
  });
  it("audit --report --runs-dir <file>", async () => {
    const file = write({});
    expectOneLine(await cli("audit", "--env", write(chainDoc()), "--no-sensitivity", "--report", "--runs-dir", file));
  });
  it("escape codes and direction overrides in names are not printed raw", async () => {
    const d = chainDoc();
    d.name = "evil\u001b[31mred\u202ename";
    const rf = write({ format: "gapwatch-reward/1", name: "r", env: "other", weights: {} });
    const r = await cli("solve", "--env", write(d), "--reward", rf);
    expectOneLine(r);
    expect(r.err).not.toMatch(/[\u001b\u202e]/);
  });
  it("formatError caps the line and folds control characters", () => {
    const line = formatError(new InputError("model.x", `a\u001b[2J${"y".repeat(10_000)}\u2066`, "f.json"));
    expect(line.length).toBeLessThanOrEqual(500);
    expect(line).not.toMatch(/[\u001b\u2066\n]/);
  });
});

describe("control and direction characters in names (defect 25)", () => {
  // ECMA-48 (5th ed., 1991) section 5.3/8.3: ESC starts a control sequence (CSI "ESC [", OSC "ESC ]"),
  // BEL ends an OSC; Unicode Standard Annex #9 (bidi) lists U+202A..U+202E and U+2066..U+2069 as
  // explicit direction formatting characters, which reorder what a terminal or a page shows.
  const NASTY = "st\u001b]0;owned\u0007ep\u001b[2J\u202egnp.exe\u0008\r";
  const doc = () => {
    const d = chainDoc();
    d.features = [NASTY];
    d.actions = ["go\u202e", "stay\u001b[1A"];
    for (const t of d.transitions) for (const o of t.outcomes) o.features = { [NASTY]: 1 };
    d.rewards = { default: { weights: { [NASTY]: -1 } } };
    return d;
  };
  const CONTROL_OR_BIDI = /[\u0000-\u0008\u000b-\u001f\u007f-\u009f\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069]/;

  for (const cmd of [["audit"]]) {
    it(`${cmd[0]}: human output shows the names with every control and direction character replaced`, async () => {
      const file = write(doc());
      const r = await cli(...cmd, "--env", file);
      expect(r.code, r.err).toBe(0);
      // no escape sequence other than colour codes (there are none without a TTY) and no bidi control
      expect(CONTROL_OR_BIDI.test(r.out.replace(/[\n\t]/g, ""))).toBe(false);
      if (cmd[0] === "audit") expect(r.out).toContain("st?]0;owned?ep?[2J?gnp.exe??"); // the weight-sensitivity table names the feature
    });
  }

  it("--json keeps the names as data: the same strings after JSON.parse, direction controls written as \\u escapes", async () => {
    const file = write(doc());
    const r = await cli("solve", "--env", file, "--json");
    expect(r.code, r.err).toBe(0);
    expect(/[\u202a-\u202e]/.test(r.out)).toBe(false);
    expect(r.out).toContain("\\u202e");
    expect(JSON.parse(r.out).designerOptimal.policy[0]).toBe("go\u202e");
  });

  it("terminalText: every control and direction character becomes ?, colour codes and line breaks stay", () => {
    expect(terminalText(NASTY)).toBe("st?]0;owned?ep?[2J?gnp.exe??");
    expect(terminalText("\u001b[1mbold\u001b[22m\n\tx")).toBe("\u001b[1mbold\u001b[22m\n\tx");
    fc.assert(
      fc.property(fc.string({ unit: "binary" }), (s) => {
        const t = terminalText(s);
        expect(CONTROL_OR_BIDI.test(t.replace(/\u001b\[[0-9;]*m/g, "").replace(/[\n\t]/g, ""))).toBe(false);
        if (!CONTROL_OR_BIDI.test(s)) expect(t).toBe(s); // printable text is left alone
      }),
    );
  });
});

describe("deeply nested values (long fuzz run, case 8190 of seed 1)", () => {
  // The search for the reserved key once copied the JSON path at every level: 100,000 nested arrays
  // beside a \u escape took minutes. Now it is linear; the file is refused by the schema, one line.
  it("100,000 nested arrays next to a \\u escape are refused with one line, not searched quadratically", async () => {
    const d = chainDoc();
    const raw = JSON.stringify({ ...d, name: "ch\\u0061in", extra: "__DEEP__" }).replace('"__DEEP__"', "[".repeat(100_000) + "1" + "]".repeat(100_000));
    const r = await cli("solve", "--env", write(null, raw));
    expectOneLine(r);
  });

  it("the reserved key is still found at depth, with its JSON path", async () => {
    const raw = JSON.stringify({ ...chainDoc(), extra: "__DEEP__" }).replace('"__DEEP__"', "[".repeat(3) + '{"a":{"__proto__":1}}' + "]".repeat(3));
    const r = await cli("solve", "--env", write(null, raw));
    expectOneLine(r, /\$\.extra\[0\]\[0\]\[0\]\.a\.__proto__.*reserved/);
  });
});
