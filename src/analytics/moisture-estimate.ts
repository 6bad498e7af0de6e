// Water content of the process gas (vol %, wet) from one configured moisture source:
// an H2O analyser, a humidity sensor (RH and temperature at its absolute pressure), or
// a mass balance over the mill (DESIGN.md §4). Unknown, with the reason, whenever a
// signal behind it cannot be trusted.
import type { MassMoistureConfig, MoistureSourceConfig } from "../config/sections/moisture-source.js";
import { absolutePressurePa, evaporatedWaterKgPerH, h2oPctVolFromMassBalance, h2oPctVolFromRelativeHumidity } from "../physics/dewpoint.js";
import { h2oPctVolFromOutletFlowMassBalance } from "../physics/moisture-balance.js";
import type { Trust } from "./signal-state.js";

export type MoistureSourceKind = MoistureSourceConfig["kind"];

export interface MoistureSourceView {
  id: string;
  name: string;
  kind: MoistureSourceKind;
  /** Water in the gas, vol % wet basis. */
  h2oPctVol: number | null;
  status: "ok" | "unknown";
  /** Why unknown; when known, how the value was obtained. */
  reason: string;
  /** Humidity sensor: its reading and the absolute pressure at the sensor. */
  relativeHumidityPct: number | null;
  sensorTempC: number | null;
  sensorAbsPressurePa: number | null;
  /** Mass balance: its inputs and the water evaporated from the coal. */
  coalFeedTPerH: number | null;
  rawMoisturePctMass: number | null;
  productMoisturePctMass: number | null;
  evaporatedWaterKgPerH: number | null;
  gasFlowNm3PerH: number | null;
  gasFlowMeasuredAt: "mill-inlet" | "mill-outlet" | null;
  incomingH2oPctVol: number | null;
}

export type TrustOf = (signalId: string) => Trust;

/** A constant or a trusted signal value; `reasons` collects why not. */
export function readInput(spec: { value?: number | undefined; signal?: string | undefined }, trust: TrustOf, reasons: string[]): number | null {
  if (spec.value !== undefined) return spec.value;
  if (spec.signal === undefined) return null;
  const t = trust(spec.signal);
  if (!t.ok || t.value === null) {
    reasons.push(t.reason);
    return null;
  }
  return t.value;
}

function readSignal(signalId: string, trust: TrustOf, reasons: string[]): number | null {
  return readInput({ signal: signalId }, trust, reasons);
}

/** Coal moisture in % by mass from a constant (% or fraction) or a signal in pct. */
function readMassMoisturePct(m: MassMoistureConfig, trust: TrustOf, reasons: string[]): number | null {
  if (m.pctMass !== undefined) return m.pctMass;
  if (m.massFraction !== undefined) return m.massFraction * 100;
  return readInput({ signal: m.signal }, trust, reasons);
}

const fmt = (v: number, digits = 1) => v.toFixed(digits);

/**
 * The source's water content now. `describe` false leaves the reason of a known value empty
 * (moistureSourceReason gives it from the view): the monitor builds that text only when
 * someone looks. The reason of an unknown value is always given.
 */
