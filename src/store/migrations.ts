// Numbered schema migrations of the historian database.
//
// Rules: a migration, once released, is never edited; a change is a new migration with the
// next number. Each runs in its own transaction together with its row in schema_migrations,
// so a file is always at exactly one known version. PRAGMA user_version mirrors the version
// so that the sqlite3 shell shows it without a query.

export interface Migration {
  version: number;
  description: string;
  sql: string;
}

/** Marks a file as ours in the meta table: a file without it is refused, never "migrated". */
export const APPLICATION_NAME = "millwarden";

export const MIGRATIONS: readonly Migration[] = [
  {
    version: 1,
    description: "series, samples, derived values, advisory transitions, meta",
    sql: `
      CREATE TABLE meta (
        key   TEXT PRIMARY KEY,
        value TEXT NOT NULL
      ) WITHOUT ROWID;

      -- Signals and derived keys get small integer ids: a row of samples then costs
      -- about 28 bytes instead of repeating a name on every row.
      CREATE TABLE series (
        id   INTEGER PRIMARY KEY,
        kind TEXT NOT NULL CHECK (kind IN ('signal', 'derived')),
        name TEXT NOT NULL,
        UNIQUE (kind, name)
      );

      -- quality: 0 good, 1 uncertain, 2 bad (the OPC UA StatusCode severity bits).
      -- value NULL when the source value was NaN or infinite.
      CREATE TABLE samples (
        signal_id INTEGER NOT NULL,
        t_ms      INTEGER NOT NULL,
        value     REAL,
        quality   INTEGER NOT NULL,
        recv_ms   INTEGER NOT NULL,
        PRIMARY KEY (signal_id, t_ms)
      ) WITHOUT ROWID;

      -- status: 0 ok, 1 unknown.
      CREATE TABLE derived (
        series_id INTEGER NOT NULL,
        t_ms      INTEGER NOT NULL,
        value     REAL,
        status    INTEGER NOT NULL,
        PRIMARY KEY (series_id, t_ms)
      ) WITHOUT ROWID;

      -- The audit trail of advisories: rows are only ever inserted.
      CREATE TABLE advisory_transitions (
        id          INTEGER PRIMARY KEY,
        at_ms       INTEGER NOT NULL,
        advisory_id TEXT NOT NULL,
        rule_id     TEXT NOT NULL,
        transition  TEXT NOT NULL,
        from_state  TEXT NOT NULL,
        to_state    TEXT NOT NULL,
        tier        TEXT NOT NULL,
        value       REAL,
        limit_value REAL,
        by_user     TEXT NOT NULL,
        why         TEXT NOT NULL
      );
      CREATE INDEX advisory_transitions_advisory_at ON advisory_transitions (advisory_id, at_ms);
      CREATE INDEX advisory_transitions_at ON advisory_transitions (at_ms);
    `,
  },
];

export const LATEST_SCHEMA_VERSION: number = MIGRATIONS.reduce((m, x) => Math.max(m, x.version), 0);

/** Created before migration 1, in the same transaction. */
export const SCHEMA_MIGRATIONS_SQL = `
  CREATE TABLE schema_migrations (
    version       INTEGER PRIMARY KEY,
    description   TEXT NOT NULL,
    applied_at_ms INTEGER NOT NULL
  );
`;
