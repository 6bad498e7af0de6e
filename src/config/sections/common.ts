// Schema pieces every section uses.
import { z } from "zod";

export const id = z
  .string()
  .regex(/^[a-z0-9][a-z0-9_-]*(\.[a-z0-9_-]+)*$/, "expected a lowercase id of letters, digits, - and _, dot-separated");
export const text = z.string().min(1);
export const positive = z.number().positive();

/** TLS towards an MQTT broker (mqtts:// or wss://): PEM files, read at start. */
export const mqttTls = z
  .strictObject({
    /** CA certificate(s) the broker's certificate must chain to; the system's CAs when absent. */
    ca: z.string().min(1).optional(),
    /** Client certificate and its key, for a broker that asks for one. */
    cert: z.string().min(1).optional(),
    key: z.string().min(1).optional(),
    /** false accepts any broker certificate: for a bench only, warned about in the log. */
    rejectUnauthorized: z.boolean().default(true),
    /** Name the broker's certificate must carry, when it differs from the URL's host. */
    servername: z.string().min(1).optional(),
  })
  .refine((t) => (t.cert === undefined) === (t.key === undefined), { message: "cert and key go together (a client certificate and its private key)", path: ["key"] });
