/**
 * Escaping for the HTML report. Every string that comes from a user (environment, reward and feature
 * names, alert messages, manifest values, audit evidence) passes through one of these before it is
 * written into the page. Pure.
 */

const HTML: Record<string, string> = { "&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;", "'": "&#39;" };

// Control characters other than tab and line breaks, and Unicode direction controls (an override can
// make a name read backwards on the page). Shown as U+FFFD, the replacement character.
// eslint-disable-next-line no-control-regex
const HIDDEN = /[\u0000-\u0008\u000b\u000c\u000e-\u001f\u007f-\u009f\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069]/g;

/**
 * Text or attribute value: escapes & < > " ' (safe in element content and in quoted attributes);
 * control and direction characters become U+FFFD.
 */
export function esc(value: unknown): string {
  return hideControls(String(value ?? "")).replace(/[&<>"']/g, (c) => HTML[c]);
}

/** Markup already escaped (e.g. a rendered chart's SVG) with control and direction characters shown as U+FFFD. */
export function hideControls(markup: string): string {
  return markup.replace(HIDDEN, "\ufffd");
}

/**
 * JSON for an inline `<script type="application/json">` block: `<`, `>`, `&`, the line separators
 * U+2028/U+2029 and the direction controls become \u escapes, so no `</script>` or `<!--` can end the block early.
 */
export function jsonForScript(value: unknown): string {
  return JSON.stringify(value ?? null).replace(/[<>&\u2028\u2029\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069]/g, (c) => `\\u${c.charCodeAt(0).toString(16).padStart(4, "0")}`);
}

/** A token safe as an id / class / data-attribute value (anything else becomes "-"). */
export function token(value: unknown): string {
  return String(value ?? "").replace(/[^A-Za-z0-9_-]+/g, "-").slice(0, 64) || "x";
}
