// Engineering units on OPC UA: the EUInformation of an AnalogItem names its unit by a
// UNECE Recommendation 20 common code packed into an Int32 (OPC UA Part 8, "EUInformation":
// each character of the code is a byte, the first one highest). millwarden reads the unit
// of every node once after connecting and compares it with the config's unit; a
// difference is a warning (the config's unit is used, the server may simply not say).
export const UNECE_NAMESPACE_URI = "http://www.opcfoundation.org/UA/units/un/cefact";

/** The Int32 unitId of a UNECE common code (up to 4 ASCII characters), OPC UA Part 8. */
export function uneceUnitId(code: string): number {
  if (!/^[A-Z0-9]{1,4}$/.test(code)) throw new Error(`UNECE common code: expected 1 to 4 characters A-Z or 0-9, found ${JSON.stringify(code)}`);
  let id = 0;
  for (const ch of code) id = (id << 8) | ch.charCodeAt(0);
  return id;
}

interface UnitOnTheWire {
  /** Accepted UNECE common codes; the first is the one the simulator serves. */
  codes: string[];
  /** Accepted display names (servers that leave unitId at -1 often still name the unit). */
  symbols: string[];
}

/**
 * Config unit → what an OPC UA server may call it. Codes from UNECE Recommendation 20
 * (from memory; CEL, KEL, FAH, PAL, A97, MBR, KPA, BAR, P1, 59, MQH, KWT are checked in the
 * tests against node-opcua's standardUnits table). "state" has no unit. A test checks that
 * every unit of config/units.ts has its entry.
 */
export const OPCUA_UNITS: Readonly<Record<string, UnitOnTheWire | null>> = {
  degC: { codes: ["CEL"], symbols: ["°C", "degC", "C"] },
  K: { codes: ["KEL"], symbols: ["K"] },
  degF: { codes: ["FAH"], symbols: ["°F", "degF", "F"] },
  Pa: { codes: ["PAL"], symbols: ["Pa"] },
  hPa: { codes: ["A97"], symbols: ["hPa"] },
  mbar: { codes: ["MBR"], symbols: ["mbar"] },
  kPa: { codes: ["KPA"], symbols: ["kPa"] },
  bar: { codes: ["BAR"], symbols: ["bar"] },
  // Percent by volume: UNECE has VP; most servers use plain percent (P1).
  pctVol: { codes: ["P1", "VP"], symbols: ["%", "% vol", "%vol", "vol%", "vol %"] },
  ppm: { codes: ["59"], symbols: ["ppm", "ppmv", "ppm vol"] },
  "t/h": { codes: ["E18"], symbols: ["t/h"] },
  // Normal cubic metres have no code of their own: cubic metre per hour.
  "Nm3/h": { codes: ["MQH"], symbols: ["Nm³/h", "Nm3/h", "m³/h", "m3/h"] },
  // Actual cubic metres per hour: the same UNECE code (MQH); the symbol says which.
  "Am3/h": { codes: ["MQH"], symbols: ["Am³/h", "Am3/h", "m³/h", "m3/h"] },
  kW: { codes: ["KWT"], symbols: ["kW"] },
  pct: { codes: ["P1"], symbols: ["%"] },
  mA: { codes: ["4K"], symbols: ["mA"] },
  state: null,
};

/** What the server said about a node's unit; null fields where it did not say. */
export interface ServerUnit {
  unitId: number | null;
  displayName: string | null;
}

/**
 * Null when the server's unit agrees with the config's (or either says nothing), else a
 * sentence for the log: what the config says, what the server says.
 */
export function unitMismatch(configUnit: string, server: ServerUnit): string | null {
  const wire = Object.hasOwn(OPCUA_UNITS, configUnit) ? OPCUA_UNITS[configUnit] : null;
  if (!wire) return null;
  const saysId = server.unitId !== null && server.unitId !== -1 && server.unitId !== 0;
  const saysName = server.displayName !== null && server.displayName.trim() !== "";
  if (!saysId && !saysName) return null;
  if (saysId && wire.codes.some((c) => uneceUnitId(c) === server.unitId)) return null;
  if (saysName && wire.symbols.includes(server.displayName!.trim())) return null;
  const code = saysId ? codeOfUnitId(server.unitId!) : null;
  const said = [saysName ? `"${server.displayName}"` : null, code ? `UNECE ${code}` : saysId ? `unitId ${server.unitId}` : null].filter(Boolean).join(", ");
  return `the server gives the engineering unit as ${said}, the config says ${configUnit} (expected UNECE ${wire.codes.join(" or ")}); the config's unit is used`;
}

/** The common code behind a unitId, when it decodes to printable characters. */
export function codeOfUnitId(unitId: number): string | null {
  let s = "";
  for (let shift = 24; shift >= 0; shift -= 8) {
    const b = (unitId >>> shift) & 0xff;
    if (b === 0) continue;
    if (!/[A-Z0-9]/.test(String.fromCharCode(b))) return null;
    s += String.fromCharCode(b);
  }
  return s || null;
}
