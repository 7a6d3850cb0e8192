/**
 * Canonical JSON: `JSON.stringify` with the keys of every plain object sorted (arrays keep their
 * order; `toJSON` and undefined-dropping as JSON.stringify does). The one copy, used for simulator
 * state keys (src/sim) and for the hashes of run ids and batch jobs (src/store, src/batch).
 */
export function canonicalJson(value: unknown): string {
  return JSON.stringify(value, (_k, v) =>
    v && typeof v === "object" && !Array.isArray(v) ? Object.fromEntries(Object.keys(v).sort().map((k) => [k, (v as Record<string, unknown>)[k]])) : v,
  );
}
