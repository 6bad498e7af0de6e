#!/usr/bin/env node
// Entry point of the `millwarden` command: the compiled CLI (npm ci runs the build).
import { main } from "../dist/cli/main.js";

main(process.argv.slice(2)).then(
  (code) => process.exit(code),
  (e) => {
    process.stderr.write(`millwarden: ${e.stack ?? e.message}\n`);
    process.exit(1);
  },
);
