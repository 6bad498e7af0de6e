// A gas flow metered in Am3/h reaches the core's users as Nm3/h (DIN 1343), converted sample by
// sample with the meter's temperature and pressure as trusted then (src/physics/gas-flow.ts).
import { describe, expect, it } from "vitest";
import { parseConfig } from "../../src/config/load.js";
import { Engine } from "../../src/core/engine.js";
import type { Sample } from "../../src/core/types.js";
import { lineOf, problemsOf, SITE_AND_SOURCE } from "../config/helpers.js";

const T0 = Date.UTC(2026, 2, 2, 4, 0, 0);
const signals = `signals:
  - { id: ig.flow, name: Inert gas flow, tag: FT-1, source: m, topic: t/1, unit: Am3/h, expectedPeriodS: 1, actualConditions: { temperature: ig.temp, gaugePressure: ig.press } }
  - { id: ig.temp, name: Inert gas temperature, tag: TT-2, source: m, topic: t/2, unit: degC, expectedPeriodS: 1 }
  - { id: ig.press, name: Inert gas pressure (gauge), tag: PT-3, source: m, topic: t/3, unit: mbar, expectedPeriodS: 1 }
units:
  - { id: u1, name: Mill, kind: mill }
`;
const s = (signal: string, value: number, tMs: number): Sample => ({ signal, value, quality: "good", sourceTimeMs: tMs, receiveTimeMs: tMs });

describe("a flow in Am3/h", () => {
  it("is shown in Nm3/h, converted with the meter's temperature and absolute pressure", () => {
    // Site barometric 1013 hPa (SITE_AND_SOURCE) + 287.5 mbar gauge = 130 050 Pa absolute, at 60 °C:
    // 1000 × (130 050 / 101 325) × (273.15 / 333.15) = 1052.34 Nm3/h.
    const e = new Engine(parseConfig(SITE_AND_SOURCE + signals, "plant.yaml"));
    e.ingest(s("ig.temp", 60, T0));
    e.ingest(s("ig.press", 28_750, T0)); // samples reach the core in Pa (the decoder converts mbar)
    e.ingest(s("ig.flow", 1000, T0));
    e.tick(T0);
    const flow = e.snapshot().signals.find((x) => x.id === "ig.flow")!;
    expect(flow.unit).toBe("Nm³/h");
    expect(flow.value!).toBeCloseTo(1052.34, 2);
  });

  it("is bad while its temperature is unknown, with the reason", () => {
    const e = new Engine(parseConfig(SITE_AND_SOURCE + signals, "plant.yaml"));
    e.ingest(s("ig.press", 0, T0));
    e.ingest(s("ig.flow", 1000, T0));
    e.tick(T0);
    const flow = e.snapshot().signals.find((x) => x.id === "ig.flow")!;
    expect(flow.quality).toBe("bad");
    expect(flow.qualityReason).toMatch(/Am3\/h to Nm3\/h: ig.temp: no data yet/);
  });

  it("needs actualConditions, and only Am3/h takes them (errors with file:line)", () => {
    const without = SITE_AND_SOURCE + signals.replace(", actualConditions: { temperature: ig.temp, gaugePressure: ig.press }", "");
    expect(problemsOf(without)[0]).toMatchObject({ key: "signals[0].unit", line: lineOf(without, "id: ig.flow"), message: expect.stringMatching(/needs actualConditions/) });
    const wrong = SITE_AND_SOURCE + signals.replace("unit: mbar, expectedPeriodS: 1 }", "unit: mbar, expectedPeriodS: 1, actualConditions: { temperature: { degC: 20 } } }");
    expect(problemsOf(wrong)[0]).toMatchObject({ key: "signals[2].actualConditions", message: expect.stringMatching(/belong to a flow in Am3\/h/) });
    const notTemp = SITE_AND_SOURCE + signals.replace("temperature: ig.temp,", "temperature: ig.press,");
    expect(problemsOf(notTemp)[0]!.message).toMatch(/expected a temperature unit/);
  });
});
