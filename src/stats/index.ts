/** Pure statistics for the monitor and the batch comparison. */
export * from "./interval.js";
export * from "./summary.js";
export * from "./bootstrap.js";
export * from "./improvement.js";
export * from "./wilson.js";
export * from "./rank.js";
export * from "./ttest.js";
export * from "./normal.js";
export * from "./student.js";
export * from "./gamma.js";
