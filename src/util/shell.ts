/** Quoting for commands printed for people to paste into a POSIX shell. Pure. */

/** One argument as the shell reads it back: bare when it is only safe characters, else single-quoted. */
export function shellQuote(s: string): string {
  return /^[\w./:@%+=,-]+$/.test(s) ? s : `'${s.replace(/'/g, "'\\''")}'`;
}

/**
 * How the user started gapwatch, as a command prefix that works when pasted: `npx gapwatch` under
 * npm/npx (npm sets `npm_command` for `npx`, `npm exec` and `npm run`; the bin is then not on PATH),
 * `gapwatch` when the script is the installed `gapwatch` bin, else `node <script>`.
 */
export function invocationOf(env: Record<string, string | undefined>, script: string | undefined): string {
  if (env.npm_command !== undefined || (env.npm_execpath ?? "").length > 0) return "npx gapwatch";
  if (script === undefined || /(^|[\\/])gapwatch$/.test(script)) return "gapwatch";
  return `node ${shellQuote(script)}`;
}
