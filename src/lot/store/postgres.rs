//! The PostgreSQL backend of the results store (the `postgres` crate, no TLS: a socket or a trusted
//! network). A lot is written in one transaction with one statement per table (arrays unnested), so
//! many testers can record at once; names are added in sorted order, and a transaction that loses a
//! deadlock to another is run again.

use postgres::types::{ToSql, Type};
use postgres::{Client, NoTls};

use super::schema::{current_version, Dialect, MIGRATIONS};
use super::{already_recorded, store_error, Backend, Cell, LotRecord};
use crate::error::{Error, ErrorKind, Location, Result};

/// The advisory lock key that serialises migrations ("spurline" in ASCII, folded into an i64).
const MIGRATION_LOCK: i64 = 0x7370_7572_6c69_6e65;
/// Times a lot's transaction is run again after a deadlock or serialization failure.
const RETRIES: usize = 5;

pub(crate) struct PgStore {
    client: Client,
    shown: String,
}

impl PgStore {
    pub(crate) fn connect(conn: &str) -> Result<PgStore> {
        let shown = "the PostgreSQL store".to_string();
        let client = Client::connect(conn, NoTls)
            .map_err(|e| store_error(&shown, "a reachable PostgreSQL server", pg_text(&e)))?;
        Ok(PgStore { client, shown })
    }
}

/// An error's whole text: the crate's own says only "db error"; the server's message (and its
/// detail) is in the source chain.
fn pg_text(e: &postgres::Error) -> String {
    let mut text = e.to_string();
    let mut cause = std::error::Error::source(e);
    while let Some(c) = cause {
        text.push_str(": ");
        text.push_str(&c.to_string());
        cause = c.source();
    }
    text
}

fn retryable(e: &postgres::Error) -> bool {
    use postgres::error::SqlState;
    e.code().is_some_and(|c| {
        *c == SqlState::T_R_DEADLOCK_DETECTED || *c == SqlState::T_R_SERIALIZATION_FAILURE
    })
}

enum Failed {
    Db(postgres::Error),
    Duplicate(String),
}

impl From<postgres::Error> for Failed {
    fn from(e: postgres::Error) -> Failed {
        Failed::Db(e)
    }
}

