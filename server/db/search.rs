//! Customer search through the FTS5 trigram index `customer_search` (migration 0010): the
//! query turned into an FTS5 expression, ranked hits, and the cars and active builds each hit
//! links to.

use rusqlite::{Connection, Row, ToSql, params};
use sqlx::SqliteConnection;

use super::customers::{CustomerSummary, FoundBuild, FoundCar, Order};
use super::read::prepare;

/// The shortest run of characters the trigram index can look up.
const TRIGRAM: usize = 3;

/// The FTS5 expression for what was typed, or None when no part of it is long enough for the
/// trigram index (the caller falls back to a plain substring scan).
///
/// Every word (3+ characters) must match somewhere: as text in any column, or, by its digits,
/// in the phone column (indexed as digits only). A query of several words made only of phone
/// characters also matches the phone by all its digits together, so "(555) 0190" finds
/// "555-0190".
pub fn match_expr(query: &str) -> Option<String> {
    let phrase = |text: &str| format!("\"{}\"", text.replace('"', "\"\""));
    let digits = |text: &str| {
        text.chars()
            .filter(char::is_ascii_digit)
            .collect::<String>()
    };
    let mut words = Vec::new();
    for word in query.split_whitespace() {
        let mut alternatives = Vec::new();
        if word.chars().count() >= TRIGRAM {
            alternatives.push(phrase(word));
        }
        let d = digits(word);
        if d.len() >= TRIGRAM && d != word {
            alternatives.push(format!("phone : {}", phrase(&d)));
        }
        match alternatives.len() {
            0 => {}
            1 => words.push(alternatives.remove(0)),
            _ => words.push(format!("({})", alternatives.join(" OR "))),
        }
    }
    // One word already finds the phone by its digits (its phrase is those digits, or it has
    // the phone alternative): only a phone written in parts needs them all together.
    let all = digits(query);
    let phone_like = query
        .chars()
        .all(|c| c.is_ascii_digit() || " -().+/".contains(c));
    let parts = query.split_whitespace().count();
    let whole_phone = (phone_like && parts > 1 && all.len() >= TRIGRAM)
        .then(|| format!("phone : {}", phrase(&all)));
    match (words.is_empty(), whole_phone) {
        (true, None) => None,
        (true, Some(p)) => Some(p),
        (false, None) => Some(words.join(" AND ")),
        (false, Some(p)) => Some(format!("({}) OR {p}", words.join(" AND "))),
    }
}

/// The ranked search: one page of live customers matching the expression, with the number of
/// matches on every row. `{order}` is replaced by the sort: best match first, or by last name.
/// The page is picked first and only its rows get their cars counted and listed; the sort is
/// worked out once for the page and the total together.
///
/// Best match first is: customers whose name holds every typed word (`?4`, a JSON list; ASCII
/// letters compared without case) before those found by phone, email or car, then the shorter
/// name (the closer match), then by name. It is read from the hits alone: FTS5's bm25 would
/// run every phrase over the whole index once more for its weights, which doubled a search's
/// time (names 405 against 213 µs, phones 235 against 123 µs, scale shop).
pub const HITS_SQL: &str = "SELECT c.id, c.name, c.phone,
        (SELECT COUNT(*) FROM cars k WHERE k.customer_id = c.id) AS car_count,
        COALESCE((SELECT group_concat(k.description, '; ') FROM cars k
                  WHERE k.customer_id = c.id), '') AS cars,
        h.total
     FROM (SELECT c.id, c.name, {tier} AS tier, count(*) OVER () AS total
           FROM customer_search s JOIN customers c ON c.id = s.rowid
           WHERE customer_search MATCH ?1 AND c.deleted_at IS NULL
           ORDER BY {order} LIMIT ?2 OFFSET ?3) h
     JOIN customers c ON c.id = h.id
     ORDER BY {outer}";

/// 0 when the customer's name holds every typed word (`?4`), else 1: the first key of the best
/// match.
const NAME_TIER: &str = "EXISTS (SELECT 1 FROM json_each(?4) w
                        WHERE instr(lower(c.name), lower(w.value)) = 0)";

/// The number of matches, for a page past the last one (which has no rows to carry it).
const COUNT_SQL: &str = "SELECT COUNT(*) FROM customer_search s JOIN customers c ON c.id = s.rowid
     WHERE customer_search MATCH ? AND c.deleted_at IS NULL";

