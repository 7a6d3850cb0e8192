/** The result type of every audit check. */
export type Severity = "info" | "warning" | "critical";

export const SEVERITY_RANK: Record<Severity, number> = { info: 0, warning: 1, critical: 2 };

export interface Finding {
  /** Check name, e.g. "reward-loop". */
  check: string;
  severity: Severity;
  /** Plain-language statement of what was found. */
  message: string;
  /** Numbers, states, actions and routes that back the message (JSON-serializable). */
  evidence: Record<string, unknown>;
}

/** A loop of the choice graph, as reported in the audit document. */
export interface LoopReport {
  meanDesignerPerStep: number;
  meanIntentPerStep: number;
  /** State labels, in order; `actions[i]` leads from `states[i]` to `states[i + 1]` (cyclically). */
  states: string[];
  actions: string[];
}
