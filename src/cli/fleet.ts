// millwarden fleet --mqtt URL [--prefix P] [--timeout S] [--every S] [--once] [--serve PORT] [--host H]
// Reads the boxes' republished topics from the site broker and prints them; reads only.
import { parseArgs } from "node:util";
import { FleetWatcher, renderFleet, serveFleet } from "../republish/fleet.js";

export class FleetUsageError extends Error {}

export async function fleetCommand(args: string[], signal: Promise<unknown>): Promise<number> {
  const { values } = parseArgs({
    args,
    options: {
      mqtt: { type: "string" },
      prefix: { type: "string", default: "millwarden" },
      timeout: { type: "string", default: "120" },
      every: { type: "string", default: "5" },
      once: { type: "boolean", default: false },
      serve: { type: "string" },
      host: { type: "string", default: "127.0.0.1" },
      username: { type: "string" },
      "password-env": { type: "string" },
    },
    strict: true,
  });
  if (!values.mqtt || !/^(mqtt|mqtts|ws|wss):\/\//.test(values.mqtt)) throw new FleetUsageError("--mqtt URL is required (mqtt://, mqtts://, ws:// or wss://): the site broker the boxes republish to");
  const pos = (v: string, name: string) => {
    const n = Number(v);
    if (!Number.isFinite(n) || n <= 0) throw new FleetUsageError(`--${name} expects a positive number of seconds; found "${v}"`);
    return n;
  };
  const timeoutS = pos(values.timeout, "timeout");
  const everyS = pos(values.every, "every");
  const password = values["password-env"] ? process.env[values["password-env"]] : undefined;
  const watcher = new FleetWatcher({ url: values.mqtt, prefix: values.prefix, timeoutS, ...(values.username ? { username: values.username } : {}), ...(password ? { password } : {}) });
  await watcher.start();
  try {
    if (values.once) {
      // Retained messages (status, states, advisory views) arrive right after subscribing.
      await new Promise((r) => setTimeout(r, everyS * 1000));
      process.stdout.write(renderFleet(watcher.view(), Date.now()));
      return 0;
    }
    const server = values.serve !== undefined ? await serveFleet(watcher, values.host, pos(values.serve, "serve")) : null;
    if (server) process.stderr.write(`fleet page at ${server.url}\n`);
    const timer = setInterval(() => process.stdout.write(`\n${new Date().toISOString()}\n${renderFleet(watcher.view(), Date.now())}`), everyS * 1000);
    await signal;
    clearInterval(timer);
    await server?.close();
    return 0;
  } finally {
    await watcher.stop();
  }
}
