//! The results store's one schema, as numbered migrations written once for SQLite and PostgreSQL
//! (the few words the two spell differently are filled in per dialect).

/// The SQL dialect of a backend.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Dialect {
    /// SQLite 3 (bundled).
    Sqlite,
    /// PostgreSQL 12 or later.
    Postgres,
}

impl Dialect {
    /// The migration's text in this dialect: `{id}` an auto-numbered key, `{real}` a double, and
    /// `{without_rowid}` SQLite's clustered-key tables (where figure rows are smallest).
    pub(crate) fn render(self, sql: &str) -> String {
        let (id, real, without) = match self {
            Dialect::Sqlite => (
                "INTEGER PRIMARY KEY AUTOINCREMENT",
                "REAL",
                " WITHOUT ROWID",
            ),
            Dialect::Postgres => ("BIGSERIAL PRIMARY KEY", "DOUBLE PRECISION", ""),
        };
        sql.replace("{id}", id)
            .replace("{real}", real)
            .replace("{without_rowid}", without)
    }

    /// A statement with `$1, $2, ...` parameters in this dialect (SQLite numbers them `?1, ?2`).
    pub(crate) fn params(self, sql: &str) -> String {
        match self {
            Dialect::Postgres => sql.to_string(),
            Dialect::Sqlite => sql.replace('$', "?"),
        }
    }
}

/// The migrations in order; the store's version is the number applied. A store newer than this
/// build is refused rather than written with an older layout.
pub(crate) const MIGRATIONS: &[&str] = &[
    // 1: runs, devices, conditions, metrics, results, figures, warnings, failures, limits, and the
    // per-lot statistics that control charts read (computed once, when the lot is recorded).
    "CREATE TABLE runs (
        id {id},
        fingerprint TEXT NOT NULL UNIQUE,
        lot TEXT NOT NULL,
        title TEXT NOT NULL,
        plan_fingerprint TEXT,
        limits_fingerprint TEXT,
        started_at TEXT,
        ended_at TEXT NOT NULL,
        tool_version TEXT NOT NULL,
        host TEXT NOT NULL,
        devices BIGINT NOT NULL,
        results BIGINT NOT NULL,
        passed BIGINT NOT NULL,
        failed BIGINT NOT NULL,
        failed_guardband BIGINT NOT NULL,
        untested BIGINT NOT NULL,
        errors BIGINT NOT NULL
    );
    CREATE TABLE devices (id {id}, name TEXT NOT NULL UNIQUE);
    CREATE TABLE conditions (id {id}, name TEXT NOT NULL UNIQUE);
    CREATE TABLE metrics (
        id {id},
        key TEXT NOT NULL UNIQUE,
        label TEXT NOT NULL,
        unit TEXT NOT NULL,
        better TEXT NOT NULL
    );
    CREATE TABLE results (
        run_id BIGINT NOT NULL REFERENCES runs(id),
        seq BIGINT NOT NULL,
        device_id BIGINT NOT NULL REFERENCES devices(id),
        condition_id BIGINT NOT NULL REFERENCES conditions(id),
        verdict TEXT NOT NULL,
        reason TEXT NOT NULL,
        error TEXT,
        PRIMARY KEY (run_id, seq)
    ){without_rowid};
    CREATE INDEX results_device ON results (device_id);
    CREATE TABLE figures (
        run_id BIGINT NOT NULL,
        seq BIGINT NOT NULL,
        metric_id BIGINT NOT NULL,
        value {real} NOT NULL,
        uncertainty {real},
        PRIMARY KEY (run_id, seq, metric_id)
    ){without_rowid};
    CREATE TABLE warnings (
        run_id BIGINT NOT NULL,
        seq BIGINT NOT NULL,
        text TEXT NOT NULL
    );
    CREATE INDEX warnings_result ON warnings (run_id, seq);
    CREATE TABLE failures (
        run_id BIGINT NOT NULL,
        seq BIGINT NOT NULL,
        metric TEXT NOT NULL,
        bound TEXT,
        limit_value {real},
        value {real},
        margin {real},
        guardband {real} NOT NULL,
        outcome TEXT NOT NULL
    );
    CREATE INDEX failures_run ON failures (run_id);
    CREATE TABLE limits (
        run_id BIGINT NOT NULL REFERENCES runs(id),
        condition TEXT NOT NULL,
        metric TEXT NOT NULL,
        low {real},
        high {real},
        guardband {real} NOT NULL
    );
    CREATE INDEX limits_run ON limits (run_id);
    CREATE TABLE lot_stats (
        run_id BIGINT NOT NULL REFERENCES runs(id),
        condition_id BIGINT NOT NULL,
        metric_id BIGINT NOT NULL,
        n BIGINT NOT NULL,
        mean {real} NOT NULL,
        std {real},
        min {real} NOT NULL,
        max {real} NOT NULL,
        PRIMARY KEY (run_id, condition_id, metric_id)
    ){without_rowid};
    CREATE INDEX lot_stats_metric ON lot_stats (condition_id, metric_id);",
];

/// The schema version this build writes.
pub(crate) fn current_version() -> i64 {
    MIGRATIONS.len() as i64
}