fn write_once(client: &mut Client, lot: &LotRecord) -> std::result::Result<i64, Failed> {
    let mut tx = client.transaction()?;
    if let Some(row) = tx.query_opt(
        "SELECT lot FROM runs WHERE fingerprint = $1",
        &[&lot.fingerprint],
    )? {
        return Err(Failed::Duplicate(row.get(0)));
    }
    let i = &lot.info;
    let c: Vec<i64> = lot.counts.iter().map(|&n| n as i64).collect();
    let results = lot.results.len() as i64;
    let run_id: i64 = tx
        .query_one(
            "INSERT INTO runs (fingerprint, lot, title, plan_fingerprint, limits_fingerprint, started_at, \
             ended_at, tool_version, host, devices, results, passed, failed, failed_guardband, untested, errors) \
             VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14, $15, $16) RETURNING id",
            &[
                &lot.fingerprint,
                &i.lot,
                &i.title,
                &i.plan_fingerprint,
                &i.limits_fingerprint,
                &i.started_at,
                &i.ended_at,
                &i.tool_version,
                &i.host,
                &c[5],
                &results,
                &c[0],
                &c[1],
                &c[2],
                &c[3],
                &c[4],
            ],
        )?
        .get(0);
    let mut ids = |table: &str, names: &[String]| -> std::result::Result<Vec<i64>, Failed> {
        tx.execute(
            &format!(
                "INSERT INTO {table} (name) SELECT n FROM unnest($1::text[]) AS n ORDER BY n \
                 ON CONFLICT (name) DO NOTHING"
            ),
            &[&names],
        )?;
        let rows = tx.query(
            &format!("SELECT name, id FROM {table} WHERE name = ANY($1)"),
            &[&names],
        )?;
        let map: std::collections::HashMap<String, i64> =
            rows.iter().map(|r| (r.get(0), r.get(1))).collect();
        Ok(names.iter().map(|n| map[n]).collect())
    };
    let devices = ids("devices", &lot.devices)?;
    let conditions = ids("conditions", &lot.conditions)?;
    let keys: Vec<&str> = lot.metrics.iter().map(|m| m.key.as_str()).collect();
    let labels: Vec<&str> = lot.metrics.iter().map(|m| m.label.as_str()).collect();
    let units: Vec<&str> = lot.metrics.iter().map(|m| m.unit.as_str()).collect();
    let betters: Vec<&str> = lot.metrics.iter().map(|m| m.better.as_str()).collect();
    tx.execute(
        "INSERT INTO metrics (key, label, unit, better) \
         SELECT * FROM unnest($1::text[], $2::text[], $3::text[], $4::text[]) AS m(k, l, u, b) ORDER BY k \
         ON CONFLICT (key) DO NOTHING",
        &[&keys, &labels, &units, &betters],
    )?;
    let rows = tx.query("SELECT key, id FROM metrics WHERE key = ANY($1)", &[&keys])?;
    let metric_of: std::collections::HashMap<String, i64> =
        rows.iter().map(|r| (r.get(0), r.get(1))).collect();
    let metrics: Vec<i64> = keys.iter().map(|k| metric_of[*k]).collect();

    let seqs: Vec<i64> = (0..results).collect();
    let dev: Vec<i64> = lot.results.iter().map(|r| devices[r.device]).collect();
    let cond: Vec<i64> = lot
        .results
        .iter()
        .map(|r| conditions[r.condition])
        .collect();
    let verdicts: Vec<&str> = lot.results.iter().map(|r| r.verdict.as_str()).collect();
    let reasons: Vec<&str> = lot.results.iter().map(|r| r.reason.as_str()).collect();
    let errors: Vec<Option<&str>> = lot.results.iter().map(|r| r.error.as_deref()).collect();
    tx.execute(
        "INSERT INTO results (run_id, seq, device_id, condition_id, verdict, reason, error) \
         SELECT $1::bigint, * FROM unnest($2::bigint[], $3::bigint[], $4::bigint[], $5::text[], $6::text[], $7::text[])",
        &[&run_id, &seqs, &dev, &cond, &verdicts, &reasons, &errors],
    )?;
    let f_seq: Vec<i64> = lot.figures.iter().map(|f| f.0 as i64).collect();
    let f_metric: Vec<i64> = lot.figures.iter().map(|f| metrics[f.1]).collect();
    let f_value: Vec<f64> = lot.figures.iter().map(|f| f.2).collect();
    let f_unc: Vec<Option<f64>> = lot.figures.iter().map(|f| f.3).collect();
    tx.execute(
        "INSERT INTO figures (run_id, seq, metric_id, value, uncertainty) \
         SELECT $1::bigint, * FROM unnest($2::bigint[], $3::bigint[], $4::float8[], $5::float8[])",
        &[&run_id, &f_seq, &f_metric, &f_value, &f_unc],
    )?;
    let w_seq: Vec<i64> = lot.warnings.iter().map(|w| w.0 as i64).collect();
    let w_text: Vec<&str> = lot.warnings.iter().map(|w| w.1.as_str()).collect();
    tx.execute(
        "INSERT INTO warnings (run_id, seq, text) SELECT $1::bigint, * FROM unnest($2::bigint[], $3::text[])",
        &[&run_id, &w_seq, &w_text],
    )?;
    for f in &lot.failures {
        tx.execute(
            "INSERT INTO failures (run_id, seq, metric, bound, limit_value, value, margin, guardband, outcome) \
             VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9)",
            &[&run_id, &(f.0 as i64), &f.1, &f.2, &f.3, &f.4, &f.5, &f.6, &f.7],
        )?;
    }
    for l in &lot.limits {
        tx.execute(
            "INSERT INTO limits (run_id, condition, metric, low, high, guardband) VALUES ($1, $2, $3, $4, $5, $6)",
            &[&run_id, &l.condition, &l.metric, &l.low, &l.high, &l.guardband],
        )?;
    }
    for &(c, m, n, mean, std, min, max) in &lot.stats {
        tx.execute(
            "INSERT INTO lot_stats (run_id, condition_id, metric_id, n, mean, std, min, max) \
             VALUES ($1, $2, $3, $4, $5, $6, $7, $8)",
            &[
                &run_id,
                &conditions[c],
                &metrics[m],
                &(n as i64),
                &mean,
                &std,
                &min,
                &max,
            ],
        )?;
    }
    tx.commit()?;
    Ok(run_id)
}

