/**
 * python/gapwatch_bridge.py run by the machine's python3 on stand-in environments written here (no
 * third-party Python packages), its JSON lines read back by our readers, and its exported model solved
 * by the CLI.
 */
import { execFileSync } from "node:child_process";
import { existsSync, readFileSync, writeFileSync } from "node:fs";
import { dirname, join, resolve } from "node:path";
import { fileURLToPath, pathToFileURL } from "node:url";
import { describe, expect, it } from "vitest";
import { readJsonLinesSeries } from "../../src/ingest/table.js";
import { ownCheckpoints, ownLineKind } from "../../src/ingest/checkpoints.js";
import { tempDirsRemovedAfterAll } from "../helpers/temp-dirs.js";

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), "..", "..");
const BRIDGE_DIR = join(ROOT, "python");
const newDir = tempDirsRemovedAfterAll();

function python(script: string, cwd: string): string {
  const path = join(cwd, "run.py");
  writeFileSync(path, script);
  return execFileSync("python3", [path], { cwd, env: { ...process.env, PYTHONPATH: BRIDGE_DIR }, encoding: "utf8", timeout: 30_000 });
}

/** The CLI: the built one (dist) when present, else the sources through tsx. */
function cli(args: string[]): string {
  const built = join(ROOT, "dist", "src", "cli", "main.js");
  const argv = existsSync(built) ? [built, ...args] : ["--import", pathToFileURL(join(ROOT, "node_modules/tsx/dist/loader.mjs")).href, join(ROOT, "src/cli/main.ts"), ...args];
  return execFileSync(process.execPath, argv, { encoding: "utf8", timeout: 60_000 });
}

const STAND_INS = `
import json
from gapwatch_bridge import EpisodeLog

class Conveyor:
    """New API: (obs, reward, terminated, truncated, info). Episode ends after 3 steps; a crate is
    delivered (intent 0.5) on the last step only; the designer pays 1 per step."""
    def __init__(self):
        self.t = 0
        self.closed = False
        self.label = "conveyor"
    def reset(self, seed=None, options=None):
        self.t = 0
        return 0, {}
    def step(self, action):
        self.t += 1
        done = self.t >= 3
        return self.t, 1.0, done, False, {"crates": 0.5 if done else 0.0}
    def close(self):
        self.closed = True

class OldLift:
    """Old API: (obs, reward, done, info); a time limit cuts every episode after 2 steps."""
    def reset(self):
        self.t = 0
        return 0
    def step(self, action):
        self.t += 1
        done = self.t >= 2
        info = {"TimeLimit.truncated": True} if done else {}
        return self.t, -0.25, done, info
`;

describe("EpisodeLog (python/gapwatch_bridge.py)", () => {
  it("writes one flushed JSON line per episode from a 5-tuple env, reading the intent from info", () => {
    const dir = newDir("bridge-log");
    const out = python(
      `${STAND_INS}
env = EpisodeLog(Conveyor(), "episodes.jsonl", intent_key="crates")
for ep in range(2):
    env.reset(seed=ep)
    done = False
    while not done:
        obs, r, term, trunc, info = env.step(0)
        done = term or trunc
    # flushed: the line is in the file before close
    print(len(open("episodes.jsonl").read().splitlines()))
env.reset()
env.step(0)  # an unfinished episode is not written
print(env.label, env.episodes)
env.close()
print(env.env.closed)
`,
      dir,
    );
    expect(out.trim().split("\n")).toEqual(["1", "2", "conveyor 2", "True"]);
    const lines = readFileSync(join(dir, "episodes.jsonl"), "utf8").trim().split("\n").map((l) => JSON.parse(l));
    // 3 steps per episode at reward 1 and one crate of 0.5: returns 3, intents 0.5; steps cumulative 3, 6
    expect(lines).toEqual([{ step: 3, designer: 3, intent: 0.5 }, { step: 6, designer: 3, intent: 0.5 }]);
    // our reader takes these as per-episode lines and pools them (window 5: episodes ending in (0,5], (5,10])
    const t = readJsonLinesSeries(readFileSync(join(dir, "episodes.jsonl")), "episodes.jsonl");
    expect(ownLineKind(t)).toBe("episodes");
    expect(ownCheckpoints(t, "episodes.jsonl", { window: 5 }).map((c) => [c.step, c.designer, c.intent, c.episodes])).toEqual([[5, 3, 0.5, 1], [10, 3, 0.5, 1]]);
  });

  it("accepts the old 4-tuple API with an intent function, and refuses a missing info key in one line", () => {
    const dir = newDir("bridge-old");
    const out = python(
      `${STAND_INS}
env = EpisodeLog(OldLift(), "lift.jsonl", intent_fn=lambda obs, r, term, trunc, info: 1.0 if trunc else 0.0)
for _ in range(3):
    env.reset()
    done = False
    while not done:
        _, _, done, _ = env.step(1)
env.close()
bad = EpisodeLog(Conveyor(), "bad.jsonl", intent_key="crate")
bad.reset()
try:
    bad.step(0)
except KeyError as e:
    print(e.args[0])
lenient = EpisodeLog(Conveyor(), "lenient.jsonl", intent_key="crate", missing=0.0)
lenient.reset()
for _ in range(3):
    lenient.step(0)
lenient.close()
print(open("lenient.jsonl").read().strip())
`,
      dir,
    );
    const lines = readFileSync(join(dir, "lift.jsonl"), "utf8").trim().split("\n").map((l) => JSON.parse(l));
    expect(lines).toEqual([1, 2, 3].map((k) => ({ step: 2 * k, designer: -0.5, intent: 1 })));
    const [missing, lenient] = out.trim().split("\n");
    expect(missing).toBe("info has no 'crate' (keys: crates); pass intent_key=, intent_fn= or missing=");
    expect(JSON.parse(lenient)).toEqual({ step: 3, designer: 3, intent: 0 });
  });
});

