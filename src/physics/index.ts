// The pure physics library: formulas of DESIGN.md §4, no clock, no I/O.
export * from "./water.js";
export * from "./dewpoint.js";
export * from "./oxygen.js";
export * from "./acid.js";
export * from "./purge.js";
