// Water dew point monitor: the dew point and its margin at every configured location.
import type { DewPointConfig } from "../config/schema.js";
import type { Monitor, TickContext } from "../core/calculator.js";
import { evaluateDewPoint } from "./dew-point-margin.js";

export interface DewPointView {
  id: string;
  name: string;
  unitId: string;
  gasTempC: number | null;
  h2oPctVol: number | null;
  absPressurePa: number | null;
  dewPointC: number | null;
  marginK: number | null;
  status: "ok" | "unknown";
  reason: string;
}

export class DewPointMonitor implements Monitor {
  private views: DewPointView[] = [];

  constructor(
    private readonly locations: DewPointConfig[],
    /** Barometric pressure at the site, Pa: a measured signal while trusted, else the configured value. */
    private readonly barometric: { signal?: string | undefined; fallbackPa: number },
  ) {}

  tick(ctx: TickContext): void {
    const baro = this.barometric.signal ? ctx.trust(this.barometric.signal) : null;
    const barometricPa = baro?.ok && baro.value !== null ? baro.value : this.barometric.fallbackPa;
    this.views = this.locations.map((d) => {
      const v = evaluateDewPoint(d, ctx.trust(d.gasTemperature), ctx.trust(d.h2o), d.gaugePressure ? ctx.trust(d.gaugePressure) : null, barometricPa);
      ctx.emit(`dewpoint.${d.id}.dewPointC`, v.dewPointC, v.reason);
      ctx.emit(`dewpoint.${d.id}.marginK`, v.marginK, v.reason);
      return v;
    });
  }

  view(): { dewPoints: DewPointView[] } {
    return { dewPoints: this.views };
  }
}
