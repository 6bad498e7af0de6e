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
import { CoGradient, WindowReading, type Interruption, type WindowResult } from "./co-gradient.js";
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

/** A measuring point, and what its last tick found (plain values; the view is built from them when asked). */
interface Point {
  cfg: CoPointConfig;
  gradient: CoGradient;
  baseline: CoBaseline;
  /** Derived keys, built once: co.<id>.<quantity>. */
  keys: { gradient: string; gradientLs: string; gradientLong: string; baseline: string; riseAbove: string; riseLong: string; graham: string };
  trust: Trust | null;
  short: WindowReading;
  long: WindowReading;
  riseAbovePpm: number | null;
  riseLongPpmPerH: number | null;
  o2: Trust | null;
  n2: Trust | null;
  /** Graham's ratio when it is emitted (N2 measured or taken by difference); else built with the view. */
  graham: ReturnType<typeof storeGraham> | null;
  lastRestart: Interruption;
  accepted: number;
  duplicates: number;
  outOfOrder: number;
}

/** What a rise's last tick found. */
interface Rise {
  cfg: CoRiseConfig;
  inlet: Point;
  outlet: Point;
  key: string;
  outletPpm: number | null;
  inletPpm: number | null;
  inletAtMs: number | null;
  inletHow: CoRiseView["inletHow"];
  risePpm: number | null;
  reason: string;
  historyPoints: number;
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
  /** Signal id → the CO points it feeds and the baselines it is the gas source of (one lookup per sample). */
  private readonly bySignal = new Map<string, { gradients: CoGradient[]; baselines: CoBaseline[] }>();
  private readonly rises: Rise[] = [];
  private ticked = false;
  /** Views of the last tick, built on the first view() after it. */
  private views: { coPoints: CoPointView[]; coRises: CoRiseView[] } | null = null;

  constructor(points: readonly CoPointConfig[], rises: readonly CoRiseConfig[] = []) {
    this.points = points.map((cfg) => {
      const gradient = new CoGradient(cfg);
      const key = `co.${cfg.id}`;
      return {
        cfg,
        gradient,
        baseline: new CoBaseline(cfg.baseline, cfg.baseline.phaseUnit ?? cfg.unit),
        keys: {
          gradient: `${key}.gradientPpmPerMin`,
          gradientLs: `${key}.gradientLsPpmPerMin`,
          gradientLong: `${key}.gradientLongPpmPerMin`,
          baseline: `${key}.baselinePpm`,
          riseAbove: `${key}.riseAboveBaselinePpm`,
          riseLong: `${key}.riseLongPpmPerH`,
          graham: `${key}.grahamRatio`,
        },
        trust: null,
        short: new WindowReading(),
        long: new WindowReading(),
        riseAbovePpm: null,
        riseLongPpmPerH: null,
        o2: null,
        n2: null,
        graham: null,
        lastRestart: gradient.interruption,
        accepted: 0,
        duplicates: 0,
        outOfOrder: 0,
      };
    });
    for (const p of this.points) {
      this.byId.set(p.cfg.id, p);
      this.routeOf(p.cfg.signal).gradients.push(p.gradient);
      if (p.cfg.baseline.gasSourceSignal) this.routeOf(p.cfg.baseline.gasSourceSignal).baselines.push(p.baseline);
    }
    for (const r of rises) {
      const inlet = this.byId.get(r.inlet);
      const outlet = this.byId.get(r.outlet);
      if (!inlet || !outlet) {
        throw new Error(`CoMonitor: rise "${r.id}" names CO points "${r.inlet}" and "${r.outlet}"; expected ids among ${[...this.byId.keys()].join(", ")}`);
      }
      inlet.gradient.keepHistory(r.transportDelayS + r.toleranceS);
      this.rises.push({
        cfg: r,
        inlet,
        outlet,
        key: `co-rise.${r.id}.risePpm`,
        outletPpm: null,
        inletPpm: null,
        inletAtMs: null,
        inletHow: null,
        risePpm: null,
        reason: "",
        historyPoints: 0,
      });
    }
  }

  ingest(s: Sample): void {
    const route = this.bySignal.get(s.signal);
    if (!route) return;
    for (const g of route.gradients) g.add(s);
    for (const b of route.baselines) b.noteGasSource(s);
  }

  private routeOf(signalId: string): { gradients: CoGradient[]; baselines: CoBaseline[] } {
    let r = this.bySignal.get(signalId);
    if (!r) this.bySignal.set(signalId, (r = { gradients: [], baselines: [] }));
    return r;
  }

  tick(ctx: TickContext): void {
    for (const p of this.points) this.tickPoint(p, ctx);
    for (const r of this.rises) this.tickRise(r, ctx);
    this.ticked = true;
    this.views = null;
  }

