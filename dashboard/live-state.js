// Merging of /api/live messages into the page's copy of the plant state. Pure: the
// input state is never modified, so the page can compare old and new, and vitest can
// test it without a browser. Types: live-state.d.ts.

/** Keys of a delta that are not lists of entries with an id. */
const NOT_KEYED = new Set(["type", "nowMs", "advisories", "transitions"]);

/**
 * @param {Array<{id: string}>} current
 * @param {Array<{id: string}>} changes
 */
function replaceById(current, changes) {
  const byId = new Map(changes.map((entry) => [entry.id, entry]));
  const merged = current.map((entry) => {
    const next = byId.get(entry.id);
    if (next === undefined) return entry;
    byId.delete(entry.id);
    return next;
  });
  // Whatever is left is new (a unit or point added to the config while running).
  for (const entry of byId.values()) merged.push(entry);
  return merged;
}

/**
 * Apply one LiveMessage. A snapshot replaces everything; a delta patches a state
 * that exists (before the first snapshot there is nothing to patch, so it is
 * ignored). Unknown message types leave the state as it was, so an older page keeps
 * working against a newer daemon.
 *
 * @param {import("../src/core/types.js").PlantState | null} state
 * @param {import("../src/core/types.js").LiveMessage} msg
 * @returns {import("../src/core/types.js").PlantState | null}
 */
export function applyMessage(state, msg) {
  if (msg === null || typeof msg !== "object") return state;
  if (msg.type === "snapshot") return msg.state ?? state;
  if (msg.type !== "delta" || state === null) return state;
  const next = { ...state };
  if (typeof msg.nowMs === "number") next.nowMs = msg.nowMs;
  // Every other list patches the state's list of the same name, entry by entry (by id).
  for (const [key, changes] of Object.entries(msg)) {
    if (NOT_KEYED.has(key) || !Array.isArray(changes) || changes.length === 0) continue;
    next[key] = replaceById(Array.isArray(state[key]) ? state[key] : [], changes);
  }
  // The advisory list is short, so a delta carries it whole when anything changed.
  if (Array.isArray(msg.advisories)) next.advisories = msg.advisories;
  return next;
}
