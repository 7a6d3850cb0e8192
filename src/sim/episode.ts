/**
 * The episode wrapper every harness loop steps a simulator through. It owns what the environment must
 * not: the time limit (`horizon`, a truncation: `truncated` is set, `terminated` is not) and the
 * bookkeeping of where an episode is. It refuses, with one clear line each:
 *  - stepping before `reset` (`module.notReset`);
 *  - stepping after the episode ended, by termination or by the time limit (`module.episodeOver`);
 *  - an action that is not an integer in 0..actions.length-1 (`module.action`), before the
 *    environment is called, so a refused step consumes no random draws and changes nothing.
 * User code that throws becomes `module.threw` naming the module, the step number, state and action;
 * with `validate` (default) features and intent are checked too (`module.feature`, `module.nan`).
 */
import { InputError } from "../errors.js";
import type { Rng } from "../rng/rng.js";
import { checkNumbers, checkStepResult, guard } from "./compile.js";
import { DEFAULT_MODULE_HORIZON, type EnvDefinition } from "./define.js";
import { canonicalJson } from "../util/canonical-json.js";

export interface EpisodeStep<S> {
  state: S;
  features: Record<string, number>;
  intent: number;
  /** The environment ended the task. */
  terminated: boolean;
  /** The wrapper's time limit ended the episode (never together with `terminated`). */
  truncated: boolean;
  /** Steps taken in this episode, including this one (1-based). */
  t: number;
}

export interface EpisodeOptions {
  /** For messages: the module path or scenario name. */
  source: string;
  /** Step limit; default the definition's horizon (or 200). */
  horizon?: number;
  /** Check features and intent of every step (default true). */
  validate?: boolean;
}

/** Is `a` one of the definition's actions? */
export function isValidAction(def: EnvDefinition<unknown>, a: unknown): a is number {
  return typeof a === "number" && Number.isInteger(a) && a >= 0 && a < def.actions.length;
}

export function describeAction(def: EnvDefinition<unknown>, a: number): string {
  return isValidAction(def, a) ? def.actions[a] : String(a);
}

export function stateText(def: EnvDefinition<unknown>, s: unknown): string {
  try {
    const k = def.key ? def.key(s) : canonicalJson(s);
    return k.length > 80 ? `${k.slice(0, 77)}...` : k;
  } catch {
    return "<key() threw>";
  }
}

export class Episode<S> {
  readonly horizon: number;
  private current: S | undefined;
  private started = false;
  private steps = 0;
  private end: { how: "terminated" | "truncated"; t: number } | null = null;
  private readonly validate: boolean;

  constructor(
    readonly def: EnvDefinition<S>,
    private readonly opts: EpisodeOptions,
  ) {
    this.horizon = opts.horizon ?? def.horizon ?? DEFAULT_MODULE_HORIZON;
    this.validate = opts.validate ?? true;
  }

  get state(): S {
    if (!this.started) throw new InputError("module.notReset", "the episode has not been reset; call reset(rng) first", this.opts.source);
    return this.current as S;
  }
  get t(): number {
    return this.steps;
  }
  get done(): boolean {
    return this.end !== null;
  }
  get ended(): "terminated" | "truncated" | null {
    return this.end?.how ?? null;
  }

  reset(rng: Rng): S {
    const s = guard(this.opts.source, "reset()", () => this.def.reset(rng));
    if (s === undefined) throw new InputError("module.reset", "reset() returned undefined; it must return the start state", this.opts.source);
    this.current = s;
    this.started = true;
    this.steps = 0;
    this.end = null;
    return s;
  }

  step(action: number, rng: Rng): EpisodeStep<S> {
    const src = this.opts.source;
    if (!this.started) throw new InputError("module.notReset", "step() before reset(); call reset(rng) first", src);
    if (this.end) {
      throw new InputError("module.episodeOver", `step after the episode ended (${this.end.how} at step ${this.end.t}); call reset(rng) to start a new episode`, src);
    }
    if (!isValidAction(this.def as EnvDefinition<unknown>, action)) {
      const names = this.def.actions.map((n, i) => `${i}=${n}`).join(", ");
      throw new InputError("module.action", `invalid action ${String(action)}; expected an integer 0..${this.def.actions.length - 1} (${names})`, src);
    }
    const t = this.steps + 1;
    const what = `step ${t} (state ${stateText(this.def as EnvDefinition<unknown>, this.current)}, action ${this.def.actions[action]})`;
    const r = checkStepResult<S>(src, what, guard(src, what, () => this.def.step(this.current as S, action, rng)));
    const features = r.features;
    const intent = r.intent ?? 0;
    if (this.validate) checkNumbers(src, what, features, r.intent, this.def.features);
    this.current = r.state;
    this.steps = t;
    const terminated = r.terminated;
    const truncated = !terminated && t >= this.horizon;
    if (terminated) this.end = { how: "terminated", t };
    else if (truncated) this.end = { how: "truncated", t };
    return { state: r.state, features, intent, terminated, truncated, t };
  }
}
