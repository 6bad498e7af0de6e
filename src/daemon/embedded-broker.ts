// A small MQTT broker inside the process, for the demo and the tests that must run
// with no other service. It listens on loopback only, never on the standard port 1883.
import net from "node:net";
import { Aedes } from "aedes";

export interface EmbeddedBroker {
  url: string;
  port: number;
  close(): Promise<void>;
}

export async function startEmbeddedBroker(port = 0, host = "127.0.0.1"): Promise<EmbeddedBroker> {
  if (port === 1883) throw new Error("the embedded broker must not take port 1883 (the plant's or the box's own broker may need it)");
  const broker = await Aedes.createBroker();
  const server = net.createServer(broker.handle);
  await new Promise<void>((ok, fail) => {
    server.once("error", (e: NodeJS.ErrnoException) =>
      fail(new Error(e.code === "EADDRINUSE" ? `port ${host}:${port} is in use: choose another with --broker-port` : e.message)),
    );
    server.listen(port, host, () => ok());
  });
  const actual = (server.address() as net.AddressInfo).port;
  return {
    url: `mqtt://${host}:${actual}`,
    port: actual,
    close: () =>
      new Promise<void>((ok) => {
        broker.close(() => server.close(() => ok()));
        // Connected clients keep the server open; aedes.close() ends them.
      }),
  };
}
