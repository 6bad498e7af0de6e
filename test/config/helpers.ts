// Shared by the config tests: the problems a broken config gives, and where a line is.
import { expect } from "vitest";
import { ConfigError, parseConfig, type ConfigProblem } from "../../src/config/load.js";

/** The site and MQTT source every small test config starts with (8 lines). */
export const SITE_AND_SOURCE = `site:
  name: Testfield
  plant: Line 1
  barometricPressureHPa: 1013
sources:
  - id: m
    kind: mqtt
    url: mqtt://127.0.0.1:18831
`;

/** Parse `text` as plant.yaml and return its problems; fails the test if it parses. */
export function problemsOf(text: string): ConfigProblem[] {
  try {
    parseConfig(text, "plant.yaml");
  } catch (e) {
    expect(e).toBeInstanceOf(ConfigError);
    return (e as ConfigError).problems;
  }
  throw new Error("expected a ConfigError");
}

/** 1-based number of the first line containing `marker`. */
export function lineOf(text: string, marker: string): number {
  const i = text.split("\n").findIndex((l) => l.includes(marker));
  if (i < 0) throw new Error(`"${marker}" is not in the text`);
  return i + 1;
}
