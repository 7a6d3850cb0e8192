/** The demo's shared-budget section as text: both curves' sparklines and the sentence on the two phases. */
import type { DemoPressure } from "../../app/demo-pressure.js";
import { paint } from "../io.js";

export function sharedBudgetText(p: DemoPressure, color: boolean): string {
  const w = Math.max(p.proxy.reward.length, p.full.reward.length) + 16;
  const row = (label: string, c: DemoPressure["proxy"]) => `  ${label.padEnd(w)}intent ${c.intentSpark}   designer ${c.designerSpark}\n`;
  let t = `\n${paint(color, "bold", `Shared budget (${p.env})`)}: intent and designer return of soft-optimal policies as optimization pressure grows\n`;
  t += `(left = uniform random, right = near-greedy; both scores normalized on one scale, 0 = uniform random, 1 = optimal)\n`;
  t += row(`${p.proxy.reward} (proxy)`, p.proxy);
  t += row(`${p.full.reward} (full reward)`, p.full);
  t += `${p.sentence}\n`;
  const files = [p.proxy.pressureFile, p.full.pressureFile].filter((f): f is string => f !== null);
  if (files.length) t += `The chart is in the HTML reports of the ${p.env} runs with ${p.proxy.reward} and ${p.full.reward} (pressure.json in each run directory); \`gapwatch pressure --env ${p.env} --reward ${p.proxy.reward}\` repeats it.\n`;
  else t += `\`gapwatch pressure --env ${p.env} --reward ${p.proxy.reward} --report\` draws it as a chart.\n`;
  return t;
}
