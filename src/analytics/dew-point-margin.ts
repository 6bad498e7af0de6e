// Water dew point and its margin at one location: gas temperature minus the dew
// point of the gas at its absolute pressure (barometric plus the local gauge pressure).
import type { DewPointConfig } from "../config/schema.js";
import type { DewPointView } from "../core/types.js";
import { absolutePressurePa, dewPointMarginK, waterDewPointC } from "../physics/dewpoint.js";
import type { Trust } from "./signal-state.js";

export function evaluateDewPoint(
  cfg: DewPointConfig,
  gasTemp: Trust,
  h2o: Trust,
  gaugePa: Trust | null,
  barometricPa: number,
): DewPointView {
  const view: DewPointView = {
    id: cfg.id,
    name: cfg.name,
    unitId: cfg.unit,
    gasTempC: gasTemp.ok ? gasTemp.value : null,
    h2oPctVol: h2o.ok ? h2o.value : null,
    absPressurePa: null,
    dewPointC: null,
    marginK: null,
    status: "unknown",
    reason: "",
  };
  const untrusted = [gasTemp, h2o, gaugePa].filter((t): t is Trust => t !== null && !t.ok);
  if (untrusted.length) return { ...view, reason: untrusted.map((t) => t.reason).join("; ") };
  try {
    const pAbs = absolutePressurePa(barometricPa, gaugePa?.value ?? 0);
    const dew = waterDewPointC(h2o.value!, pAbs);
    return {
      ...view,
      absPressurePa: pAbs,
      dewPointC: dew,
      marginK: dewPointMarginK(gasTemp.value!, dew),
      status: "ok",
      reason: `IAPWS-IF97 saturation line at ${(pAbs / 100).toFixed(1)} hPa absolute`,
    };
  } catch (e) {
    return { ...view, reason: (e as Error).message };
  }
}
