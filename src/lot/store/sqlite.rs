//! The SQLite backend of the results store (rusqlite, the library bundled: nothing to install).
//! Writers take the database's write lock at the start of a lot's transaction (`BEGIN IMMEDIATE`)
//! and wait for one another up to a minute, so two processes recording into one file both succeed.

use std::path::Path;

use rusqlite::{params, Connection, OptionalExtension, TransactionBehavior};

use super::schema::{current_version, Dialect, MIGRATIONS};
use super::{already_recorded, store_error, Backend, Cell, LotRecord};
use crate::error::{Error, ErrorKind, Location, Result};

/// How long a writer waits for another's lock.
const BUSY_WAIT: std::time::Duration = std::time::Duration::from_secs(60);

pub(crate) struct SqliteStore {
    conn: Connection,
    shown: String,
}

impl SqliteStore {
    pub(crate) fn open(path: &Path) -> Result<SqliteStore> {
        let shown = path.display().to_string();
        if let Some(parent) = path.parent().filter(|p| !p.as_os_str().is_empty()) {
            std::fs::create_dir_all(parent)
                .map_err(|e| Error::io(parent, "a folder for the store", e))?;
        }
        let conn =
            Connection::open(path).map_err(|e| store_error(&shown, "a SQLite database file", e))?;
        conn.busy_timeout(BUSY_WAIT)
            .map_err(|e| store_error(&shown, "a SQLite database file", e))?;
        // WAL: readers (trend, query) do not wait for a writer; NORMAL sync is durable at each
        // commit in WAL mode except for the last transactions on power loss, never corrupt.
        conn.execute_batch(
            "PRAGMA journal_mode=WAL; PRAGMA synchronous=NORMAL; PRAGMA foreign_keys=ON;",
        )
        .map_err(|e| store_error(&shown, "a SQLite database file", e))?;
        Ok(SqliteStore { conn, shown })
    }

    fn err(&self, what: &str) -> impl Fn(rusqlite::Error) -> Error + '_ {
        let what = what.to_string();
        move |e| store_error(&self.shown, &what, e)
    }
}

impl Backend for SqliteStore {
    fn migrate(&mut self) -> Result<i64> {
        let shown = self.shown.clone();
        let e = |e: rusqlite::Error| store_error(&shown, "a spurline results store", e);
        let tx = self
            .conn
            .transaction_with_behavior(TransactionBehavior::Immediate)
            .map_err(e)?;
        tx.execute_batch("CREATE TABLE IF NOT EXISTS schema_version (version BIGINT NOT NULL)")
            .map_err(e)?;
        let version: i64 = tx
            .query_row("SELECT MAX(version) FROM schema_version", [], |r| {
                r.get::<_, Option<i64>>(0)
            })
            .map_err(e)?
            .unwrap_or(0);
        if version > current_version() {
            return Err(Error::new(
                ErrorKind::Store,
                shown.clone(),
                Location::Key("schema_version".into()),
                format!("a store of schema version {} or older", current_version()),
                format!("version {version}, written by a newer spurline"),
            ));
        }
        for (i, m) in MIGRATIONS.iter().enumerate().skip(version as usize) {
            tx.execute_batch(&Dialect::Sqlite.render(m)).map_err(e)?;
            tx.execute(
                "INSERT INTO schema_version (version) VALUES (?1)",
                params![i as i64 + 1],
            )
            .map_err(e)?;
        }
        tx.commit().map_err(e)?;
        Ok(current_version())
    }

