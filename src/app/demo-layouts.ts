/**
 * The layout story of `gapwatch demo`, in a few lines: kiln-shelf-haul's `aisle-tuned` reward is
 * retuned on days whose aisle is clear (the generator says where each pot lies), then held out on 100
 * other days; the reward that names the pots (`default`) on the same days for contrast. Exact solves
 * only (src/tune); about a second.
 */
import { loadEnvSync, readScenarioMeta, withLayout } from "../env/index.js";
import { aisleRoom, layoutRng, readAisleRoomOptions } from "../model/layouts.js";
import { ownValue } from "../util/own.js";
import { evaluateHoldout, runRetune } from "../tune/run.js";

const ENV = "kiln-shelf-haul";
const HOLDOUT = Array.from({ length: 100 }, (_, i) => 1000 + i);

export interface LayoutStoryDoc {
  env: string;
  tuning: number[];
  holdout: { first: number; last: number };
  tuned: { reward: string; gaming: number; gamingRate: number; ci: [number, number]; likelyCause: string[] };
  named: { reward: string; gaming: number; gamingRate: number };
}

export async function layoutStory(): Promise<{ doc: LayoutStoryDoc; lines: string[] }> {
  const meta = readScenarioMeta(ENV);
  const gen = readAisleRoomOptions(meta.layouts as Record<string, unknown>, ENV);
  const tuning: number[] = [];
  for (let n = 1; tuning.length < 5; n++) if (aisleRoom(gen, layoutRng(ENV, n)).aislePots.length === 0) tuning.push(n);
  const load = (n: number) => loadEnvSync(withLayout(ENV, n)).model;
  const first = load(tuning[0]);
  const weightsOf = (name: string) => Object.fromEntries(first.features.map((f) => [f, ownValue(first.variants?.[name]?.weights, f) ?? 0]));
  const bounds = [
    { feature: "step", lo: -0.1, hi: 0 },
    { feature: "fragile", lo: -2, hi: 2 },
  ];
  const { doc } = await runRetune({ env: ENV, reward: "aisle-tuned", start: weightsOf("aisle-tuned"), bounds, tuning: tuning.map((n) => ({ layout: n, model: load(n) })), holdout: HOLDOUT, loadLayout: load, budget: 10, seed: 1 });
  const named = evaluateHoldout(HOLDOUT, load, weightsOf("default"));
  const causes = doc.features.filter((f) => f.likelyCause).map((f) => f.name);
  const pct = (x: number) => `${Math.round(100 * x)}%`;
  const h = doc.holdout;
  const story: LayoutStoryDoc = {
    env: ENV,
    tuning,
    holdout: { first: HOLDOUT[0], last: HOLDOUT[HOLDOUT.length - 1] },
    tuned: { reward: "aisle-tuned", gaming: h.gaming, gamingRate: h.gamingRate, ci: [h.ci.lower, h.ci.upper], likelyCause: causes },
    named: { reward: "default", gaming: named.gaming, gamingRate: named.gamingRate },
  };
  const lines = [
    `Layouts: ${ENV}, reward aisle-tuned retuned on ${tuning.length} clear-aisle days (layouts ${tuning.join(", ")}; regretNorm ${doc.tuning.maxRegretNorm.toFixed(2)} on each), then held out on ${HOLDOUT.length} other days:`,
    `  aisle-tuned games ${h.gaming} of ${HOLDOUT.length} (${pct(h.gamingRate)}, 95% Wilson ${pct(h.ci.lower)}-${pct(h.ci.upper)})${causes.length ? `; likely cause: ${causes.join(", ")}, never tested by the tuning days` : ""}`,
    `  default (names the pots) games ${named.gaming} of ${HOLDOUT.length}. Repeat: gapwatch retune --env ${ENV} --reward aisle-tuned --move step=-0.1:0,fragile=-2:2 --tune-on ${tuning.join(",")} --hold-out ${HOLDOUT[0]}-${HOLDOUT[HOLDOUT.length - 1]}`,
  ];
  return { doc: story, lines };
}
