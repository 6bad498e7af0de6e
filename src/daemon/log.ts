// Logging at the edge. JSON lines (pino) for a service; plain lines for a person at a terminal.
import pino from "pino";

export interface Logger {
  info(msg: string): void;
  warn(msg: string): void;
  error(msg: string): void;
}

export function makeLogger(format: "json" | "text", level: "info" | "warn" | "error" = "info"): Logger {
  if (format === "json") {
    const p = pino({ level, base: { app: "millwarden" } });
    return { info: (m) => p.info(m), warn: (m) => p.warn(m), error: (m) => p.error(m) };
  }
  const rank = { info: 0, warn: 1, error: 2 } as const;
  const line = (lv: keyof typeof rank, m: string) => {
    if (rank[lv] < rank[level]) return;
    const out = lv === "info" ? process.stdout : process.stderr;
    out.write(`${new Date().toISOString()} ${lv.padEnd(5)} ${m}\n`);
  };
  return { info: (m) => line("info", m), warn: (m) => line("warn", m), error: (m) => line("error", m) };
}

/** A logger that keeps lines in memory (tests). */
export function memoryLogger(): Logger & { lines: string[] } {
  const lines: string[] = [];
  return { lines, info: (m) => lines.push(`info ${m}`), warn: (m) => lines.push(`warn ${m}`), error: (m) => lines.push(`error ${m}`) };
}
