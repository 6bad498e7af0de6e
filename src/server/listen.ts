// Binds the app to a port. Kept apart from buildApp so tests use inject() without sockets.
import type { FastifyInstance } from "fastify";
import { buildApp, type BuildAppOptions } from "./app.js";
import type { AppDeps } from "./deps.js";

export interface StartServerOptions extends BuildAppOptions {
  /** Loopback by default: exposing the dashboard on a plant network is a deliberate choice. */
  host?: string;
  /** 0 picks a free port (tests). */
  port?: number;
}

export interface RunningServer {
  app: FastifyInstance;
  /** Base URL actually bound, e.g. http://127.0.0.1:8480 */
  url: string;
  /** Closes live clients and the listener; resolves when the port is free. */
  close(): Promise<void>;
}

export async function startServer(deps: AppDeps, opts: StartServerOptions = {}): Promise<RunningServer> {
  const { host = "127.0.0.1", port = 8480, ...appOpts } = opts;
  if (!Number.isInteger(port) || port < 0 || port > 65535) {
    throw new Error(`server port: expected an integer from 0 to 65535, found ${String(port)}`);
  }
  const app = await buildApp(deps, appOpts);
  try {
    await app.listen({ host, port });
  } catch (err) {
    await app.close();
    throw err;
  }
  const address = app.server.address();
  if (address === null || typeof address === "string") {
    await app.close();
    throw new Error(`server: expected a TCP address after listening, found ${String(address)}`);
  }
  const hostPart = address.family === "IPv6" ? `[${address.address}]` : address.address;
  return { app, url: `http://${hostPart}:${address.port}`, close: () => app.close() };
}
