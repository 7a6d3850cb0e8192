/**
 * The track family: a vehicle on a ring (loop) of `length` positions, compiled to a FiniteModel.
 *
 * Dynamics (one step):
 *  - actions, in index order: "accelerate" (+1), "coast" (0), "brake" (-1: slows down, and once stopped
 *    starts moving backward);
 *  - with probability `slip` an accelerate/brake command has no effect and acts as coast;
 *  - v' = clamp(v + a, -vmax, vmax), pos' = (pos + v') mod length (v' is applied before moving).
 *
 * Gates: a gate at `g` sits on the boundary between positions g-1 and g (mod length). Moving forward
 * from p to p + v' (unwrapped) crosses it when p < g <= p + v'; moving backward when p + v' < g <= p.
 * Because vmax < length, one step crosses each gate at most once.
 *
 * State = (pos, vel, next): `next` is the index in `gates` of the gate expected next in the intended
 * (forward) direction. Crossing that gate forward is a checkpoint and advances `next` (cyclically). The
 * gate sequence starts at the first gate ahead of the start position, so the checkpoint at the gate just
 * behind the start (the last of the sequence) completes a lap. Backward crossings never move `next` back, so crossing a
 * gate backward and forward again is not a second checkpoint.
 *
 * Service: a station at a gate can only do its work on the vehicle while it passes slowly. A checkpoint
 * made at speed |v'| <= `serveSpeed` is a `service`; a faster one still advances `next` (the station is
 * passed, unserved, for this lap). Default serveSpeed = vmax: every checkpoint is a service.
 *
 * Events per transition (the vocabulary of `features` and `intentWeights` in scenario.json):
 *   step          1 on every transition
 *   gate          number of gate crossings, either direction
 *   gateForward   forward crossings
 *   gateBackward  backward crossings
 *   checkpoint    forward crossings of the expected next gate (in sequence order)
 *   lap           checkpoints at the last gate of the sequence (the one just behind the start)
 *   service       checkpoints made at speed |v'| <= serveSpeed
 *   actuation     1 when the applied acceleration is non-zero (after slip)
 *   reverse       1 when the vehicle goes into reverse: v >= 0 and v' < 0
 *   distance      |v'|, positions travelled
 *
 * No terminal states: the task is discounted with an infinite horizon; `horizon` only truncates sampled
 * episodes. Pure: `compileTrack` does no I/O; `compileTrackScenario` only names the file for messages.
 */
import { join } from "node:path";
import { InputError } from "../errors.js";
import { ModelBuilder } from "./builder.js";
import type { ScenarioMeta } from "./scenario.js";
import type { FiniteModel } from "./types.js";

export const TRACK_ACTIONS = ["accelerate", "coast", "brake"] as const;
/** Acceleration of each action, by action index. */
export const TRACK_ACCEL: readonly number[] = [1, 0, -1];

export const TRACK_EVENTS = [
  "step",
  "gate",
  "gateForward",
  "gateBackward",
  "checkpoint",
  "lap",
  "actuation",
  "reverse",
  "distance",
  "service",
] as const;
export type TrackEvent = (typeof TRACK_EVENTS)[number];

const EV = {
  step: 0,
  gate: 1,
  gateForward: 2,
  gateBackward: 3,
  checkpoint: 4,
  lap: 5,
  actuation: 6,
  reverse: 7,
  distance: 8,
  service: 9,
} as const satisfies Record<TrackEvent, number>;

/** The family-specific keys of a track scenario.json. */
export interface TrackConfig {
  /** Model name (defaults to "track"). */
  name?: string;
  /** Number of positions around the loop (>= 2). */
  length: number;
  /** Largest speed in either direction (1 <= vmax < length). */
  vmax: number;
  /** Gate positions, strictly increasing, each in 0..length-1; their order is the intended sequence. */
  gates: number[];
  /** Probability that an accelerate/brake command acts as coast, in [0, 1). Default 0. */
  slip?: number;
  /** Start position (velocity 0). Default 0. */
  start?: number;
  /** Highest speed at which a checkpoint counts as a service, 1..vmax. Default vmax. */
  serveSpeed?: number;
  gamma: number;
  horizon: number;
  /** Designer-visible event names, in feature order. */
  features: string[];
  /** Held-out intent: weight per event name (any event, visible or not). */
  intentWeights: Record<string, number>;
  description?: string;
}

