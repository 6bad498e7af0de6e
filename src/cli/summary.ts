// The text `millwarden check` prints for a valid config: what would be monitored.
import type { MillwardenConfig } from "../config/schema.js";
import { nfpa69LimitPctVol } from "../physics/oxygen.js";
import { derivedQuantities } from "../core/quantities.js";

export function summarizeConfig(cfg: MillwardenConfig, file: string): string {
  const lines: string[] = [];
  lines.push(`${file}: valid`);
  lines.push(`site: ${cfg.site.name}, ${cfg.site.plant} (barometric ${cfg.site.barometricPressureHPa} hPa${cfg.site.barometricSignal ? `, measured by ${cfg.site.barometricSignal}` : ""}); clock ${cfg.clock}`);
  lines.push(`storage: ${cfg.storage.path} (synchronous ${cfg.storage.synchronous}); dashboard on http://${cfg.server.host}:${cfg.server.port}`);
  for (const s of cfg.sources) lines.push(`source ${s.id}: ${s.kind} ${s.url} (MQTT ${s.protocolVersion === 5 ? "5" : "3.1.1"}, QoS ${s.qos}), ${cfg.signals.filter((x) => x.source === s.id).length} signals`);
  lines.push(`signals: ${cfg.signals.length}`);
  for (const u of cfg.units) {
    const o = u.oxygen;
    if (!o) {
      lines.push(`unit ${u.id} (${u.kind}): ${u.name}`);
      continue;
    }
    const limits: string[] = [];
    if (o.siteMaximum) limits.push(`site maximum ${o.siteMaximum.pctVol} % ${o.siteMaximum.basis}`);
    if (o.loc) limits.push(`LOC ${o.loc.pctVol} % ${o.loc.basis} -> ${nfpa69LimitPctVol(o.loc.pctVol, o.loc.monitoring).toFixed(1)} % with the NFPA 69 margin (${o.loc.monitoring})`);
    lines.push(`unit ${u.id} (${u.kind}): ${u.name}; O2 from ${o.signal} against ${limits.join(" and ")}`);
  }
  for (const d of cfg.dewPoints) lines.push(`dew point ${d.id}: ${d.name}, gas ${d.gasTemperature}, H2O ${d.h2o}${d.gaugePressure ? `, pressure ${d.gaugePressure}` : ", atmospheric"}`);
  for (const c of cfg.coPoints) lines.push(`CO point ${c.id}: ${c.name}, ${c.signal}, window ${c.windowS} s (transport lag ${c.transportLagS} s)`);
  for (const r of cfg.rules) {
    const t = Object.entries(r.tiers).map(([k, v]) => `${k} ${v}`).join(", ");
    lines.push(`rule ${r.id}: ${r.quantity} ${r.direction === "high" ? ">=" : "<="} ${t}; on-delay ${r.onDelayS} s, deadband ${r.deadband}; origin: ${r.origin}`);
  }
  lines.push(`derived quantities: ${derivedQuantities(cfg).length}`);
  lines.push("Thresholds are advisory and must come from the site's own hazard study.");
  return lines.join("\n");
}