/// One page of the ranked search for the FTS5 expression `expr` of `query`, and the number of
/// matches.
fn customers(
    conn: &Connection,
    query: &str,
    expr: &str,
    page: i64,
    order: Order,
) -> rusqlite::Result<(Vec<CustomerSummary>, i64)> {
    // The same sort inside (on the hits) and outside (on the page's rows).
    let (tier, inner, outer) = match order {
        Order::Best => (
            NAME_TIER,
            format!("tier, length(c.name), {}", order.terms()),
            format!("h.tier, length(c.name), {}", order.terms()),
        ),
        Order::LastName => ("0", order.terms().to_string(), order.terms().to_string()),
    };
    let sql = HITS_SQL
        .replace("{tier}", tier)
        .replace("{order}", &inner)
        .replace("{outer}", &outer);
    let words = serde_json::to_string(&query.split_whitespace().collect::<Vec<_>>())
        .unwrap_or_else(|_| "[]".into());
    let offset = page.max(0) * super::PAGE_SIZE;
    let mut bound: Vec<&dyn ToSql> = vec![&expr, &super::PAGE_SIZE, &offset];
    if order == Order::Best {
        bound.push(&words);
    }
    let mut total = None;
    let mut rows: Vec<CustomerSummary> = prepare(conn, &sql)?
        .query_map(bound.as_slice(), |r| {
            total = Some(r.get::<_, i64>(5)?);
            summary(r)
        })?
        .collect::<rusqlite::Result<_>>()?;
    let total = match total {
        Some(total) => total,
        None if page > 0 => prepare(conn, COUNT_SQL)?.query_row([expr], |r| r.get(0))?,
        None => 0,
    };
    attach_links(conn, &mut rows)?;
    Ok((rows, total))
}

/// A customer row as the lists select it: id, name, phone, car count, cars.
fn summary(r: &Row) -> rusqlite::Result<CustomerSummary> {
    Ok(CustomerSummary {
        id: r.get(0)?,
        name: r.get(1)?,
        phone: r.get(2)?,
        car_count: r.get(3)?,
        cars: r.get(4)?,
        found_cars: Vec::new(),
    })
}

/// The cars of every customer listed, each with its active builds and their kept status: one
/// query for the page.
pub const LINKS_SQL: &str = "SELECT k.customer_id, k.id AS car_id, k.description,
        b.id AS build_id, b.label, s.wear, s.springs_flagged, s.soon_passes, s.soon_disc,
        (SELECT due_within_passes FROM shop_settings ORDER BY id LIMIT 1) AS due_within_passes
     FROM cars k LEFT JOIN builds b ON b.car_id = k.id AND b.status = 'active'
     LEFT JOIN build_status s ON s.build_id = b.id
     WHERE k.customer_id IN (SELECT value FROM json_each(?))
     ORDER BY k.customer_id, k.id, b.id";

/// Hangs each listed customer's cars and their active builds on it.
pub fn attach_links(conn: &Connection, rows: &mut [CustomerSummary]) -> rusqlite::Result<()> {
    if rows.is_empty() {
        return Ok(());
    }
    let ids = serde_json::to_string(&rows.iter().map(|r| r.id).collect::<Vec<_>>())
        .unwrap_or_else(|_| "[]".into());
    let mut stmt = prepare(conn, LINKS_SQL)?;
    let mut found = stmt.query([ids])?;
    while let Some(f) = found.next()? {
        let customer_id: i64 = f.get(0)?;
        let Some(row) = rows.iter_mut().find(|r| r.id == customer_id) else {
            continue;
        };
        let car_id: i64 = f.get(1)?;
        if row.found_cars.last().is_none_or(|c| c.id != car_id) {
            row.found_cars.push(FoundCar {
                id: car_id,
                description: f.get(2)?,
                builds: Vec::new(),
            });
        }
        let (build_id, label): (Option<i64>, Option<String>) = (f.get(3)?, f.get(4)?);
        if let (Some(id), Some(label), Some(car)) = (build_id, label, row.found_cars.last_mut()) {
            car.builds.push(FoundBuild {
                id,
                label,
                wear: f.get(5)?,
                springs_flagged: f.get::<_, Option<bool>>(6)?.unwrap_or(false),
                soon_passes: f.get(7)?,
                soon_disc: f.get::<_, Option<bool>>(8)?.unwrap_or(false),
                due_within_passes: f.get::<_, Option<i64>>(9)?.unwrap_or(0),
            });
        }
    }
    Ok(())
}

