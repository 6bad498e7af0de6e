// The text `millwarden check` prints for a valid config: what would be monitored.
import type { MillwardenConfig } from "../config/schema.js";
import { nfpa69LimitPctVol } from "../physics/oxygen.js";
import { derivedQuantities } from "../core/quantities.js";
import { o2SignalIds } from "../config/sections/oxygen.js";

export function summarizeConfig(cfg: MillwardenConfig, file: string): string {
  const lines: string[] = [];
  lines.push(`${file}: valid`);
  lines.push(`site: ${cfg.site.name}, ${cfg.site.plant} (barometric ${cfg.site.barometricPressureHPa} hPa${cfg.site.barometricSignal ? `, measured by ${cfg.site.barometricSignal}` : ""}); clock ${cfg.clock}`);
  lines.push(`storage: ${cfg.storage.path} (synchronous ${cfg.storage.synchronous}); dashboard on http://${cfg.server.host}:${cfg.server.port}`);
  for (const s of cfg.sources) {
    const n = cfg.signals.filter((x) => x.source === s.id).length;
    if (s.kind === "mqtt") lines.push(`source ${s.id}: mqtt ${s.url} (MQTT ${s.protocolVersion === 5 ? "5" : "3.1.1"}, QoS ${s.qos}), ${n} signals`);
    else lines.push(`source ${s.id}: opcua ${s.endpointUrl} (security ${s.securityMode}${s.securityMode === "None" ? ": NOT SECURED" : `, ${s.securityPolicy}`}), ${n} signals`);
  }
  lines.push(`signals: ${cfg.signals.length}`);
  const rp = cfg.republish;
  if (rp) lines.push(`republish: ${rp.url} under ${rp.prefix}/${rp.box}/ (QoS ${rp.qos}${rp.sparkplug ? `; Sparkplug B node ${rp.sparkplug.group}/${rp.sparkplug.node}` : ""}); publishing only, never to the control system`);
  if (cfg.opcuaServer) lines.push(`OPC UA server (read only): opc.tcp://${cfg.opcuaServer.host}:${cfg.opcuaServer.port} (${cfg.opcuaServer.securityModes.join(", ")})`);
  for (const u of cfg.units) {
    const o = u.oxygen;
    if (!o) {
      lines.push(`unit ${u.id} (${u.kind}): ${u.name}`);
      continue;
    }
    const limits: string[] = [];
    if (o.siteMaximum) limits.push(`site maximum ${o.siteMaximum.pctVol} % ${o.siteMaximum.basis}`);
    if (o.loc) {
      const allowance = o.loc.temperatureAllowancePctPt ?? 0;
      const limit = nfpa69LimitPctVol(o.loc.pctVol, o.loc.monitoring) - allowance;
      limits.push(`LOC ${o.loc.pctVol} % ${o.loc.basis} -> ${limit.toFixed(1)} % with the NFPA 69 margin (${o.loc.monitoring})${allowance ? ` less a temperature allowance of ${allowance} %-pt` : ""}`);
    }
    const ids = o2SignalIds(o);
    const from = ids.length > 1 ? `${ids.join(", ")} (${o.voting})` : ids[0];
    lines.push(`unit ${u.id} (${u.kind}): ${u.name}; O2 from ${from} against ${limits.join(" and ")}${o.purge ? `; purge of ${o.purge.volumeM3} m³ by ${o.purge.inertFlowSignal}` : ""}`);
  }
  for (const d of cfg.dewPoints) lines.push(`dew point ${d.id}: ${d.name}, gas ${d.gasTemperature}, moisture from ${d.moisture}${d.compareWith.length ? ` (compared with ${d.compareWith.join(", ")})` : ""}${d.gaugePressure ? `, pressure ${d.gaugePressure}` : ", atmospheric"}`);
  for (const c of cfg.coPoints) lines.push(`CO point ${c.id}: ${c.name}, ${c.signal}, windows ${c.shortWindowS} s and ${c.longWindowS} s (transport lag ${c.transportLagS} s)`);
  for (const r of cfg.coRises) lines.push(`CO rise ${r.id}: ${r.name}, ${r.outlet} minus ${r.inlet} ${r.transportDelayS} s earlier`);
  for (const m of cfg.moistureSources) lines.push(`moisture source ${m.id}: ${m.name} (${m.kind})`);
  for (const a of cfg.acidDewPoints) lines.push(`acid dew point ${a.id}: ${a.name}, ${a.method}, SO3 from ${a.so3.from}`);
  for (const u of cfg.units) if (u.phase) lines.push(`phase of ${u.id}: from ${[u.phase.drivePower, u.phase.feed, u.phase.inletTemp, u.phase.inertFlow, u.phase.trip].filter(Boolean).join(", ")}`);
  for (const a of cfg.analysers) lines.push(`analyser ${a.id}: ${a.name}, frozen after ${a.frozenWindowS} s within ${a.frozenEpsilon}`);
  for (const r of cfg.rules) {
    const when = r.states
      ? `${r.quantity} is ${r.states.join(" or ")} (${r.tier})`
      : `${r.quantity} ${r.direction === "high" ? ">=" : "<="} ${Object.entries(r.tiers ?? {}).map(([k, v]) => `${k} ${v}`).join(", ")}`;
    const extras = [r.offDelayS ? `off-delay ${r.offDelayS} s` : "", r.reAlertS ? `re-alert ${r.reAlertS} s` : "", r.latching ? "latching" : "", r.phases ? `in ${r.phases.join(", ")}` : ""].filter(Boolean);
    lines.push(`rule ${r.id}: ${when}; on-delay ${r.onDelayS} s, deadband ${r.deadband}${extras.length ? `, ${extras.join(", ")}` : ""}; origin: ${r.origin}`);
  }
  if (cfg.site.coal) lines.push(`coal ground: ${cfg.site.coal.type}${cfg.site.coal.origin ? ` (${cfg.site.coal.origin})` : ""}`);
  lines.push(`derived quantities: ${derivedQuantities(cfg).length}`);
  lines.push("Thresholds are advisory and must come from the site's own hazard study.");
  return lines.join("\n");
}