describe("export_tabular_model (python/gapwatch_bridge.py)", () => {
  /*
   * A three-state chain, gamma 0.9. State 0: "wait" pays 0.1 and stays; "go" reaches state 1 with
   * probability 0.8 (given as two outcomes 0.5 + 0.3, to be merged) and stays with 0.2, paying 0.
   * State 1: "go" ends the episode in state 2 paying 1 with intent 1; "wait" pays 0.05 and stays.
   * Hand derivation (Bellman optimality equations, Sutton & Barto 2nd ed., eq. 3.19):
   *   designer: V(1) = max(1, 0.05 + 0.9 V(1)) = 1 (waiting forever gives 0.05/0.1 = 0.5);
   *     V(0) = max(0.1 + 0.9 V(0), 0.9 (0.8 V(1) + 0.2 V(0))); waiting forever gives 0.1/(1 - 0.9) = 1,
   *     going gives 0.72 / (1 - 0.18) = 0.878..., so V(0) = 1 and the designer-optimal policy waits:
   *     its intent is 0 (it never reaches the end).
   *   intent: only "go" in state 1 has intent 1, so V_I(1) = 1 and V_I(0) = 0.9 (0.8 + 0.2 V_I(0)),
   *     V_I(0) = 0.72 / 0.82 = 0.87804878...
   */
  it("writes a model file the CLI solves to the hand-computed values", () => {
    const dir = newDir("bridge-export");
    const out = python(
      `
import json
from gapwatch_bridge import export_tabular_model
P = {
    0: {0: [(0.5, 1, 0.0, False), (0.3, 1, 0.0, False), (0.2, 0, 0.0, False)], 1: [(1.0, 0, 0.1, False)]},
    1: {0: [(1.0, 2, 1.0, True)], 1: [(1.0, 1, 0.05, False)]},
    2: {0: [(1.0, 2, 0.0, True)], 1: [(1.0, 2, 0.0, True)]},
}
doc = export_tabular_model(P, "chain.json", intent=lambda s, a, nxt, term: 1.0 if (s == 1 and a == 0) else 0.0,
                           gamma=0.9, start=[1.0, 0.0, 0.0], name="toy-chain", actions=["go", "wait"],
                           states=["dock", "ramp", "done"])
print(json.dumps(doc))
`,
      dir,
    );
    const doc = JSON.parse(out);
    expect(doc.format).toBe("gapwatch-mdp/1");
    expect(doc.terminal).toEqual([2]);
    expect(doc.start).toEqual({ "0": 1 });
    expect(doc.features).toEqual(["reward"]);
    expect(doc.rewards).toEqual({ default: { weights: { reward: 1 } } });
    const go0 = doc.transitions.find((t: { state: number; action: number }) => t.state === 0 && t.action === 0);
    expect(go0.outcomes).toEqual([{ next: 1, p: 0.8 }, { next: 0, p: 0.2 }]);
    expect(doc.transitions.some((t: { state: number }) => t.state === 2)).toBe(false);

    const solved = JSON.parse(cli(["solve", "--env", join(dir, "chain.json"), "--json"]));
    expect(solved.gamma).toBe(0.9);
    expect(solved.designerOptimal.designer).toBeCloseTo(1, 6);
    expect(solved.designerOptimal.intent).toBeCloseTo(0, 6);
    expect(solved.intentOptimal.intent).toBeCloseTo(0.72 / 0.82, 6);
  });

  it("gives a state entered both with and without termination an absorbing copy; custom features", () => {
    const dir = newDir("bridge-copy");
    const out = python(
      `
import json
from gapwatch_bridge import build_model_document
# state 1 is entered by "jump" with termination and by "walk" without
P = [[[(1.0, 1, 2.0, True)], [(1.0, 1, 0.0, False)]], [[(1.0, 0, 0.0, False)], [(1.0, 1, 0.0, False)]]]
doc = build_model_document(P, intent=lambda s, a, nxt, term: 0.0, gamma=0.5, start=0,
                           features={"fuel": lambda s, a, nxt, r, term: -1.0, "bonus": lambda s, a, nxt, r, term: r})
print(json.dumps(doc))
`,
      dir,
    );
    const doc = JSON.parse(out);
    expect(doc.states).toEqual(["0", "1", "1 (end)"]);
    expect(doc.terminal).toEqual([2]);
    expect(doc.transitions[0].outcomes).toEqual([{ next: 2, p: 1, features: { fuel: -1, bonus: 2 } }]);
    expect(doc.rewards.default.weights).toEqual({ fuel: 1, bonus: 1 });
    writeFileSync(join(dir, "copy.json"), JSON.stringify(doc));
    // jump pays fuel -1 + bonus 2 = 1 then ends: V(0) = max(1, -1 + 0.5 V(1)), V(1) = max(-1 + 0.5 V(0), -1 + 0.5 V(1)) -> V(0) = 1
    expect(JSON.parse(cli(["solve", "--env", join(dir, "copy.json"), "--json"])).designerOptimal.designer).toBeCloseTo(1, 6);
  });
});
