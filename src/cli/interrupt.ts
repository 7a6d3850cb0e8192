/** Ctrl-C for a long command: the first SIGINT sets `aborted`, the work stops and stores what it has. */
export function withInterrupt<T>(fn: (signal: { aborted: boolean }) => Promise<T>): Promise<{ value: T; aborted: boolean }> {
  const signal = { aborted: false };
  const onInt = () => {
    signal.aborted = true;
  };
  process.once("SIGINT", onInt);
  return fn(signal)
    .then((value) => ({ value, aborted: signal.aborted }))
    .finally(() => process.removeListener("SIGINT", onInt));
}
