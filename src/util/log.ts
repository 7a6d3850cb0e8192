/**
 * pino loggers. Logs go to stderr (never stdout, which carries results); level from GAPWATCH_LOG
 * (default "warn", which nothing logs at today, so a plain command prints no log line; "info" shows
 * run starts and ends and batch job events, "debug" every checkpoint). Bind context with
 * `logger().child({ runId, env, reward, seed })`.
 */
import pino from "pino";

let root: pino.Logger | undefined;

export function logger(): pino.Logger {
  root ??= pino({ level: process.env.GAPWATCH_LOG ?? "warn", base: { app: "gapwatch" } }, pino.destination(2));
  return root;
}

export function setLogLevel(level: string): void {
  logger().level = level;
}
