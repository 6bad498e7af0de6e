// CO monitor: the rate of rise at every configured measuring point.
import type { CoPointConfig } from "../config/schema.js";
import type { Monitor, TickContext } from "../core/calculator.js";
import type { Sample } from "../core/types.js";
import { CoGradient } from "./co-gradient.js";

export interface CoPointView {
  id: string;
  name: string;
  unitId: string;
  signal: string;
  coPpm: number | null;
  gradientPpmPerMin: number | null;
  windowS: number;
  status: "ok" | "unknown";
  reason: string;
}

export class CoMonitor implements Monitor {
  private readonly points: CoGradient[];
  private readonly bySignal = new Map<string, CoGradient[]>();
  private views: CoPointView[] = [];

  constructor(cfg: CoPointConfig[]) {
    this.points = cfg.map((c) => new CoGradient(c));
    for (const g of this.points) {
      const list = this.bySignal.get(g.cfg.signal) ?? [];
      list.push(g);
      this.bySignal.set(g.cfg.signal, list);
    }
  }

  ingest(s: Sample): void {
    const list = this.bySignal.get(s.signal);
    if (list) for (const g of list) g.add(s);
  }

  tick(ctx: TickContext): void {
    this.views = this.points.map((g) => {
      const t = ctx.trust(g.cfg.signal);
      const r = g.evaluate(t.ok, t.reason);
      ctx.emit(`co.${g.cfg.id}.gradientPpmPerMin`, r.gradientPpmPerMin, r.reason);
      return {
        id: g.cfg.id,
        name: g.cfg.name,
        unitId: g.cfg.unit,
        signal: g.cfg.signal,
        coPpm: t.ok ? t.value : null,
        gradientPpmPerMin: r.gradientPpmPerMin,
        windowS: g.cfg.windowS,
        status: r.status,
        reason: r.reason,
      };
    });
  }

  view(): { coPoints: CoPointView[] } {
    return { coPoints: this.views };
  }
}
