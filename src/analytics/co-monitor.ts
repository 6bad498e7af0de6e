// CO monitor: at every configured measuring point the rate of rise over a short and a long
// window (robust and least squares), the rolling baseline and the rise above it, and for
// enclosed stores the long-window rise in ppm/h and Graham's ratio; across a unit, the rise
// from its inlet to its outlet with the gas transport delay between them.
//
//   sample ─▶ CoGradient (windows, restarts, inlet history) ─┐
//   tick ──▶ trust, phase, gas source ─▶ CoBaseline ─────────┴▶ emit co.<id>.* and co-rise.<id>.*
//
// Derived keys (see coQuantities in src/config/sections/co.ts):
//   co.<id>.gradientPpmPerMin      robust (Theil–Sen) gradient, short window: what rules watch
//   co.<id>.gradientLsPpmPerMin    least-squares gradient, short window
//   co.<id>.gradientLongPpmPerMin  robust gradient, long window
//   co.<id>.baselinePpm, co.<id>.riseAboveBaselinePpm
//   co.<id>.riseLongPpmPerH        enclosed stores: robust long-window gradient in ppm/h
//   co.<id>.grahamRatio            enclosed stores with N2 measured or taken by difference
//   co-rise.<id>.risePpm           outlet − inlet taken transportDelayS earlier
import type { CoPointConfig, CoRiseConfig, CoStoreConfig } from "../config/sections/co.js";
import type { Monitor, TickContext } from "../core/calculator.js";
import type { Sample } from "../core/types.js";
import { grahamInterpretation, grahamRatio, type GrahamBand } from "../physics/graham.js";
import { CoBaseline, type BaselineResult } from "./co-baseline.js";
import { CoGradient, type Interruption, type WindowResult } from "./co-gradient.js";
import type { Trust } from "./signal-state.js";

export type CoWindowView = WindowResult;

export interface CoBaselineView extends BaselineResult {
  windowS: number;
  /** Latest trusted CO minus the baseline, ppm. */
  riseAbovePpm: number | null;
  riseReason: string;
}

export interface CoStoreView {
  /** Robust long-window gradient, ppm/h. */
  riseLongPpmPerH: number | null;
  riseReason: string;
  o2Signal: string;
  o2PctVol: number | null;
  n2PctVol: number | null;
  /** Where N2 comes from: a signal, by difference (assumes the balance is N2), or nowhere. */
  n2Source: "signal" | "by difference" | "none";
  grahamRatio: number | null;
  grahamBand: GrahamBand | null;
  /** Band text from mine-fire practice (grahamInterpretation). */
  grahamText: string | null;
  grahamSource: string | null;
  grahamReason: string;
  /** The caveats that come with the figure. */
  caveat: string;
}

export interface CoPointView {
  id: string;
  name: string;
  unitId: string;
  signal: string;
  coPpm: number | null;
  /** Robust gradient over the short window (co.<id>.gradientPpmPerMin). */
  gradientPpmPerMin: number | null;
  gradientLsPpmPerMin: number | null;
  gradientLongPpmPerMin: number | null;
  /** The short window, s (the one gradientPpmPerMin is taken over). */
  windowS: number;
  transportLagS: number;
  /** Status and reason of gradientPpmPerMin. */
  status: "ok" | "unknown";
  reason: string;
  short: CoWindowView;
  long: CoWindowView;
  baseline: CoBaselineView;
  store: CoStoreView | null;
  /** The last time the windows started again, and why. */
  lastRestart: Interruption;
  samples: { accepted: number; duplicates: number; outOfOrder: number };
}

export interface CoRiseView {
  id: string;
  name: string;
  unitId: string;
  inlet: string;
  outlet: string;
  transportDelayS: number;
  outletPpm: number | null;
  /** Inlet CO at the outlet sample's time minus the transport delay. */
  inletPpm: number | null;
  /** Source time of the inlet value used (epoch ms). */
  inletAtMs: number | null;
  inletHow: "exact" | "interpolated" | "nearest" | null;
  risePpm: number | null;
  status: "ok" | "unknown";
  reason: string;
  /** Inlet values held for the delay. */
  historyPoints: number;
}

interface Point {
  cfg: CoPointConfig;
  gradient: CoGradient;
  baseline: CoBaseline;
}

const N2_BY_DIFFERENCE_CAVEAT =
  "N2 by difference (100 − O2 − CO) assumes the rest of the gas is N2; wrong where the store is inerted with CO2 or flue gas";
const GRAHAM_INERT_CAVEAT = "N2 added for inerting understates the ratio: no indicator of heating in an N2-inerted store";

