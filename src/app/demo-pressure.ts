/**
 * The demo's shared-budget section: the pressure curve (src/pressure/curve.ts) of the shared-budget
 * scenario under a proxy reward that measures only some attributes (the scenario's first gaming
 * variant) and under the full reward (its first sound variant), with one sentence on the two phases
 * computed from the curves: intent rises while slack is taken up among the measured attributes, then
 * falls as the budget is pulled from the unmeasured ones; the full reward does not fall.
 *
 * With `report`, each curve's pressure.json goes into the matching demo run directory, so that run's
 * HTML report shows the chart.
 */
import { builtinScenarioNames, loadScenario, readScenarioMeta } from "../env/scenarios.js";
import { normalizeScore, pressureSparklines } from "../report/terminal.js";
import { runPressure } from "./pressure.js";

export interface BudgetCurve {
  reward: string;
  /** Normalized intent (0 = uniform random, 1 = intent optimum) at strength 0, at the peak and at the greedy end. */
  start: number;
  peak: { strength: number; intent: number };
  end: number;
  onset: number | null;
  designerSpark: string;
  intentSpark: string;
  /** pressure.json written into the demo run's directory, when reports were asked for. */
  pressureFile: string | null;
}

export interface DemoPressure {
  env: string;
  proxy: BudgetCurve;
  full: BudgetCurve;
  sentence: string;
}

/** A normalized change smaller than this is "flat" in the sentence (2% of the random-to-optimal range; our choice). */
const FLAT = 0.02;

const f2 = (x: number) => x.toFixed(2);

/** The sentence on the two phases, from the two curves' numbers. Pure. */
export function twoPhaseSentence(proxy: BudgetCurve, full: BudgetCurve): string {
  const rose = proxy.peak.intent - proxy.start > FLAT;
  const fell = proxy.peak.intent - proxy.end > FLAT;
  const fullFell = full.peak.intent - full.end > FLAT;
  const fullPart = fullFell
    ? `under the full reward ${full.reward} intent falls too, from ${f2(full.peak.intent)} to ${f2(full.end)}`
    : `under the full reward ${full.reward}, which measures every attribute, intent does not fall: it ends at ${f2(full.end)}`;
  if (rose && fell)
    return (
      `Optimizing ${proxy.reward} harder first raises intent from ${f2(proxy.start)} to ${f2(proxy.peak.intent)} (at strength ${proxy.peak.strength.toPrecision(3)}) ` +
      `while slack in the shared budget is taken up among the attributes it measures, then lowers it to ${f2(proxy.end)} as the budget is pulled from the attributes it does not measure; ${fullPart}.`
    );
  return `Under ${proxy.reward} intent goes from ${f2(proxy.start)} to ${f2(proxy.end)} (peak ${f2(proxy.peak.intent)} at strength ${proxy.peak.strength.toPrecision(3)}): ${
    rose ? "it rises but does not fall back" : "it does not rise first"
  }, so this curve does not show the two phases; ${fullPart}.`;
}

async function budgetCurve(env: string, reward: string, runDir: string | undefined): Promise<BudgetCurve> {
  const { curve, written } = await runPressure({ env, reward, runDir });
  const norm = (v: number) => normalizeScore(v, curve.scale.intent);
  const sp = pressureSparklines(curve);
  const pts = curve.points;
  return {
    reward,
    start: norm(pts[0].intent),
    peak: { strength: curve.peak.strength, intent: norm(curve.peak.intent) },
    end: norm(pts[pts.length - 1].intent),
    onset: curve.onset,
    designerSpark: sp.designer,
    intentSpark: sp.intent,
    pressureFile: written.documents[0] ?? null,
  };
}

/**
 * The section: the first built-in scenario of the shared-budget family, its first gaming (proxy) and
 * first sound (full) variant; null when there is no such scenario. `runs` are the demo's runs: with
 * `report`, the curves' pressure.json files go into the matching run directories.
 */
export async function demoSharedBudget(opts: { runs?: { env: string; reward: string; runDir: string }[]; report?: boolean } = {}): Promise<DemoPressure | null> {
  const env = builtinScenarioNames().find((n) => loadScenario(n).scenario.family === "budget");
  if (!env) return null;
  const meta = readScenarioMeta(env);
  const proxyName = meta.gaming[0];
  const fullName = meta.sound[0];
  if (!proxyName || !fullName) return null;
  const dirOf = (reward: string) => (opts.report ? opts.runs?.find((r) => r.env === env && r.reward === reward)?.runDir : undefined);
  const proxy = await budgetCurve(env, proxyName, dirOf(proxyName));
  const full = await budgetCurve(env, fullName, dirOf(fullName));
  return { env, proxy, full, sentence: twoPhaseSentence(proxy, full) };
}

/** The section as `demo --json` prints it (without the sparklines). */
export function sharedBudgetDoc(p: DemoPressure) {
  const strip = ({ designerSpark: _d, intentSpark: _i, ...rest }: BudgetCurve) => rest;
  return { env: p.env, proxy: strip(p.proxy), full: strip(p.full), sentence: p.sentence };
}