/** A validated config with defaults filled in. */
export interface TrackSpec {
  name: string;
  length: number;
  vmax: number;
  gates: number[];
  slip: number;
  start: number;
  serveSpeed: number;
  gamma: number;
  horizon: number;
  features: TrackEvent[];
  intentWeights: Partial<Record<TrackEvent, number>>;
}

function fail(key: string, message: string, source: string): never {
  throw new InputError(`track.${key.replace(/[[.].*$/, "")}`, message, `${source} $.${key}`);
}

function isInt(x: unknown): x is number {
  return typeof x === "number" && Number.isInteger(x);
}

/** Validate a raw config (parsed JSON). Throws InputError "track.<key>" naming `source` and the key. */
export function validateTrackConfig(config: unknown, source: string): TrackSpec {
  if (typeof config !== "object" || config === null || Array.isArray(config)) {
    throw new InputError("track.config", "a track scenario must be a JSON object", source);
  }
  const c = config as Record<string, unknown>;
  const length = c.length;
  if (!isInt(length) || length < 2) fail("length", `length must be an integer >= 2 (positions around the loop), got ${JSON.stringify(length)}`, source);
  const vmax = c.vmax;
  if (!isInt(vmax) || vmax < 1 || vmax >= length) {
    fail("vmax", `vmax must be an integer with 1 <= vmax < length (${length}), got ${JSON.stringify(vmax)}`, source);
  }
  const gates = c.gates;
  if (!Array.isArray(gates) || gates.length < 1) fail("gates", `gates must be a non-empty array of positions 0..${length - 1}`, source);
  gates.forEach((g, i) => {
    if (!isInt(g) || g < 0 || g >= length) fail(`gates[${i}]`, `gate position must be an integer in 0..${length - 1}, got ${JSON.stringify(g)}`, source);
    if (i > 0 && g <= (gates[i - 1] as number)) {
      fail(`gates[${i}]`, `gate positions must be strictly increasing (the intended order), got ${g} after ${JSON.stringify(gates[i - 1])}`, source);
    }
  });
  const slip = c.slip ?? 0;
  if (typeof slip !== "number" || !(slip >= 0 && slip < 1)) fail("slip", `slip must be a probability in [0, 1), got ${JSON.stringify(c.slip)}`, source);
  const start = c.start ?? 0;
  if (!isInt(start) || start < 0 || start >= length) fail("start", `start must be a position in 0..${length - 1}, got ${JSON.stringify(c.start)}`, source);
  const serveSpeed = c.serveSpeed ?? vmax;
  if (!isInt(serveSpeed) || serveSpeed < 1 || serveSpeed > vmax) {
    fail("serveSpeed", `serveSpeed must be an integer in 1..vmax (${vmax}), got ${JSON.stringify(c.serveSpeed)}`, source);
  }
  const gamma = c.gamma;
  if (typeof gamma !== "number" || !(gamma > 0 && gamma < 1)) {
    fail("gamma", `gamma must be in (0, 1): a track has no terminal states, so the return is discounted; got ${JSON.stringify(gamma)}`, source);
  }
  const horizon = c.horizon;
  if (!isInt(horizon) || horizon < 1) fail("horizon", `horizon must be a positive integer (sampling truncation), got ${JSON.stringify(horizon)}`, source);
  const known = TRACK_EVENTS as readonly string[];
  const features = c.features;
  if (!Array.isArray(features) || features.length < 1) fail("features", `features must be a non-empty array of event names (${known.join(", ")})`, source);
  const seen = new Set<string>();
  features.forEach((f, i) => {
    if (typeof f !== "string" || !known.includes(f)) fail(`features[${i}]`, `unknown event ${JSON.stringify(f)}; known events: ${known.join(", ")}`, source);
    if (seen.has(f)) fail(`features[${i}]`, `event "${f}" is listed twice`, source);
    seen.add(f);
  });
  const iw = c.intentWeights;
  if (typeof iw !== "object" || iw === null || Array.isArray(iw)) fail("intentWeights", `intentWeights must be an object mapping event names to numbers`, source);
  const intentWeights: Partial<Record<TrackEvent, number>> = {};
  for (const [k, w] of Object.entries(iw as Record<string, unknown>)) {
    if (!known.includes(k)) fail(`intentWeights.${k}`, `unknown event "${k}"; known events: ${known.join(", ")}`, source);
    if (typeof w !== "number" || !Number.isFinite(w)) fail(`intentWeights.${k}`, `weight must be a finite number, got ${JSON.stringify(w)}`, source);
    intentWeights[k as TrackEvent] = w;
  }
  return {
    name: typeof c.name === "string" && c.name ? c.name : "track",
    length,
    vmax,
    gates: gates as number[],
    slip,
    start,
    serveSpeed,
    gamma,
    horizon,
    features: features as TrackEvent[],
    intentWeights,
  };
}

