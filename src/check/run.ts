/**
 * `gapwatch check` as a function: load the environment, run every property (or one), and return
 * the report document. Pure apart from loading the environment.
 */
import { InputError } from "../errors.js";
import { shellQuote as quote } from "../util/shell.js";
import { loadEnv } from "../env/resolve.js";
import { MAX_CHECK_HORIZON, stepLimitOf, type PropertyResult } from "./harness.js";
import { propertiesFor } from "./property-list.js";
import { subjectOf, type CheckSubject } from "./subject.js";

export interface CheckOptions {
  runs?: number;
  seed?: number;
  /** Run only this property (required with `replay`). */
  property?: string;
  /** fast-check path of a counterexample to replay. */
  replay?: string;
  maxStates?: number;
  /** Command prefix of the printed replay command (default "gapwatch"; the CLI passes how it was started). */
  invocation?: string;
  /** Per-episode step cap of the padded episodes (default DEFAULT_CHECK_STEPS). */
  maxSteps?: number;
}

export interface CheckReport {
  env: string;
  seed: number;
  runs: number;
  properties: (PropertyResult & { replay?: string })[];
  passed: boolean;
  /** The one property that ran (`--property`), else undefined: all of them ran. */
  only?: string;
}

export const DEFAULT_CHECK_RUNS = 100;
export const DEFAULT_CHECK_SEED = 1;

export function checkSubject(subject: CheckSubject, opts: CheckOptions = {}): CheckReport {
  const runs = opts.runs ?? DEFAULT_CHECK_RUNS;
  const seed = opts.seed ?? DEFAULT_CHECK_SEED;
  const limit = stepLimitOf(subject);
  if (!(limit <= MAX_CHECK_HORIZON)) {
    throw new InputError("check.horizon", `the step limit (horizon) ${limit} of ${subject.source} is beyond what check plays (at most ${MAX_CHECK_HORIZON}); set a smaller horizon`, subject.source);
  }
  let props = propertiesFor(subject);
  if (opts.replay !== undefined && opts.property === undefined) throw new InputError("cli.replay", "--replay needs --property <name> (the property whose counterexample it replays)", "--replay");
  if (opts.property !== undefined) {
    const one = props.filter((p) => p.name === opts.property);
    if (one.length === 0) throw new InputError("cli.property", `unknown property "${opts.property}"; known: ${props.map((p) => p.name).join(", ")}`, "--property");
    props = one;
  }
  const results = props.map((p) => {
    const r = p.run(subject, { runs, seed, path: opts.replay, maxSteps: opts.maxSteps });
    const replay =
      r.status === "failed" && r.path !== undefined
        ? `${opts.invocation ?? "gapwatch"} check --env ${quote(subject.spec)} --runs ${runs} --seed ${seed}${opts.maxSteps === undefined ? "" : ` --max-steps ${opts.maxSteps}`} --property ${quote(p.name)} --replay ${quote(r.path)}`
        : undefined;
    return replay ? { ...r, replay } : r;
  });
  return { env: subject.spec, seed, runs, properties: results, passed: results.every((r) => r.status !== "failed"), only: opts.property };
}

export async function runCheck(spec: string, opts: CheckOptions = {}): Promise<CheckReport> {
  return checkSubject(subjectOf(await loadEnv(spec, { maxStates: opts.maxStates }), spec), opts);
}
