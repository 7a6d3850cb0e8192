/**
 * Built-in scenarios: the folders in `envs/` with a scenario.json and a rewards/ folder. Shared code
 * never branches on a scenario's name: a scenario declares its family and the family compiler
 * (src/model/grid.ts, src/model/track.ts) turns it into a FiniteModel.
 */
import { existsSync, readdirSync, readFileSync } from "node:fs";
import { join } from "node:path";
import { InputError } from "../errors.js";
import { parseRewardFile } from "../model/format/reward-file.js";
import { compileGridScenario } from "../model/grid.js";
import type { ScenarioMeta } from "../model/scenario.js";
import { compileTrackScenario } from "../model/track.js";
import { compileBudgetScenario } from "../model/budget.js";
import type { FiniteModel, RewardVariant } from "../model/types.js";
import { envsDir } from "../util/paths.js";
import type { ScenarioEnv } from "./types.js";

export function builtinScenarioNames(): string[] {
  const dir = envsDir();
  return readdirSync(dir, { withFileTypes: true })
    .filter((d) => d.isDirectory() && existsSync(join(dir, d.name, "scenario.json")))
    .map((d) => d.name)
    .sort();
}

export function readScenarioMeta(name: string): ScenarioMeta {
  const file = join(envsDir(), name, "scenario.json");
  let meta: ScenarioMeta;
  try {
    meta = JSON.parse(readFileSync(file, "utf8")) as ScenarioMeta;
  } catch (e) {
    throw new InputError("env.scenarioFile", `cannot read scenario: ${(e as Error).message}`, file);
  }
  return { ...meta, name };
}

function loadRewardDir(dir: string): Record<string, RewardVariant> {
  const out: Record<string, RewardVariant> = {};
  if (!existsSync(dir)) return out;
  for (const f of readdirSync(dir).filter((f) => f.endsWith(".json")).sort()) {
    const file = join(dir, f);
    const v = parseRewardFile(readFileSync(file, "utf8"), file);
    out[v.name] = v;
  }
  return out;
}

export function loadScenario(name: string): ScenarioEnv {
  const dir = join(envsDir(), name);
  const meta = readScenarioMeta(name);
  const variants = loadRewardDir(join(dir, "rewards"));
  const compiled =
    meta.family === "grid"
      ? compileGridScenario(dir, meta)
      : meta.family === "track"
        ? compileTrackScenario(dir, meta)
        : meta.family === "budget"
          ? compileBudgetScenario(dir, meta)
          : (() => {
              throw new InputError("env.family", `unknown family "${String(meta.family)}", expected grid, track or budget`, join(dir, "scenario.json"));
            })();
  const model: FiniteModel = { ...compiled, variants: { ...(compiled.variants ?? {}), ...variants }, description: meta.description, source: name };
  return { model, kind: "scenario", scenario: meta, spec: name };
}