/// Fills the index again from the customers and cars (after an import, which loads rows with
/// the triggers set aside).
pub async fn rebuild(conn: &mut SqliteConnection) -> sqlx::Result<()> {
    sqlx::query("DELETE FROM customer_search")
        .execute(&mut *conn)
        .await?;
    sqlx::query(
        "INSERT INTO customer_search (rowid, name, phone, email, cars)
         SELECT c.id, c.name,
             REPLACE(REPLACE(REPLACE(REPLACE(REPLACE(REPLACE(REPLACE(c.phone,
                 ' ', ''), '-', ''), '(', ''), ')', ''), '.', ''), '+', ''), '/', ''),
             c.email,
             COALESCE((SELECT group_concat(k.description || ' ' || k.engine, ' | ') FROM cars k
                       WHERE k.customer_id = c.id), '')
         FROM customers c",
    )
    .execute(&mut *conn)
    .await?;
    compact(conn).await
}

/// Merges the index into a single segment (FTS5's `optimize`). Every write adds a small
/// segment and FTS5 merges them only now and then, so a shop's index is several segments, each
/// looked up by every search: one segment made the scale shop's searches a third faster (name
/// 181 → 118 µs, phone digits 119 → 65 µs, SQLite's own time). Quick when the index already is
/// one segment (5 ms at 10,000 customers; 160 ms to merge six).
pub async fn compact(conn: &mut SqliteConnection) -> sqlx::Result<()> {
    sqlx::query("INSERT INTO customer_search (customer_search) VALUES ('optimize')")
        .execute(conn)
        .await?;
    Ok(())
}

/// Whether the index holds one row per customer (false after an import without a rebuild).
pub async fn in_step(conn: &mut SqliteConnection) -> sqlx::Result<bool> {
    sqlx::query_scalar(
        "SELECT (SELECT COUNT(*) FROM customers) = (SELECT COUNT(*) FROM customer_search)",
    )
    .fetch_one(conn)
    .await
}

/// One page of customers whose name, phone, email, or any car's description or engine
/// matches `query`, and the total count of matches: through the trigram index, best match
/// first (`db::search`), when any word has 3 or more characters; otherwise (a 1-2 character
/// query, or none) by case-insensitive substring over name, phone and cars, by name.
pub fn list(
    conn: &Connection,
    query: &str,
    page: i64,
    order: Order,
) -> rusqlite::Result<(Vec<CustomerSummary>, i64)> {
    if let Some(expr) = match_expr(query) {
        return customers(conn, query, &expr, page, order);
    }
    let everyone = query.trim().is_empty();
    let pattern = format!("%{}%", escape_like(query.trim()));
    // No query lists everyone: no pattern to test on every row (?1 goes unused).
    const EVERYONE: &str = "c.deleted_at IS NULL";
    const MATCH: &str =
        "c.deleted_at IS NULL AND (c.name LIKE ?1 ESCAPE '\\' OR c.phone LIKE ?1 ESCAPE '\\'
         OR EXISTS (SELECT 1 FROM cars k WHERE k.customer_id = c.id
                    AND (k.description LIKE ?1 ESCAPE '\\' OR k.engine LIKE ?1 ESCAPE '\\')))";
    let filter = if everyone { EVERYONE } else { MATCH };
    let sql = format!(
        "SELECT c.id, c.name, c.phone,
                (SELECT COUNT(*) FROM cars k WHERE k.customer_id = c.id) AS car_count,
                COALESCE((SELECT group_concat(k.description, '; ') FROM cars k
                          WHERE k.customer_id = c.id), '') AS cars
         FROM customers c WHERE {filter}
         ORDER BY {} LIMIT ?2 OFFSET ?3",
        order.terms()
    );
    // ?3 is the highest parameter either way, so three are bound (?1 unused for everyone).
    let offset = page.max(0) * super::PAGE_SIZE;
    let mut rows: Vec<CustomerSummary> = prepare(conn, &sql)?
        .query_map(params![pattern, super::PAGE_SIZE, offset], summary)?
        .collect::<rusqlite::Result<_>>()?;
    let count = format!("SELECT COUNT(*) FROM customers c WHERE {filter}");
    let mut count = prepare(conn, &count)?;
    let total: i64 = if everyone {
        count.query_row([], |r| r.get(0))?
    } else {
        count.query_row([&pattern], |r| r.get(0))?
    };
    attach_links(conn, &mut rows)?;
    Ok((rows, total))
}

/// Escapes `%`, `_` and `\` so user text matches literally in `LIKE ... ESCAPE '\'`.
fn escape_like(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        if matches!(c, '%' | '_' | '\\') {
            out.push('\\');
        }
        out.push(c);
    }
    out
}
