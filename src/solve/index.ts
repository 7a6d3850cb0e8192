export * from "./dp.js";
export * from "./compare.js";
export * from "./soft.js";