/** Number of states of a track: length * (2 vmax + 1) * gates. */
export function trackStateCount(spec: Pick<TrackSpec, "length" | "vmax" | "gates">): number {
  return spec.length * (2 * spec.vmax + 1) * spec.gates.length;
}

/** State index of (pos, vel, next). */
export function trackStateIndex(spec: Pick<TrackSpec, "length" | "vmax">, pos: number, vel: number, next: number): number {
  const nV = 2 * spec.vmax + 1;
  return (next * spec.length + pos) * nV + (vel + spec.vmax);
}

/** Index of the first gate crossed moving forward from `pos` (the expected gate at the start). */
export function firstGateAhead(gates: readonly number[], pos: number): number {
  for (let i = 0; i < gates.length; i++) if (gates[i] > pos) return i;
  return 0;
}

/** Result of one deterministic step, written into a caller-owned object. */
export interface TrackStep {
  pos: number;
  vel: number;
  next: number;
  /** Event counts, indexed like TRACK_EVENTS. */
  events: Float64Array;
}

export function newTrackStep(): TrackStep {
  return { pos: 0, vel: 0, next: 0, events: new Float64Array(TRACK_EVENTS.length) };
}

/** What one step needs to know about a track, precomputed once. */
export interface TrackGeometry {
  length: number;
  vmax: number;
  gates: readonly number[];
  /** Index of the gate at each position, or -1. */
  gateAt: Int32Array;
  /** Index of the gate whose checkpoint completes a lap: the last gate of the sequence that starts at the first gate ahead of the start. */
  lapGate: number;
  /** Highest speed at which a checkpoint is a service. */
  serveSpeed: number;
}

export function trackGeometry(spec: Pick<TrackSpec, "length" | "vmax" | "gates" | "start"> & { serveSpeed?: number }): TrackGeometry {
  const gateAt = new Int32Array(spec.length).fill(-1);
  spec.gates.forEach((g, i) => (gateAt[g] = i));
  const G = spec.gates.length;
  return { length: spec.length, vmax: spec.vmax, gates: spec.gates, gateAt, lapGate: (firstGateAhead(spec.gates, spec.start) + G - 1) % G, serveSpeed: spec.serveSpeed ?? spec.vmax };
}

/**
 * One deterministic step from (pos, vel, next) with applied acceleration `accel` (already after slip).
 * Writes into `out`; allocates nothing.
 */
export function trackStep(geo: TrackGeometry, pos: number, vel: number, next: number, accel: number, out: TrackStep): TrackStep {
  const L = geo.length;
  const G = geo.gates.length;
  const { gateAt, lapGate } = geo;
  const e = out.events;
  e.fill(0);
  let v = vel + accel;
  if (v > geo.vmax) v = geo.vmax;
  else if (v < -geo.vmax) v = -geo.vmax;
  let idx = next;
  e[EV.step] = 1;
  e[EV.actuation] = accel !== 0 ? 1 : 0;
  e[EV.reverse] = vel >= 0 && v < 0 ? 1 : 0;
  e[EV.distance] = Math.abs(v);
  if (v > 0) {
    // Arriving at q (unwrapped p+1..p+v) crosses the gate at q mod L, in travel order.
    for (let k = 1; k <= v; k++) {
      const gi = gateAt[(pos + k) % L];
      if (gi < 0) continue;
      e[EV.gate]++;
      e[EV.gateForward]++;
      if (gi === idx) {
        e[EV.checkpoint]++;
        if (v <= geo.serveSpeed) e[EV.service]++;
        if (idx === lapGate) e[EV.lap]++;
        idx = (idx + 1) % G;
      }
    }
  } else if (v < 0) {
    // Leaving q (unwrapped p, p-1, ..., p+v+1) backward crosses the gate at q mod L.
    for (let k = 0; k < -v; k++) {
      const gi = gateAt[(((pos - k) % L) + L) % L];
      if (gi < 0) continue;
      e[EV.gate]++;
      e[EV.gateBackward]++;
    }
  }
  out.pos = (((pos + v) % L) + L) % L;
  out.vel = v;
  out.next = idx;
  return out;
}