    fn write_lot(&mut self, lot: &LotRecord) -> Result<i64> {
        let shown = self.shown.clone();
        let e = |e: rusqlite::Error| store_error(&shown, "a lot written into the store", e);
        let tx = self
            .conn
            .transaction_with_behavior(TransactionBehavior::Immediate)
            .map_err(e)?;
        let existing: Option<String> = tx
            .query_row(
                "SELECT lot FROM runs WHERE fingerprint = ?1",
                params![lot.fingerprint],
                |r| r.get(0),
            )
            .optional()
            .map_err(e)?;
        if let Some(name) = existing {
            return Err(already_recorded(&shown, lot, &name));
        }
        let i = &lot.info;
        let c = &lot.counts;
        tx.execute(
            "INSERT INTO runs (fingerprint, lot, title, plan_fingerprint, limits_fingerprint, started_at, \
             ended_at, tool_version, host, devices, results, passed, failed, failed_guardband, untested, errors) \
             VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14, ?15, ?16)",
            params![
                lot.fingerprint,
                i.lot,
                i.title,
                i.plan_fingerprint,
                i.limits_fingerprint,
                i.started_at,
                i.ended_at,
                i.tool_version,
                i.host,
                c[5] as i64,
                lot.results.len() as i64,
                c[0] as i64,
                c[1] as i64,
                c[2] as i64,
                c[3] as i64,
                c[4] as i64
            ],
        )
        .map_err(e)?;
        let run_id = tx.last_insert_rowid();
        let ids = |table: &str, names: &mut dyn Iterator<Item = &str>| -> Result<Vec<i64>> {
            let mut ins = tx
                .prepare_cached(&format!(
                    "INSERT INTO {table} (name) VALUES (?1) ON CONFLICT (name) DO NOTHING"
                ))
                .map_err(e)?;
            let mut get = tx
                .prepare_cached(&format!("SELECT id FROM {table} WHERE name = ?1"))
                .map_err(e)?;
            names
                .map(|n| {
                    ins.execute(params![n]).map_err(e)?;
                    get.query_row(params![n], |r| r.get(0)).map_err(e)
                })
                .collect()
        };
        let devices = ids("devices", &mut lot.devices.iter().map(String::as_str))?;
        let conditions = ids("conditions", &mut lot.conditions.iter().map(String::as_str))?;
        let mut metrics = Vec::with_capacity(lot.metrics.len());
        {
            let mut ins = tx
                .prepare_cached(
                    "INSERT INTO metrics (key, label, unit, better) VALUES (?1, ?2, ?3, ?4) \
                     ON CONFLICT (key) DO NOTHING",
                )
                .map_err(e)?;
            let mut get = tx
                .prepare_cached("SELECT id FROM metrics WHERE key = ?1")
                .map_err(e)?;
            for m in &lot.metrics {
                ins.execute(params![m.key, m.label, m.unit, m.better])
                    .map_err(e)?;
                metrics.push(
                    get.query_row(params![m.key], |r| r.get::<_, i64>(0))
                        .map_err(e)?,
                );
            }
        }
        {
            let mut ins = tx
                .prepare_cached(
                    "INSERT INTO results (run_id, seq, device_id, condition_id, verdict, reason, error) \
                     VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7)",
                )
                .map_err(e)?;
            for (seq, r) in lot.results.iter().enumerate() {
                ins.execute(params![
                    run_id,
                    seq as i64,
                    devices[r.device],
                    conditions[r.condition],
                    r.verdict,
                    r.reason,
                    r.error
                ])
                .map_err(e)?;
            }
            let mut ins = tx
                .prepare_cached(
                    "INSERT INTO figures (run_id, seq, metric_id, value, uncertainty) VALUES (?1, ?2, ?3, ?4, ?5)",
                )
                .map_err(e)?;
            for &(seq, m, v, u) in &lot.figures {
                ins.execute(params![run_id, seq as i64, metrics[m], v, u])
                    .map_err(e)?;
            }
            let mut ins = tx
                .prepare_cached("INSERT INTO warnings (run_id, seq, text) VALUES (?1, ?2, ?3)")
                .map_err(e)?;
            for (seq, text) in &lot.warnings {
                ins.execute(params![run_id, *seq as i64, text]).map_err(e)?;
            }
            let mut ins = tx
                .prepare_cached(
                    "INSERT INTO failures (run_id, seq, metric, bound, limit_value, value, margin, guardband, outcome) \
                     VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9)",
                )
                .map_err(e)?;
            for f in &lot.failures {
                ins.execute(params![
                    run_id, f.0 as i64, f.1, f.2, f.3, f.4, f.5, f.6, f.7
                ])
                .map_err(e)?;
            }
            let mut ins = tx
                .prepare_cached(
                    "INSERT INTO limits (run_id, condition, metric, low, high, guardband) VALUES (?1, ?2, ?3, ?4, ?5, ?6)",
                )
                .map_err(e)?;
            for l in &lot.limits {
                ins.execute(params![
                    run_id,
                    l.condition,
                    l.metric,
                    l.low,
                    l.high,
                    l.guardband
                ])
                .map_err(e)?;
            }
            let mut ins = tx
                .prepare_cached(
                    "INSERT INTO lot_stats (run_id, condition_id, metric_id, n, mean, std, min, max) \
                     VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8)",
                )
                .map_err(e)?;
            for &(c, m, n, mean, std, min, max) in &lot.stats {
                ins.execute(params![
                    run_id,
                    conditions[c],
                    metrics[m],
                    n as i64,
                    mean,
                    std,
                    min,
                    max
                ])
                .map_err(e)?;
            }
        }
        tx.commit().map_err(e)?;
        Ok(run_id)
    }

    fn select(&mut self, sql: &str, params: &[Cell]) -> Result<Vec<Vec<Cell>>> {
        let sql = Dialect::Sqlite.params(sql);
        let e = self.err("a readable results store");
        let mut stmt = self.conn.prepare(&sql).map_err(&e)?;
        let n = stmt.column_count();
        let values: Vec<rusqlite::types::Value> = params
            .iter()
            .map(|c| match c {
                Cell::Null => rusqlite::types::Value::Null,
                Cell::Int(i) => rusqlite::types::Value::Integer(*i),
                Cell::Real(r) => rusqlite::types::Value::Real(*r),
                Cell::Text(t) => rusqlite::types::Value::Text(t.clone()),
            })
            .collect();
        let mut rows = stmt
            .query(rusqlite::params_from_iter(values.iter()))
            .map_err(&e)?;
        let mut out = Vec::new();
        while let Some(row) = rows.next().map_err(&e)? {
            let mut cells = Vec::with_capacity(n);
            for k in 0..n {
                use rusqlite::types::ValueRef;
                cells.push(match row.get_ref(k).map_err(&e)? {
                    ValueRef::Null => Cell::Null,
                    ValueRef::Integer(i) => Cell::Int(i),
                    ValueRef::Real(r) => Cell::Real(r),
                    ValueRef::Text(t) => Cell::Text(String::from_utf8_lossy(t).into_owned()),
                    ValueRef::Blob(b) => Cell::Text(String::from_utf8_lossy(b).into_owned()),
                });
            }
            out.push(cells);
        }
        Ok(out)
    }
}
