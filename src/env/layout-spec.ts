/**
 * How a layout travels with `--env`: the CLI's `--layout N` is folded into the environment spec as
 * `<env>#<N>` (layout 0 is the spec itself, unchanged), so everything that records the env spec (run
 * ids, manifests, the runs index, job ids) records the layout without a field of its own.
 * `--layouts A-B` names the inclusive range A..B.
 */
import { InputError } from "../errors.js";

/** Largest layout number accepted (keeps specs and ranges small). */
export const MAX_LAYOUT = 1_000_000;
/** Most layouts one range may name. */
export const MAX_LAYOUT_RANGE = 10_000;

/** The spec without its layout suffix, and the layout (0 when none). */
export function splitLayout(spec: string): { base: string; layout: number } {
  const m = /^(.*)#(\d{1,7})$/s.exec(spec);
  if (!m || m[1] === "") return { base: spec, layout: 0 };
  return { base: m[1], layout: Number(m[2]) };
}

/** The spec of layout `layout` of `base` (`base` itself for layout 0). */
export function withLayout(base: string, layout: number): string {
  return layout === 0 ? base : `${base}#${layout}`;
}

/** `--layout N`: a non-negative integer. */
export function parseLayout(text: string, where = "--layout"): number {
  if (!/^\d{1,7}$/.test(text.trim()) || Number(text) > MAX_LAYOUT) {
    throw new InputError("config.layout", `a layout is an integer in 0..${MAX_LAYOUT}, got ${JSON.stringify(text)}`, where);
  }
  return Number(text.trim());
}

/** `--layouts A-B` (inclusive; `N` alone is one layout); a comma list of ranges is their union in order. */
export function parseLayoutRange(text: string, where = "--layouts"): number[] {
  const out: number[] = [];
  const seen = new Set<number>();
  for (const part of text.split(",")) {
    const m = /^\s*(\d{1,7})\s*(?:-\s*(\d{1,7})\s*)?$/.exec(part);
    if (!m) throw new InputError("config.layouts", `layouts are a range A-B or a comma list of ranges, e.g. 1-20 or 0,5-9; got ${JSON.stringify(part)}`, where);
    const a = Number(m[1]);
    const b = m[2] === undefined ? a : Number(m[2]);
    if (b < a) throw new InputError("config.layouts", `range ${a}-${b} ends before it starts`, where);
    if (b > MAX_LAYOUT) throw new InputError("config.layouts", `a layout is at most ${MAX_LAYOUT}`, where);
    for (let n = a; n <= b; n++) {
      if (seen.has(n)) continue;
      seen.add(n);
      out.push(n);
      if (out.length > MAX_LAYOUT_RANGE) throw new InputError("config.layouts", `at most ${MAX_LAYOUT_RANGE} layouts at once`, where);
    }
  }
  return out;
}
