// Test runner settings. Timeouts are generous because several suites start real
// brokers, servers and child processes on a two-core box; speed is measured by
// `npm run bench`, never by a test's timeout.
import { defineConfig } from "vitest/config";

export default defineConfig({
  test: {
    testTimeout: 30_000,
    hookTimeout: 30_000,
  },
});
