// The second process of bench/ingest.ts: publishes N small JSON samples round-robin over K
// topics as fast as the socket takes them (QoS 0), each signal at 1 Hz of data time.
import mqtt from "mqtt";

const [url, nText, kText, prefix, t0Text] = process.argv.slice(2);
const n = Number(nText);
const k = Number(kText);
const t0 = Number(t0Text);
if (!url || !(n > 0) || !(k > 0) || !prefix || !(t0 > 0)) {
  process.stderr.write("usage: ingest-publisher URL N K PREFIX T0_MS\n");
  process.exit(2);
}
const client = await mqtt.connectAsync(url, { protocolVersion: 4, clean: true });
const topics = Array.from({ length: k }, (_, i) => `${prefix}/${i}`);
// Batches of 2,000 handed over at once, then a wait for the last one's callback (it comes once the
// socket took it, on 'drain' when it had to buffer): fast, and memory stays bounded.
for (let i = 0; i < n; ) {
  const end = Math.min(n, i + 2000);
  let last: Promise<void> = Promise.resolve();
  for (; i < end; i++) {
    const time = new Date(t0 + Math.floor(i / k) * 1000).toISOString();
    const body = `{"value":${(80 + (i % 97) * 0.01).toFixed(2)},"time":"${time}","quality":"good"}`;
    if (i === end - 1) last = new Promise<void>((ok) => client.publish(topics[i % k]!, body, { qos: 0 }, () => ok()));
    else client.publish(topics[i % k]!, body, { qos: 0 });
  }
  await last;
}
await client.endAsync();
process.stdout.write("done\n");
