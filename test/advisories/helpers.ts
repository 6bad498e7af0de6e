// Shared by the advisory tests: a rule with every field set, and the default policy.
import { configSchema, type AdvisoryPolicy, type RuleConfig } from "../../src/config/schema.js";

/** The advisoryPolicy defaults, as the config parser fills them in. */
export const POLICY: AdvisoryPolicy = configSchema.shape.advisoryPolicy.parse(undefined);

export const testRule = (id: string, over: Partial<RuleConfig> = {}): RuleConfig => ({
  id,
  title: id,
  quantity: `q.${id}`,
  direction: "high",
  tiers: { caution: 5 },
  deadband: 0,
  onDelayS: 0,
  offDelayS: 0,
  latching: false,
  position: "control-room",
  cause: "c",
  consequence: "c",
  check: "c",
  origin: "test",
  ...over,
});
