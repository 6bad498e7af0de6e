// Types for live-state.js (plain JS in the browser, typed here for the tests).
import type { LiveMessage, PlantState } from "../src/core/types.js";

export function applyMessage(state: PlantState | null, msg: LiveMessage): PlantState | null;
