// Regenerates input.csv in every golden scenario folder from the simulator:
//
//   npx tsx test/scenarios/generate.ts            every folder
//   npx tsx test/scenarios/generate.ts <folder>…  only these
//
// Each folder's scenario.json says which config (its signals map tags to signal ids: the
// MQTT topic ends in the tag), which simulator scenario, which seed and how many seconds.
// The samples are those the daemon would receive (see harness.ts), written with
// formatHistoryCsv. After a change here, regenerate expected.jsonl too:
//   UPDATE_GOLDEN=1 npx vitest run test/scenarios
import { writeFileSync } from "node:fs";
import { join } from "node:path";
import { formatHistoryCsv } from "../../src/sources/csv.js";
import { SCENARIOS_DIR, configOf, readScenarioSpec, scenarioFolders, simulatedSamples } from "./harness.js";

const all = scenarioFolders();
const wanted = process.argv.slice(2);
for (const w of wanted) {
  if (!all.includes(w)) throw new Error(`no scenario folder "${w}" under ${SCENARIOS_DIR}: expected one of ${all.join(", ")}`);
}
for (const folder of wanted.length > 0 ? wanted : all) {
  const spec = readScenarioSpec(folder);
  // Ten significant digits: the instruments resolve far less, and unit conversion noise
  // (e.g. -1992.0000000000002 Pa from mbar) would only bloat the files.
  const samples = simulatedSamples(spec, configOf(folder, spec)).map((s) =>
    Number.isFinite(s.value) ? { ...s, value: Number(s.value.toPrecision(10)) } : s,
  );
  const file = join(SCENARIOS_DIR, folder, "input.csv");
  writeFileSync(file, formatHistoryCsv(samples));
  console.log(`${file}: ${samples.length} samples of "${spec.sim}" (seed ${spec.seed}, ${spec.durationS} s)`);
}