/** Graham's ratio at an enclosed store from trusted CO, O2 and (optionally) N2, or why not. */
export function storeGraham(
  store: CoStoreConfig,
  coPpm: number | null,
  o2: Trust,
  n2: Trust | null,
): Pick<CoStoreView, "o2PctVol" | "n2PctVol" | "n2Source" | "grahamRatio" | "grahamBand" | "grahamText" | "grahamSource" | "grahamReason" | "caveat"> {
  const n2Source = store.n2Signal ? "signal" : store.n2ByDifference ? "by difference" : "none";
  const caveat = n2Source === "by difference" ? `${N2_BY_DIFFERENCE_CAVEAT}. ${GRAHAM_INERT_CAVEAT}` : GRAHAM_INERT_CAVEAT;
  const o2PctVol = o2.ok ? o2.value : null;
  const none = { o2PctVol, n2PctVol: null, n2Source, grahamRatio: null, grahamBand: null, grahamText: null, grahamSource: null, caveat } as const;
  if (n2Source === "none") return { ...none, grahamReason: "no N2 measured and n2ByDifference not set: Graham's ratio not computed" };
  if (coPpm === null) return { ...none, grahamReason: "CO cannot be trusted" };
  if (o2PctVol === null) return { ...none, grahamReason: `O2: ${o2.reason}` };
  const coPctVol = coPpm / 10_000;
  let n2PctVol: number;
  if (n2) {
    if (!n2.ok || n2.value === null) return { ...none, grahamReason: `N2: ${n2.reason}` };
    n2PctVol = n2.value;
  } else n2PctVol = 100 - o2PctVol - coPctVol;
  const deficiencyPctPt = 0.265 * n2PctVol - o2PctVol;
  if (!(deficiencyPctPt >= store.minDeficiencyPctPt)) {
    return {
      ...none,
      n2PctVol,
      grahamReason: `oxygen deficiency 0.265·N2 − O2 = ${deficiencyPctPt.toFixed(2)} %-pt, below ${store.minDeficiencyPctPt}: too little O2 consumed for a meaningful ratio`,
    };
  }
  let gr: number;
  try {
    gr = grahamRatio(coPctVol, n2PctVol, o2PctVol);
  } catch (e) {
    return { ...none, n2PctVol, grahamReason: (e as Error).message };
  }
  const band = grahamInterpretation(gr);
  return { o2PctVol, n2PctVol, n2Source, grahamRatio: gr, grahamBand: band.band, grahamText: band.text, grahamSource: band.source, grahamReason: "", caveat };
}

export class CoMonitor implements Monitor {
  private readonly points: Point[];
  private readonly byId = new Map<string, Point>();
  private readonly bySignal = new Map<string, CoGradient[]>();
  private readonly byGasSource = new Map<string, CoBaseline[]>();
  private pointViews: CoPointView[] = [];
  private riseViews: CoRiseView[] = [];

  constructor(
    points: readonly CoPointConfig[],
    private readonly rises: readonly CoRiseConfig[] = [],
  ) {
    this.points = points.map((cfg) => ({ cfg, gradient: new CoGradient(cfg), baseline: new CoBaseline(cfg.baseline, cfg.baseline.phaseUnit ?? cfg.unit) }));
    for (const p of this.points) {
      this.byId.set(p.cfg.id, p);
      push(this.bySignal, p.cfg.signal, p.gradient);
      if (p.cfg.baseline.gasSourceSignal) push(this.byGasSource, p.cfg.baseline.gasSourceSignal, p.baseline);
    }
    for (const r of rises) {
      const inlet = this.byId.get(r.inlet);
      if (!inlet || !this.byId.has(r.outlet)) {
        throw new Error(`CoMonitor: rise "${r.id}" names CO points "${r.inlet}" and "${r.outlet}"; expected ids among ${[...this.byId.keys()].join(", ")}`);
      }
      inlet.gradient.keepHistory(r.transportDelayS + r.toleranceS);
    }
  }

  ingest(s: Sample): void {
    for (const g of this.bySignal.get(s.signal) ?? []) g.add(s);
    for (const b of this.byGasSource.get(s.signal) ?? []) b.noteGasSource(s);
  }

  tick(ctx: TickContext): void {
    this.pointViews = this.points.map((p) => this.tickPoint(p, ctx));
    this.riseViews = this.rises.map((r) => this.tickRise(r, ctx));
  }