impl Backend for PgStore {
    fn migrate(&mut self) -> Result<i64> {
        let shown = self.shown.clone();
        let e = |e: postgres::Error| store_error(&shown, "a spurline results store", pg_text(&e));
        let mut tx = self.client.transaction().map_err(e)?;
        // One migrator at a time, whichever tester connects first.
        tx.execute("SELECT pg_advisory_xact_lock($1)", &[&MIGRATION_LOCK])
            .map_err(e)?;
        tx.batch_execute("CREATE TABLE IF NOT EXISTS schema_version (version BIGINT NOT NULL)")
            .map_err(e)?;
        let version: i64 = tx
            .query_one("SELECT MAX(version) FROM schema_version", &[])
            .map_err(e)?
            .get::<_, Option<i64>>(0)
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
            tx.batch_execute(&Dialect::Postgres.render(m)).map_err(e)?;
            tx.execute(
                "INSERT INTO schema_version (version) VALUES ($1)",
                &[&(i as i64 + 1)],
            )
            .map_err(e)?;
        }
        tx.commit().map_err(e)?;
        Ok(current_version())
    }

    fn write_lot(&mut self, lot: &LotRecord) -> Result<i64> {
        let mut attempt = 0;
        loop {
            match write_once(&mut self.client, lot) {
                Ok(id) => return Ok(id),
                Err(Failed::Duplicate(name)) => {
                    return Err(already_recorded(&self.shown, lot, &name))
                }
                Err(Failed::Db(e)) if retryable(&e) && attempt < RETRIES => attempt += 1,
                Err(Failed::Db(e)) => {
                    // Two testers recording the same lot at once: the loser's check above saw
                    // no row (the winner had not committed) and its insert meets the unique key
                    // once the winner commits. The error's text is only "db error": the
                    // constraint's name says which key it was.
                    let on_fingerprint = e.as_db_error().is_some_and(|d| {
                        *d.code() == postgres::error::SqlState::UNIQUE_VIOLATION
                            && d.table() == Some("runs")
                            && d.constraint() == Some("runs_fingerprint_key")
                    });
                    if on_fingerprint {
                        let name = self
                            .client
                            .query_opt(
                                "SELECT lot FROM runs WHERE fingerprint = $1",
                                &[&lot.fingerprint],
                            )
                            .ok()
                            .flatten()
                            .map_or_else(|| lot.info.lot.clone(), |r| r.get(0));
                        return Err(already_recorded(&self.shown, lot, &name));
                    }
                    return Err(store_error(
                        &self.shown,
                        "a lot written into the store",
                        pg_text(&e),
                    ));
                }
            }
        }
    }

    fn select(&mut self, sql: &str, params: &[Cell]) -> Result<Vec<Vec<Cell>>> {
        let shown = self.shown.clone();
        let e = |e: postgres::Error| store_error(&shown, "a readable results store", pg_text(&e));
        let owned: Vec<Box<dyn ToSql + Sync>> = params
            .iter()
            .map(|c| -> Box<dyn ToSql + Sync> {
                match c {
                    Cell::Null => Box::new(Option::<String>::None),
                    Cell::Int(i) => Box::new(*i),
                    Cell::Real(r) => Box::new(*r),
                    Cell::Text(t) => Box::new(t.clone()),
                }
            })
            .collect();
        let refs: Vec<&(dyn ToSql + Sync)> = owned.iter().map(|b| b.as_ref()).collect();
        let rows = self.client.query(sql, &refs).map_err(e)?;
        let mut out = Vec::with_capacity(rows.len());
        for row in &rows {
            let mut cells = Vec::with_capacity(row.len());
            for (k, col) in row.columns().iter().enumerate() {
                let t = col.type_();
                let cell = if *t == Type::INT8 {
                    row.try_get::<_, Option<i64>>(k).map_err(e)?.map(Cell::Int)
                } else if *t == Type::INT4 {
                    row.try_get::<_, Option<i32>>(k)
                        .map_err(e)?
                        .map(|v| Cell::Int(v.into()))
                } else if *t == Type::FLOAT8 {
                    row.try_get::<_, Option<f64>>(k).map_err(e)?.map(Cell::Real)
                } else {
                    row.try_get::<_, Option<String>>(k)
                        .map_err(e)?
                        .map(Cell::Text)
                };
                cells.push(cell.unwrap_or(Cell::Null));
            }
            out.push(cells);
        }
        Ok(out)
    }
}
