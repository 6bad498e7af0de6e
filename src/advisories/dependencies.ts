// Which signals a rule's quantity is computed from, read off the config: a rule is suppressed
// by design while its value is unknown because one of these is in function check (calibration,
// blowback, multiplexer switch), instead of staying silent for no visible reason.
//
// A derived key "<family>.<id>.<quantity>" names a config entry by its id; every string in that
// entry that is a signal id is a dependency, and every string that is the id of another entry
// (a CO rise's inlet and outlet points, a location's moisture source) is followed.
import type { MillwardenConfig } from "../config/schema.js";

type Entry = { id: string } & Record<string, unknown>;

function entriesOf(cfg: MillwardenConfig, family: string): Entry[] {
  const list: unknown[] =
    family === "dewpoint"
      ? cfg.dewPoints
      : family === "moisture"
        ? cfg.moistureSources
        : family === "aciddewpoint"
          ? cfg.acidDewPoints
          : family === "co"
            ? cfg.coPoints
            : family === "co-rise"
              ? cfg.coRises
              : family === "o2"
                ? cfg.units
                : [];
  return list as Entry[];
}

export function quantitySignals(cfg: MillwardenConfig, quantity: string): string[] {
  const signalIds = new Set(cfg.signals.map((s) => s.id));
  if (signalIds.has(quantity)) return [quantity];
  const [family, id] = quantity.split(".");
  if (family === undefined || id === undefined) return [];
  const byId = new Map<string, Entry>();
  for (const list of [cfg.dewPoints, cfg.moistureSources, cfg.acidDewPoints, cfg.coPoints, cfg.coRises] as unknown as Entry[][])
    for (const e of list) byId.set(e.id, e);
  const start = family === "dewpoint" && id === "lowest" ? (cfg.dewPoints as unknown as Entry[]) : entriesOf(cfg, family).filter((e) => e.id === id);
  // O2 keys name a unit: only its oxygen section counts (the phase inputs do not feed the O2 value).
  const roots: unknown[] = family === "o2" ? start.map((u) => u.oxygen) : start;

  const found = new Set<string>();
  const seen = new Set<unknown>();
  const walk = (v: unknown): void => {
    if (v === null || v === undefined || seen.has(v)) return;
    if (typeof v === "string") {
      if (signalIds.has(v)) found.add(v);
      else if (byId.has(v)) walk(byId.get(v));
      return;
    }
    if (typeof v !== "object") return;
    seen.add(v);
    for (const x of Array.isArray(v) ? v : Object.values(v)) walk(x);
  };
  for (const r of roots) walk(r);
  return [...found].sort();
}
