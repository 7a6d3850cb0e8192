/** Change detectors used by the monitor: tabular CUSUM, Page-Hinkley, EWMA chart. */
export * from "./types.js";
export * from "./cusum.js";
export * from "./page-hinkley.js";
export * from "./ewma.js";
