export * from "./dp.js";
export * from "./compare.js";