  private tickPoint({ cfg, gradient: g, baseline: b }: Point, ctx: TickContext): CoPointView {
    const key = `co.${cfg.id}`;
    const t = ctx.trust(cfg.signal);
    if (!t.ok) g.interrupt(ctx.nowMs, t.reason);
    const { short, long } = g.evaluate(t.ok, t.reason);
    ctx.emit(`${key}.gradientPpmPerMin`, short.robustPpmPerMin, short.reason);
    ctx.emit(`${key}.gradientLsPpmPerMin`, short.lsPpmPerMin, short.reason);
    ctx.emit(`${key}.gradientLongPpmPerMin`, long.robustPpmPerMin, long.reason);

    const gasCfg = cfg.baseline.gasSourceSignal;
    const base = b.update(ctx.nowMs, ctx.phase(b.phaseUnit), gasCfg ? ctx.trust(gasCfg) : null, t.ok ? g.latest : null);
    const coPpm = t.ok ? t.value : null;
    let riseAbovePpm: number | null = null;
    let riseReason: string;
    if (coPpm === null) riseReason = t.reason;
    else if (base.ppm === null) riseReason = base.reason;
    else {
      riseAbovePpm = coPpm - base.ppm;
      riseReason = base.frozen ? `against the frozen baseline (${base.frozen})` : "";
    }
    ctx.emit(`${key}.baselinePpm`, base.ppm, base.reason);
    ctx.emit(`${key}.riseAboveBaselinePpm`, riseAbovePpm, riseReason);

    let store: CoStoreView | null = null;
    if (cfg.store) {
      const riseLongPpmPerH = long.robustPpmPerMin === null ? null : long.robustPpmPerMin * 60;
      ctx.emit(`${key}.riseLongPpmPerH`, riseLongPpmPerH, long.reason);
      const gr = storeGraham(cfg.store, coPpm, ctx.trust(cfg.store.o2Signal), cfg.store.n2Signal ? ctx.trust(cfg.store.n2Signal) : null);
      if (gr.n2Source !== "none") ctx.emit(`${key}.grahamRatio`, gr.grahamRatio, gr.grahamReason);
      store = { riseLongPpmPerH, riseReason: long.reason, o2Signal: cfg.store.o2Signal, ...gr };
    }

    return {
      id: cfg.id,
      name: cfg.name,
      unitId: cfg.unit,
      signal: cfg.signal,
      coPpm,
      gradientPpmPerMin: short.robustPpmPerMin,
      gradientLsPpmPerMin: short.lsPpmPerMin,
      gradientLongPpmPerMin: long.robustPpmPerMin,
      windowS: cfg.shortWindowS,
      transportLagS: cfg.transportLagS,
      status: short.status,
      reason: short.reason,
      short,
      long,
      baseline: { ...base, windowS: cfg.baseline.windowS, riseAbovePpm, riseReason },
      store,
      lastRestart: g.interruption,
      samples: { accepted: g.accepted, duplicates: g.duplicates, outOfOrder: g.outOfOrder },
    };
  }

  private tickRise(r: CoRiseConfig, ctx: TickContext): CoRiseView {
    const inlet = this.byId.get(r.inlet)!;
    const outlet = this.byId.get(r.outlet)!;
    const history = inlet.gradient.history!;
    const view: CoRiseView = {
      id: r.id,
      name: r.name,
      unitId: r.unit,
      inlet: r.inlet,
      outlet: r.outlet,
      transportDelayS: r.transportDelayS,
      outletPpm: null,
      inletPpm: null,
      inletAtMs: null,
      inletHow: null,
      risePpm: null,
      status: "unknown",
      reason: "",
      historyPoints: history.count,
    };
    const key = `co-rise.${r.id}.risePpm`;
    const unknown = (reason: string): CoRiseView => {
      ctx.emit(key, null, reason);
      return { ...view, reason };
    };
    const tOut = ctx.trust(outlet.cfg.signal);
    const tIn = ctx.trust(inlet.cfg.signal);
    if (!tOut.ok) return unknown(`outlet ${tOut.reason}`);
    if (!tIn.ok) return unknown(`inlet ${tIn.reason}`);
    const out = outlet.gradient.latest;
    if (!out) return unknown(`outlet: ${outlet.gradient.interruption.reason}`);
    view.outletPpm = out.v;
    const targetS = out.tS - r.transportDelayS;
    const got = history.valueAt(targetS, r.toleranceS, inlet.cfg.maxGapS);
    if (got.value === null) return unknown(`inlet ${r.transportDelayS} s before the outlet sample: ${got.reason}`);
    const risePpm = out.v - got.value;
    ctx.emit(key, risePpm, "");
    return { ...view, inletPpm: got.value, inletAtMs: Math.round(got.atS * 1000), inletHow: got.how, risePpm, status: "ok" };
  }

  view(): { coPoints: CoPointView[]; coRises: CoRiseView[] } {
    return { coPoints: this.pointViews, coRises: this.riseViews };
  }
}

function push<K, V>(m: Map<K, V[]>, k: K, v: V): void {
  const list = m.get(k);
  if (list) list.push(v);
  else m.set(k, [v]);
}
