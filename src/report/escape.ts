/**
 * Escaping for the HTML report. Every string that comes from a user (environment, reward and feature
 * names, alert messages, manifest values, audit evidence) passes through one of these before it is
 * written into the page. Pure.
 */

const HTML: Record<string, string> = { "&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;", "'": "&#39;" };

/** Text or attribute value: escapes & < > " ' (safe in element content and in quoted attributes). */
export function esc(value: unknown): string {
  return String(value ?? "").replace(/[&<>"']/g, (c) => HTML[c]);
}

/**
 * JSON for an inline `<script type="application/json">` block: `<`, `>`, `&` and the line separators
 * U+2028/U+2029 become \u escapes, so no `</script>` or `<!--` can end the block early.
 */
export function jsonForScript(value: unknown): string {
  return JSON.stringify(value ?? null).replace(/[<>&\u2028\u2029]/g, (c) => `\\u${c.charCodeAt(0).toString(16).padStart(4, "0")}`);
}

/** A token safe as an id / class / data-attribute value (anything else becomes "-"). */
export function token(value: unknown): string {
  return String(value ?? "").replace(/[^A-Za-z0-9_-]+/g, "-").slice(0, 64) || "x";
}
