/** Progress on a TTY stderr: one bar with an ETA, redrawn in place (train and compare). */
import type { CliIO } from "./io.js";

/** Remaining time as m:ss from the pace so far; "--:--" before the first unit is done. Pure. */
export function etaText(done: number, total: number, elapsedMs: number): string {
  if (done > 0 && done < total) {
    const s = Math.round(((elapsedMs / done) * (total - done)) / 1000);
    return `${Math.floor(s / 60)}:${String(s % 60).padStart(2, "0")}`;
  }
  return done >= total ? "0:00" : "--:--";
}

/** `[#####.....]` for done of total. Pure. */
export function progressBar(done: number, total: number, width = 24): string {
  const frac = total > 0 ? Math.min(1, done / total) : 1;
  const fill = Math.round(frac * width);
  return `[${"#".repeat(fill) + ".".repeat(width - fill)}]`;
}

/** The compare line: bar, runs done, failures, ETA. Pure. */
export function progressLine(done: number, total: number, failed: number, elapsedMs: number, width = 24): string {
  return `${progressBar(done, total, width)} ${done}/${total} runs${failed ? `, ${failed} failed` : ""}  ETA ${etaText(done, total, elapsedMs)}`;
}

/** A line redrawn in place on a TTY stderr (nothing otherwise); `done` clears it. */
export function liveLine(io: CliIO, enabled = true): { draw(text: string): void; done(): void } {
  if (!enabled || !io.stderrIsTTY) return { draw() {}, done() {} };
  return {
    draw: (text) => io.err(`\r${text}   `),
    done: () => io.err("\r\u001b[2K"),
  };
}
