/** `gapwatch check`: property-test an environment through the simulator contract. */
import { runCheck, type CheckOptions, type CheckReport } from "../check/run.js";

export interface CheckConfig extends CheckOptions {
  env: string;
}

/** The JSON document of `gapwatch check`. */
export function checkDocument(r: CheckReport) {
  return {
    env: r.env,
    seed: r.seed,
    runs: r.runs,
    properties: r.properties.map((p) => ({
      name: p.name,
      status: p.status,
      runs: p.runs,
      ...(p.note ? { note: p.note } : {}),
      ...(p.counterexample ? { counterexample: p.counterexample } : {}),
      ...(p.replay ? { replay: p.replay, path: p.path } : {}),
    })),
    passed: r.passed,
  };
}

/** Check; `doc` is what `check --json` prints, `report` the full report. */
export async function runCheckCommand(cfg: CheckConfig) {
  const { env, ...opts } = cfg;
  const report = await runCheck(env, opts);
  return { report, doc: checkDocument(report) };
}