  // Reasons are built only for unknown values: a known value's reason is not recorded (see TickContext.emit),
  // so it is built only when a view asks.
  private tickPoint(p: Point, ctx: TickContext): void {
    const { cfg, gradient: g, baseline: b, keys, short, long } = p;
    const t = ctx.trust(cfg.signal);
    p.trust = t;
    if (!t.ok) g.interrupt(ctx.nowMs, t.reason);
    g.read(short, long, t.ok, t.reason);
    ctx.emit(keys.gradient, short.robustPpmPerMin, short.robustPpmPerMin === null ? short.reason : "");
    ctx.emit(keys.gradientLs, short.lsPpmPerMin, short.lsPpmPerMin === null ? short.reason : "");
    ctx.emit(keys.gradientLong, long.robustPpmPerMin, long.robustPpmPerMin === null ? long.reason : "");

    const gasCfg = cfg.baseline.gasSourceSignal;
    b.update(ctx.nowMs, ctx.phase(b.phaseUnit), gasCfg ? ctx.trust(gasCfg) : null, t.ok ? g.latest : null);
    const coPpm = t.ok ? t.value : null;
    const basePpm = b.ppm;
    p.riseAbovePpm = coPpm === null || basePpm === null ? null : coPpm - basePpm;
    ctx.emit(keys.baseline, basePpm, basePpm === null ? b.reason : "");
    ctx.emit(keys.riseAbove, p.riseAbovePpm, p.riseAbovePpm === null ? riseReason(p) : "");

    p.graham = null;
    if (cfg.store) {
      p.riseLongPpmPerH = long.robustPpmPerMin === null ? null : long.robustPpmPerMin * 60;
      ctx.emit(keys.riseLong, p.riseLongPpmPerH, p.riseLongPpmPerH === null ? long.reason : "");
      p.o2 = ctx.trust(cfg.store.o2Signal);
      p.n2 = cfg.store.n2Signal ? ctx.trust(cfg.store.n2Signal) : null;
      if (cfg.store.n2Signal || cfg.store.n2ByDifference) {
        p.graham = storeGraham(cfg.store, coPpm, p.o2, p.n2);
        ctx.emit(keys.graham, p.graham.grahamRatio, p.graham.grahamReason);
      }
    }
    p.lastRestart = g.interruption;
    p.accepted = g.accepted;
    p.duplicates = g.duplicates;
    p.outOfOrder = g.outOfOrder;
  }

  private tickRise(r: Rise, ctx: TickContext): void {
    const { cfg, inlet, outlet } = r;
    const history = inlet.gradient.history!;
    r.historyPoints = history.count;
    r.outletPpm = r.inletPpm = r.inletAtMs = r.risePpm = null;
    r.inletHow = null;
    r.reason = "";
    const tOut = ctx.trust(outlet.cfg.signal);
    const tIn = ctx.trust(inlet.cfg.signal);
    const out = outlet.gradient.latest;
    if (!tOut.ok) r.reason = `outlet ${tOut.reason}`;
    else if (!tIn.ok) r.reason = `inlet ${tIn.reason}`;
    else if (!out) r.reason = `outlet: ${outlet.gradient.interruption.reason}`;
    else {
      r.outletPpm = out.v;
      const got = history.valueAt(out.tS - cfg.transportDelayS, cfg.toleranceS, inlet.cfg.maxGapS);
      if (got.value === null) r.reason = `inlet ${cfg.transportDelayS} s before the outlet sample: ${got.reason}`;
      else {
        r.inletPpm = got.value;
        r.inletAtMs = Math.round(got.atS * 1000);
        r.inletHow = got.how;
        r.risePpm = out.v - got.value;
      }
    }
    ctx.emit(r.key, r.risePpm, r.reason);
  }

  view(): { coPoints: CoPointView[]; coRises: CoRiseView[] } {
    if (!this.ticked) return { coPoints: [], coRises: [] };
    this.views ??= { coPoints: this.points.map(pointView), coRises: this.rises.map(riseView) };
    return this.views;
  }
}

/** Why the rise above the baseline is unknown, or what it is measured against. */
function riseReason(p: Point): string {
  const t = p.trust!;
  if ((t.ok ? t.value : null) === null) return t.reason;
  const base = p.baseline;
  if (base.ppm === null) return base.reason;
  return base.frozen ? `against the frozen baseline (${base.frozen})` : "";
}

function pointView(p: Point): CoPointView {
  const { cfg, short: s, long: l } = p;
  const t = p.trust!;
  const short = s.result();
  const long = l.result();
  let store: CoStoreView | null = null;
  if (cfg.store) {
    const gr = p.graham ?? storeGraham(cfg.store, t.ok ? t.value : null, p.o2!, p.n2);
    store = { riseLongPpmPerH: p.riseLongPpmPerH, riseReason: long.reason, o2Signal: cfg.store.o2Signal, ...gr };
  }
  return {
    id: cfg.id,
    name: cfg.name,
    unitId: cfg.unit,
    signal: cfg.signal,
    coPpm: t.ok ? t.value : null,
    gradientPpmPerMin: short.robustPpmPerMin,
    gradientLsPpmPerMin: short.lsPpmPerMin,
    gradientLongPpmPerMin: long.robustPpmPerMin,
    windowS: cfg.shortWindowS,
    transportLagS: cfg.transportLagS,
    status: short.status,
    reason: short.reason,
    short,
    long,
    baseline: { ...p.baseline.result, windowS: cfg.baseline.windowS, riseAbovePpm: p.riseAbovePpm, riseReason: riseReason(p) },
    store,
    lastRestart: p.lastRestart,
    samples: { accepted: p.accepted, duplicates: p.duplicates, outOfOrder: p.outOfOrder },
  };
}

function riseView(r: Rise): CoRiseView {
  const c = r.cfg;
  return {
    id: c.id,
    name: c.name,
    unitId: c.unit,
    inlet: c.inlet,
    outlet: c.outlet,
    transportDelayS: c.transportDelayS,
    outletPpm: r.outletPpm,
    inletPpm: r.inletPpm,
    inletAtMs: r.inletAtMs,
    inletHow: r.inletHow,
    risePpm: r.risePpm,
    status: r.risePpm === null ? "unknown" : "ok",
    reason: r.reason,
    historyPoints: r.historyPoints,
  };
}
