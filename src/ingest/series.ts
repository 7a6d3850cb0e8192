/**
 * Named numeric series on a step axis, the common shape every reader hands to the monitor, and the
 * choice of the designer and intent series among them. Names are data: Maps only.
 */
import { InputError } from "../errors.js";
import { didYouMean } from "../model/format/json-errors.js";
import type { ScalarPoint } from "./tf-event.js";

export interface Series {
  readonly name: string;
  readonly steps: number[];
  readonly values: number[];
}

/** Names longer than this are listed but never compared for a suggestion (edit distance is quadratic). */
export const MAX_SUGGEST_NAME = 200;
/** At most this many names are listed in an error line. */
const MAX_LISTED = 30;

/** Event-file points grouped into one series per tag, in reading order. */
export function seriesFromPoints(points: readonly ScalarPoint[]): Map<string, Series> {
  const out = new Map<string, Series>();
  for (const p of points) {
    let s = out.get(p.tag);
    if (s === undefined) {
      s = { name: p.tag, steps: [], values: [] };
      out.set(p.tag, s);
    }
    s.steps.push(p.step);
    s.values.push(p.value);
  }
  return out;
}

/** One line naming what exists, for an error message. */
export function listNames(names: readonly string[]): string {
  if (names.length === 0) return "none";
  const shown = names.slice(0, MAX_LISTED).map((n) => JSON.stringify(n.length > 80 ? `${n.slice(0, 77)}...` : n));
  return names.length > MAX_LISTED ? `${shown.join(", ")} and ${names.length - MAX_LISTED} more` : shown.join(", ");
}

/** The closest existing name to `word`, comparing only names of reasonable length. */
export function suggestName(word: string, names: readonly string[]): string | undefined {
  if (word.length > MAX_SUGGEST_NAME) return undefined;
  return didYouMean(word, names.filter((n) => n.length <= MAX_SUGGEST_NAME));
}

/**
 * The series called `name`, or an InputError ("ingest.series") on one line: what was asked for, what
 * exists, and a did-you-mean when a name is close. `what` says which role ("designer", "intent").
 */
export function pickSeries(available: ReadonlyMap<string, Series>, name: string, what: string, where: string): Series {
  const s = available.get(name);
  if (s !== undefined) return s;
  const names = [...available.keys()];
  const hint = suggestName(name, names);
  const dym = hint === undefined ? "" : ` (did you mean ${JSON.stringify(hint)}?)`;
  throw new InputError("ingest.series", `no ${what} series ${JSON.stringify(name.length > 200 ? `${name.slice(0, 197)}...` : name)}${dym}; the series here are: ${listNames(names)}`, where);
}

/** The designer and intent series by name. */
export function selectSeries(available: ReadonlyMap<string, Series>, names: { designer: string; intent: string }, where: string): { designer: Series; intent: Series } {
  return { designer: pickSeries(available, names.designer, "designer", where), intent: pickSeries(available, names.intent, "intent", where) };
}