export function evaluateMoistureSource(cfg: MoistureSourceConfig, trust: TrustOf, barometricPa: number, describe = true): MoistureSourceView {
  const view: MoistureSourceView = {
    id: cfg.id,
    name: cfg.name,
    kind: cfg.kind,
    h2oPctVol: null,
    status: "unknown",
    reason: "",
    relativeHumidityPct: null,
    sensorTempC: null,
    sensorAbsPressurePa: null,
    coalFeedTPerH: null,
    rawMoisturePctMass: null,
    productMoisturePctMass: null,
    evaporatedWaterKgPerH: null,
    gasFlowNm3PerH: null,
    gasFlowMeasuredAt: null,
    incomingH2oPctVol: null,
  };
  const reasons: string[] = [];
  const unknown = (why: string): MoistureSourceView => ({ ...view, reason: why });
  try {
    switch (cfg.kind) {
      case "analyser": {
        const x = readSignal(cfg.signal, trust, reasons);
        if (x === null) return unknown(reasons.join("; "));
        const known: MoistureSourceView = { ...view, h2oPctVol: x, status: "ok" };
        return describe ? { ...known, reason: moistureSourceReason(cfg, known) } : known;
      }
      case "humidity": {
        view.relativeHumidityPct = readSignal(cfg.relativeHumidity, trust, reasons);
        view.sensorTempC = readSignal(cfg.temperature, trust, reasons);
        const gauge = cfg.gaugePressure ? readSignal(cfg.gaugePressure, trust, reasons) : 0;
        if (gauge !== null) view.sensorAbsPressurePa = absolutePressurePa(barometricPa, gauge);
        if (reasons.length) return unknown(reasons.join("; "));
        const x = h2oPctVolFromRelativeHumidity(view.relativeHumidityPct!, view.sensorTempC!, view.sensorAbsPressurePa!);
        const known: MoistureSourceView = { ...view, h2oPctVol: x, status: "ok" };
        return describe ? { ...known, reason: moistureSourceReason(cfg, known) } : known;
      }
      case "mass-balance": {
        const feed = readSignal(cfg.coalFeed, trust, reasons);
        view.rawMoisturePctMass = readMassMoisturePct(cfg.rawMoisture, trust, reasons);
        view.productMoisturePctMass = readMassMoisturePct(cfg.productMoisture, trust, reasons);
        view.gasFlowNm3PerH = readInput(cfg.gasFlowNm3PerH, trust, reasons);
        view.gasFlowMeasuredAt = cfg.gasFlowNm3PerH.measuredAt;
        view.incomingH2oPctVol = readInput({ value: cfg.incomingGasH2o.pctVol, signal: cfg.incomingGasH2o.signal }, trust, reasons);
        // A weigh feeder at rest may read a little below zero: no coal means no water.
        view.coalFeedTPerH = feed === null ? null : Math.max(0, feed);
        if (reasons.length) return unknown(reasons.join("; "));
        const evaporated = evaporatedWaterKgPerH(view.coalFeedTPerH!, view.rawMoisturePctMass! / 100, view.productMoisturePctMass! / 100);
        view.evaporatedWaterKgPerH = evaporated;
        const x =
          cfg.gasFlowNm3PerH.measuredAt === "mill-outlet"
            ? h2oPctVolFromOutletFlowMassBalance({ outletFlowNm3PerHWet: view.gasFlowNm3PerH!, incomingH2oPctVol: view.incomingH2oPctVol!, evaporatedWaterKgPerH: evaporated })
            : h2oPctVolFromMassBalance({ gasFlowNm3PerHWet: view.gasFlowNm3PerH!, gasH2oPctVol: view.incomingH2oPctVol!, evaporatedWaterKgPerH: evaporated });
        const known: MoistureSourceView = { ...view, h2oPctVol: x, status: "ok" };
        return describe ? { ...known, reason: moistureSourceReason(cfg, known) } : known;
      }
    }
  } catch (e) {
    return unknown((e as Error).message);
  }
}

/** How a known water content was obtained, from its view (evaluateMoistureSource's reason when known). */
export function moistureSourceReason(cfg: MoistureSourceConfig, v: MoistureSourceView): string {
  switch (cfg.kind) {
    case "analyser":
      return `H2O analyser ${cfg.signal}`;
    case "humidity":
      return `humidity sensor: ${fmt(v.relativeHumidityPct!)} % RH at ${fmt(v.sensorTempC!)} °C and ${fmt(v.sensorAbsPressurePa! / 100)} hPa absolute (IAPWS-IF97 saturation pressure)`;
    case "mass-balance":
      return (
        `mass balance: ${fmt(v.evaporatedWaterKgPerH! / 1000, 2)} t/h of water from ${fmt(v.coalFeedTPerH!)} t/h of coal ` +
        `(${fmt(v.rawMoisturePctMass!)} % -> ${fmt(v.productMoisturePctMass!)} %) into ${fmt(v.gasFlowNm3PerH!, 0)} Nm³/h ` +
        `(${cfg.gasFlowNm3PerH.measuredAt}) at ${fmt(v.incomingH2oPctVol!)} % H2O`
      );
  }
}
