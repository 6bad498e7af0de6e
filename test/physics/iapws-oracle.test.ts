// Oracle: python3-iapws (Debian package, J. J. Gómez Romera's IAPWS implementation),
// functions iapws.iapws97._PSat_T (MPa from K) and _TSat_P (K from MPa), eq. 30/31 of
// IAPWS R7-97. The reference table is generated at test time; when no Python with
// iapws is installed the test is skipped (the only conditional skip in this suite).

import { execFileSync } from "node:child_process";
import { describe, expect, it } from "vitest";
import {
  SATURATION_MAX_PRESSURE_PA,
  SATURATION_MAX_TEMP_K,
  SATURATION_MIN_PRESSURE_PA,
  SATURATION_MIN_TEMP_K,
  saturationPressurePa,
  saturationTemperatureK,
} from "../../src/physics/index.js";

// A pyenv shim may shadow the system Python that carries the Debian package.
const PYTHON_CANDIDATES = ["python3", "/usr/bin/python3"];

function findPythonWithIapws(): string | null {
  for (const python of PYTHON_CANDIDATES) {
    try {
      execFileSync(python, ["-c", "import iapws.iapws97"], { stdio: "ignore", timeout: 20_000 });
      return python;
    } catch {
      // not this one
    }
  }
  return null;
}

const python = findPythonWithIapws();
const haveIapws = python !== null;

const N_POINTS = 400;
const temperaturesK = Array.from(
  { length: N_POINTS + 1 },
  (_, i) => SATURATION_MIN_TEMP_K + ((SATURATION_MAX_TEMP_K - SATURATION_MIN_TEMP_K) * i) / N_POINTS,
);
// iapws refuses p below its own lower limit 611.212677 Pa; start a hair above ours.
const lnMin = Math.log(SATURATION_MIN_PRESSURE_PA * (1 + 1e-9));
const lnMax = Math.log(22.064e6);
// The last point is exactly 22.064 MPa: exp(ln p) may round just above iapws's upper limit.
const pressuresPa = Array.from({ length: N_POINTS + 1 }, (_, i) =>
  i === N_POINTS ? 22.064e6 : Math.exp(lnMin + ((lnMax - lnMin) * i) / N_POINTS),
);

const SCRIPT = `
import json, sys
from iapws.iapws97 import _PSat_T, _TSat_P
req = json.load(sys.stdin)
json.dump({"ps": [_PSat_T(t) * 1e6 for t in req["t"]], "ts": [_TSat_P(p / 1e6) for p in req["p"]]}, sys.stdout)
`;

describe("against python3-iapws over the whole Region 4 range", () => {
  it.skipIf(!haveIapws)("ps(T) and Ts(p) agree within 1e-9 relative at 401 points each", () => {
    const out = execFileSync(python as string, ["-c", SCRIPT], {
      input: JSON.stringify({ t: temperaturesK, p: pressuresPa }),
      encoding: "utf8",
      timeout: 30_000,
    });
    const ref = JSON.parse(out) as { ps: number[]; ts: number[] };
    expect(ref.ps).toHaveLength(temperaturesK.length);
    expect(ref.ts).toHaveLength(pressuresPa.length);
    let maxRelPs = 0;
    let maxRelTs = 0;
    temperaturesK.forEach((t, i) => {
      maxRelPs = Math.max(maxRelPs, Math.abs(saturationPressurePa(t) / (ref.ps[i] as number) - 1));
    });
    pressuresPa.forEach((p, i) => {
      maxRelTs = Math.max(maxRelTs, Math.abs(saturationTemperatureK(p) / (ref.ts[i] as number) - 1));
    });
    expect(maxRelPs).toBeLessThan(1e-9);
    expect(maxRelTs).toBeLessThan(1e-9);
    // The table spans the range the library accepts.
    expect(pressuresPa[pressuresPa.length - 1]).toBeLessThanOrEqual(SATURATION_MAX_PRESSURE_PA);
  });
});