/** Forward distance from `pos` to the crossing of the gate at `g`, in 1..length. */
function forwardDistance(length: number, pos: number, g: number): number {
  return ((((g - pos - 1) % length) + length) % length) + 1;
}

/** Compile a track config (parsed scenario.json or a test literal). `source` names the file for errors. */
export function compileTrack(config: TrackConfig | Record<string, unknown>, source: string): FiniteModel {
  const spec = validateTrackConfig(config, source);
  const { length: L, vmax, gates, slip } = spec;
  const G = gates.length;
  const nS = trackStateCount(spec);
  const nA = TRACK_ACTIONS.length;
  const geo = trackGeometry(spec);

  const featIdx = spec.features.map((f) => EV[f]);
  const iw = new Float64Array(TRACK_EVENTS.length);
  for (const [k, w] of Object.entries(spec.intentWeights)) iw[EV[k as TrackEvent]] = w as number;

  const posOf = new Int32Array(nS);
  const velOf = new Int32Array(nS);
  const nextOf = new Int32Array(nS);
  const labels: string[] = new Array(nS);
  for (let idx = 0; idx < G; idx++) {
    for (let p = 0; p < L; p++) {
      for (let v = -vmax; v <= vmax; v++) {
        const s = trackStateIndex(spec, p, v, idx);
        posOf[s] = p;
        velOf[s] = v;
        nextOf[s] = idx;
        labels[s] = `p${p} v${v > 0 ? "+" : ""}${v} next${idx}`;
      }
    }
  }

  const b = new ModelBuilder({
    name: spec.name,
    nStates: nS,
    actions: TRACK_ACTIONS,
    features: spec.features,
    gamma: spec.gamma,
    horizon: spec.horizon,
    stateLabels: labels,
    source,
  });
  const out = newTrackStep();
  const fv = new Float64Array(featIdx.length);
  const addStep = (s: number, a: number, accel: number, p: number): void => {
    trackStep(geo, posOf[s], velOf[s], nextOf[s], accel, out);
    for (let f = 0; f < featIdx.length; f++) fv[f] = out.events[featIdx[f]];
    let intent = 0;
    for (let e = 0; e < iw.length; e++) if (iw[e] !== 0) intent += iw[e] * out.events[e];
    b.addOutcome(s, a, trackStateIndex(spec, out.pos, out.vel, out.next), p, fv, intent);
  };
  for (let s = 0; s < nS; s++) {
    for (let a = 0; a < nA; a++) {
      const accel = TRACK_ACCEL[a];
      if (accel === 0 || slip === 0) {
        addStep(s, a, accel, 1);
      } else {
        addStep(s, a, accel, 1 - slip);
        addStep(s, a, 0, slip);
      }
    }
  }
  b.setStart(trackStateIndex(spec, spec.start, 0, firstGateAhead(gates, spec.start)), 1);

  // lapProgress: 1 - d/L, with d the forward distance to the crossing of the expected gate.
  const lapProgress = new Float64Array(nS);
  const obs = new Float64Array(nS * 3);
  for (let s = 0; s < nS; s++) {
    lapProgress[s] = 1 - forwardDistance(L, posOf[s], gates[nextOf[s]]) / L;
    obs[s * 3] = posOf[s] / L;
    obs[s * 3 + 1] = velOf[s] / vmax;
    obs[s * 3 + 2] = nextOf[s] / G;
  }
  b.setPotential("lapProgress", lapProgress);
  b.setObservations(["pos/length", "vel/vmax", "next/gates"], obs);
  b.setLayout({ kind: "track", length: L, gates: [...gates], posOf, velOf });
  return b.build();
}

/** Compile envs/<name>/scenario.json (already parsed into `meta`) of family "track". */
export function compileTrackScenario(dir: string, meta: ScenarioMeta): FiniteModel {
  const file = join(dir, "scenario.json");
  return compileTrack({ ...meta, name: meta.name }, file);
}
