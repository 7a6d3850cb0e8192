/**
 * Step-size and exploration schedules: a schedule is data, `scheduleValue(spec, n)` is the pure function
 * that evaluates it at a counter value `n >= 0` (environment steps, episodes or visits of a pair,
 * whatever the learner's config says the schedule counts).
 *
 *  - constant:     value
 *  - linear:       start + (end - start) * min(n, steps) / steps           (then stays at `end`)
 *  - exponential:  end + (start - end) * decay^n                            (decay in (0, 1])
 *  - inverse:      start / (1 + n / scale)^power                            (1/n-style; power in (0.5, 1]
 *                  meets the Robbins-Monro conditions, Sutton & Barto 2018 eq. 2.7; power 1 and
 *                  scale 1 with start 1 is the sample average 1/(n+1))
 *
 * Every schedule is monotone in n (non-increasing when start >= end) and stays within
 * [min(start, end), max(start, end)] (inverse: within (0, start]).
 */
import { InputError } from "../src/errors.js";

export type Schedule =
  | { kind: "constant"; value: number }
  | { kind: "linear"; start: number; end: number; steps: number }
  | { kind: "exponential"; start: number; end: number; decay: number }
  | { kind: "inverse"; start: number; scale: number; power: number };

/** A number is shorthand for a constant schedule. */
export type ScheduleSpec = Schedule | number;

export function constant(value: number): Schedule {
  return { kind: "constant", value };
}

export function toSchedule(spec: ScheduleSpec): Schedule {
  return typeof spec === "number" ? { kind: "constant", value: spec } : spec;
}

/** The schedule's value at counter n (n >= 0). Pure. */
export function scheduleValue(s: Schedule, n: number): number {
  switch (s.kind) {
    case "constant":
      return s.value;
    case "linear":
      return n >= s.steps ? s.end : s.start + ((s.end - s.start) * n) / s.steps;
    case "exponential":
      return s.end + (s.start - s.end) * Math.pow(s.decay, n);
    case "inverse":
      return s.start / Math.pow(1 + n / s.scale, s.power);
  }
}

/** The constant value of a schedule, or undefined when it varies. */
export function constantValue(s: Schedule): number | undefined {
  if (s.kind === "constant") return s.value;
  if (s.kind === "linear" && s.start === s.end) return s.start;
  if (s.kind === "exponential" && (s.start === s.end || s.decay === 1)) return s.start;
  return undefined;
}

/**
 * Validate a schedule whose values must lie in [lo, hi] (e.g. epsilon in [0, 1], alpha in (0, 1]).
 * Throws `config.schedule` naming `where` (a config key such as "learner.alpha").
 */
export function checkSchedule(spec: ScheduleSpec, lo: number, hi: number, where: string, openLow = false): Schedule {
  const s = toSchedule(spec);
  const inRange = (v: number) => Number.isFinite(v) && (openLow ? v > lo : v >= lo) && v <= hi;
  const range = `${openLow ? "(" : "["}${lo}, ${hi}]`;
  const fail = (msg: string): never => {
    throw new InputError("config.schedule", `${msg}; fix the schedule`, where);
  };
  switch (s.kind) {
    case "constant":
      if (!inRange(s.value)) fail(`value ${s.value} is outside ${range}`);
      break;
    case "linear":
      if (!inRange(s.start) || !inRange(s.end)) fail(`start ${s.start} / end ${s.end} must lie in ${range}`);
      if (!(Number.isFinite(s.steps) && s.steps > 0)) fail(`steps must be a positive number, got ${s.steps}`);
      break;
    case "exponential":
      if (!inRange(s.start) || !inRange(s.end)) fail(`start ${s.start} / end ${s.end} must lie in ${range}`);
      if (!(s.decay > 0 && s.decay <= 1)) fail(`decay must be in (0, 1], got ${s.decay}`);
      break;
    case "inverse":
      if (!inRange(s.start)) fail(`start ${s.start} is outside ${range}`);
      if (!(Number.isFinite(s.scale) && s.scale > 0)) fail(`scale must be a positive number, got ${s.scale}`);
      if (!(s.power > 0 && s.power <= 1)) fail(`power must be in (0, 1], got ${s.power}`);
      break;
    default:
      fail(`unknown schedule kind ${JSON.stringify((s as { kind: unknown }).kind)} (expected constant, linear, exponential or inverse)`);
  }
  return s;
}
