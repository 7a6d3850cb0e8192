/**
 * Built-in scenarios: the folders in `envs/` with a scenario.json and a rewards/ folder. Shared code
 * never branches on a scenario's name: a scenario declares its family and the family compiler
 * (src/model/grid.ts, src/model/track.ts) turns it into a FiniteModel.
 */
import { existsSync, readdirSync, readFileSync } from "node:fs";
import { join } from "node:path";
import { InputError } from "../errors.js";
import { parseRewardFile } from "../model/format/reward-file.js";
import { compileGrid, compileGridScenario, readGridConfig } from "../model/grid.js";
import { aisleRoom, budgetLayout, layoutRng, readAisleRoomOptions, shuffleGrid, trackLayout } from "../model/layouts.js";
import type { ScenarioMeta } from "../model/scenario.js";
import { compileTrack, compileTrackScenario } from "../model/track.js";
import { compileBudget, compileBudgetScenario } from "../model/budget.js";
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

/**
 * Compile layout `layout` (>= 1) of a scenario: see src/model/layouts.ts for the generators. The
 * model is named `<scenario>#<layout>` so messages and reports say which layout they are about.
 */
export function compileScenarioLayout(dir: string, meta: ScenarioMeta, layout: number): FiniteModel {
  const where = join(dir, "scenario.json");
  const rng = layoutRng(meta.name, layout);
  const name = `${meta.name}#${layout}`;
  if (meta.family === "grid") {
    const config = { ...readGridConfig({ ...meta }, where), name };
    return compileGrid(config, gridLayoutLines(dir, meta, layout).join("\n"), `${where} layout ${layout}`);
  }
  if (meta.family === "track") {
    const m = meta as unknown as { length: number; vmax: number; gates: number[] };
    return compileTrack({ ...meta, name, ...trackLayout(m, rng) }, `${where} layout ${layout}`);
  }
  if (meta.family === "budget") {
    const m = meta as unknown as { budget: number; horizon: number };
    return compileBudget({ ...meta, name, ...budgetLayout(m, rng) }, `${where} layout ${layout}`);
  }
  throw new InputError("env.family", `unknown family "${String(meta.family)}", expected grid, track or budget`, where);
}

/** The map lines of layout `layout` of a grid scenario (layout 0: its map file). */
export function gridLayoutLines(dir: string, meta: ScenarioMeta, layout: number): string[] {
  const where = join(dir, "scenario.json");
  const rng = layoutRng(meta.name, layout);
  const gen = meta.layouts as Record<string, unknown> | undefined;
  if (layout > 0 && gen !== undefined && gen.generator === "aisle-room") return aisleRoom(readAisleRoomOptions(gen, where), rng, where).lines;
  if (gen !== undefined && gen.generator !== "shuffle" && gen.generator !== "aisle-room") {
    throw new InputError("env.layouts", `unknown layout generator ${JSON.stringify(gen.generator)}; known: shuffle, aisle-room`, `${where} $.layouts.generator`);
  }
  const mapFile = join(dir, String(meta.map));
  let text: string;
  try {
    text = readFileSync(mapFile, "utf8");
  } catch (e) {
    throw new InputError("grid.mapFile", `cannot read the map file: ${(e as Error).message}`, mapFile);
  }
  const lines = text.replace(/\r\n?/g, "\n").split("\n").filter((l, i, a) => l !== "" || i < a.length - 1);
  return layout === 0 ? lines : shuffleGrid(lines, rng, `${where} layout ${layout}`);
}

/** Load a built-in scenario; `layout` >= 1 generates that layout of it (0: the scenario as written). */
export function loadScenario(name: string, layout = 0): ScenarioEnv {
  const dir = join(envsDir(), name);
  const meta = readScenarioMeta(name);
  const variants = loadRewardDir(join(dir, "rewards"));
  const compiled =
    layout > 0
      ? compileScenarioLayout(dir, meta, layout)
      : meta.family === "grid"
      ? compileGridScenario(dir, meta)
      : meta.family === "track"
        ? compileTrackScenario(dir, meta)
        : meta.family === "budget"
          ? compileBudgetScenario(dir, meta)
          : (() => {
              throw new InputError("env.family", `unknown family "${String(meta.family)}", expected grid, track or budget`, join(dir, "scenario.json"));
            })();
  const spec = layout > 0 ? `${name}#${layout}` : name;
  const model: FiniteModel = { ...compiled, variants: { ...(compiled.variants ?? {}), ...variants }, description: meta.description, source: spec };
  return { model, kind: "scenario", scenario: meta, spec };
}
