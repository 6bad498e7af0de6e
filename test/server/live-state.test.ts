// The page's merging of /api/live messages (dashboard/live-state.js), against the
// LiveMessage contract in src/core/types.ts: a snapshot replaces everything; delta
// entries replace those with the same id; delta.advisories, when present, is the whole list.
import { describe, expect, it } from "vitest";
import { applyMessage } from "../../dashboard/live-state.js";
import type { LiveMessage, PlantState } from "../../src/core/types.js";
import { fakePlantState, FAKE_NOW_MS } from "./fake-deps.js";

const deepFreeze = <T>(value: T): T => {
  if (value !== null && typeof value === "object") {
    for (const v of Object.values(value)) deepFreeze(v);
    Object.freeze(value);
  }
  return value;
};

describe("applyMessage", () => {
  it("takes a snapshot whole, also over an existing state", () => {
    const first = fakePlantState();
    const later = fakePlantState(FAKE_NOW_MS + 60_000);
    expect(applyMessage(null, { type: "snapshot", state: first })).toBe(first);
    expect(applyMessage(first, { type: "snapshot", state: later })).toBe(later);
  });

  it("ignores a delta before any snapshot (nothing to patch)", () => {
    expect(applyMessage(null, { type: "delta", nowMs: FAKE_NOW_MS })).toBeNull();
  });

  it("replaces delta entries by id, keeps the rest and the order, and never mutates its input", () => {
    const before = deepFreeze(fakePlantState());
    const changedCo = { ...before.coPoints[1]!, coPpm: 171, gradientPpmPerMin: 7.4 };
    const changedUnit = {
      ...before.units[0]!,
      inerting: { ...before.units[0]!.inerting!, state: "marginal" as const, o2PctVol: 8.9, marginPctPt: 1.1 },
    };
    const after = applyMessage(before, {
      type: "delta",
      nowMs: FAKE_NOW_MS + 1000,
      coPoints: [changedCo],
      units: [changedUnit],
    }) as PlantState;

    expect(after.nowMs).toBe(FAKE_NOW_MS + 1000);
    expect(after.coPoints.map((p) => p.id)).toEqual(before.coPoints.map((p) => p.id));
    expect(after.coPoints[1]).toEqual(changedCo);
    expect(after.coPoints[0]).toBe(before.coPoints[0]);
    expect(after.units[0]?.inerting?.state).toBe("marginal");
    expect(after.units.slice(1)).toEqual(before.units.slice(1));
    // Lists the delta did not carry are the very same objects.
    expect(after.signals).toBe(before.signals);
    expect(after.dewPoints).toBe(before.dewPoints);
    expect(after.advisories).toBe(before.advisories);
    // The frozen input is untouched (a mutation would have thrown) and still reads as before.
    expect(before.coPoints[1]?.coPpm).toBe(148);
  });

  it("appends entries with ids it has not seen", () => {
    const before = fakePlantState();
    const added = { ...before.dewPoints[0]!, id: "recirc-duct", name: "Recirculation duct" };
    const after = applyMessage(before, { type: "delta", nowMs: before.nowMs, dewPoints: [added] }) as PlantState;
    expect(after.dewPoints.map((p) => p.id)).toEqual([...before.dewPoints.map((p) => p.id), "recirc-duct"]);
  });

  it("replaces the advisory list whole when present, keeps it when absent, empties it on []", () => {
    const before = fakePlantState();
    const one = [before.advisories[2]!];
    const replaced = applyMessage(before, { type: "delta", nowMs: before.nowMs, advisories: one }) as PlantState;
    expect(replaced.advisories).toEqual(one);
    const kept = applyMessage(replaced, { type: "delta", nowMs: before.nowMs + 1 }) as PlantState;
    expect(kept.advisories).toBe(replaced.advisories);
    const emptied = applyMessage(kept, { type: "delta", nowMs: before.nowMs + 2, advisories: [] }) as PlantState;
    expect(emptied.advisories).toEqual([]);
  });

  it("applies a snapshot then a chain of deltas like the daemon's own state", () => {
    let page: PlantState | null = null;
    const daemon = fakePlantState();
    page = applyMessage(page, { type: "snapshot", state: daemon });
    const deltas: LiveMessage[] = [];
    let expected = daemon;
    for (let i = 1; i <= 5; i += 1) {
      const signals = [{ ...expected.signals[4]!, value: 148 + i, sourceTimeMs: FAKE_NOW_MS + i * 1000 }];
      const msg: LiveMessage = { type: "delta", nowMs: FAKE_NOW_MS + i * 1000, signals };
      deltas.push(msg);
      expected = { ...expected, nowMs: msg.nowMs, signals: expected.signals.map((s) => (s.id === signals[0]!.id ? signals[0]! : s)) };
    }
    for (const d of deltas) page = applyMessage(page, d);
    expect(page).toEqual(expected);
  });

  it("leaves the state as it is on unknown message types", () => {
    const before = fakePlantState();
    const unknown = { type: "hello", nowMs: 1 } as unknown as LiveMessage;
    expect(applyMessage(before, unknown)).toBe(before);
  });
});
