// What the HTTP server needs from the daemon. The server holds no plant state of its
// own: it reads through these functions, so tests can hand it a small in-memory
// implementation and the daemon hands it the live one.
import type { AdvisoryTransition, AdvisoryView, CommandKind, LiveMessage, PlantState, Quality, Role } from "../core/types.js";

export interface TrendPoint {
  tMs: number;
  value: number | null;
  quality: Quality | "ok" | "unknown";
  /** The band a downsampled point stands for. */
  min?: number | null;
  max?: number | null;
}

export interface HealthView {
  status: "ok" | "degraded";
  advisoryOnly: string;
  startedAtMs: number;
  nowMs: number;
  sources: { id: string; kind: string; connected: boolean; samples: number; rejected: number; lastError: string | null }[];
  historian: { state: "ok" | "degraded"; queueDepth: number; rowsWritten: number; lastError: string | null };
}

export type AckResult =
  | { ok: true; advisory: AdvisoryView | null }
  | { ok: false; status: 400 | 403 | 404 | 409; error: string };

/** What a person sends with a command on an advisory (POST /api/advisories/:id/<command>). */
export interface AdvisoryCommandBody {
  by: string;
  /** ack, reset: an optional note. */
  note?: string;
  /** shelve, out-of-service (required); unshelve, return-to-service (optional). */
  reason?: string;
  /** shelve: timed, in seconds (at most advisoryPolicy.maxShelveS). */
  durationS?: number;
  /** shelve: until the condition clears (within the maximum). */
  oneShot?: boolean;
  /** Until logins exist, the role is taken as declared; out-of-service needs "engineer". */
  role?: Role;
}

export interface AppDeps {
  getState(): PlantState;
  health(): HealthView;
  /** Current advisories, and the latest transitions from the historian (newest first). */
  advisories(opts: { limit: number }): { active: AdvisoryView[]; history: AdvisoryTransition[] };
  /** A command on an advisory, timed by the daemon; the result carries the advisory as it is now (null once normal). */
  command(advisoryId: string, kind: CommandKind, body: AdvisoryCommandBody): AckResult;
  /** Raw signal ids and derived keys both, about `points` points; throws UnknownSeriesError for anything else. */
  trend(series: string, fromMs: number, toMs: number, points: number): TrendPoint[];
  /** Register for live messages; returns the unsubscribe function. */
  subscribe(listener: (msg: LiveMessage) => void): () => void;
  /** Folder with the browser side (index.html and its assets). */
  dashboardDir: string;
  /** GET /metrics: the Prometheus text exposition format and its content type (absent: 404). */
  metrics?(): Promise<{ contentType: string; body: string }>;
}

export class UnknownSeriesError extends Error {
  constructor(public readonly series: string) {
    super(`unknown series "${series}": expected a signal id or a derived key listed in GET /api/state`);
    this.name = "UnknownSeriesError";
  }
}
