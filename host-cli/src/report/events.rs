//! Campaign events: site visits, maintenance, logger resets, shown on the
//! report's time axes and listed in a table.
//!
//! The file is named by the station file's `[campaign] events = "FILE"`
//! (relative to the station file). It is plain text, one event a line, so that
//! it reads well and diffs cleanly in a repository:
//!
//! ```text
//! # Events of the campaign (lines starting with # are comments)
//! time,kind,text
//! 2025-01-20T14:00:00Z,site_visit,Both 80 m anemometers inspected, nothing changed
//! ```
//!
//! - `time`: an instant in UTC (RFC 3339 with `Z` or an offset);
//! - `kind`: one of [`KINDS`];
//! - `text`: the rest of the line, commas included (no quoting needed).
//!
//! Errors name the file, the line and the field.

use std::io::Read;
use std::path::Path;

use anyhow::{anyhow, bail, Context, Result};
use qc_core::Timestamp;

use super::table::{text, Table};
use crate::timefmt::{parse_time_any, Rfc3339};

/// The kinds of event.
pub const KINDS: [&str; 6] = [
    "site_visit",
    "maintenance",
    "logger_reset",
    "calibration",
    "sensor_swap",
    "other",
];

/// Largest events file read, bytes.
pub const MAX_BYTES: u64 = 4 << 20;

/// One event.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Event {
    /// When.
    pub time: Timestamp,
    /// One of [`KINDS`].
    pub kind: &'static str,
    /// What happened.
    pub text: String,
    /// Line in the events file.
    pub line: usize,
}

/// Parses an events file's text; `path` is used in messages.
pub fn parse(path: &Path, body: &str) -> Result<Vec<Event>> {
    let mut out = Vec::new();
    let mut header = false;
    for (k, raw) in body.lines().enumerate() {
        let line = k + 1;
        let l = raw.trim_start_matches('\u{feff}').trim();
        if l.is_empty() || l.starts_with('#') {
            continue;
        }
        let at = |field: usize, name: &str, msg: String| {
            anyhow!("{}:{line}: field {field} ({name}): {msg}", path.display())
        };
        if !header {
            let cols: Vec<&str> = l.splitn(3, ',').map(str::trim).collect();
            if cols != ["time", "kind", "text"] {
                bail!(
                    "{}:{line}: expected the header `time,kind,text`, found {l:?}",
                    path.display()
                );
            }
            header = true;
            continue;
        }
        let mut f = l.splitn(3, ',');
        let time = f.next().unwrap_or("").trim();
        let kind = f.next().map(str::trim);
        let msg = f.next().map(str::trim);
        let (Some(kind), Some(msg)) = (kind, msg) else {
            bail!(
                "{}:{line}: expected `time,kind,text` (three fields), found {l:?}",
                path.display()
            );
        };
        let time = parse_time_any(time.as_bytes()).map_err(|e| at(1, "time", e.to_string()))?;
        let kind = KINDS.iter().find(|k| **k == kind).ok_or_else(|| {
            at(
                2,
                "kind",
                format!("unknown kind {kind:?} (known: {})", KINDS.join(", ")),
            )
        })?;
        if msg.is_empty() {
            return Err(at(3, "text", "empty: say what happened".into()));
        }
        out.push(Event {
            time,
            kind,
            text: msg.to_string(),
            line,
        });
    }
    if !header {
        bail!(
            "{}: no header `time,kind,text`: an events file lists one event a line under it",
            path.display()
        );
    }
    out.sort_by_key(|e| (e.time, e.line));
    Ok(out)
}

/// Reads the events file `path`, named at `line` of the station file `station`.
pub fn read(station: &Path, path: &Path, line: usize) -> Result<Vec<Event>> {
    let named = || {
        format!(
            "{}:{line}: [campaign] events: cannot read {}",
            station.display(),
            path.display()
        )
    };
    // Read through a limit, not by the size the file system gives: a device
    // (`/dev/zero`) gives 0 and reads without end.
    let mut bytes = Vec::new();
    std::fs::File::open(path)
        .and_then(|f| f.take(MAX_BYTES + 1).read_to_end(&mut bytes))
        .with_context(named)?;
    if bytes.len() as u64 > MAX_BYTES {
        bail!(
            "{}: more than {MAX_BYTES} bytes: an events file may hold at most {MAX_BYTES} bytes",
            path.display(),
        );
    }
    let body = crate::limits::utf8_text(path, bytes)?;
    parse(path, &body)
}

/// The events table, numbered as the charts mark them.
pub fn table(events: &[Event]) -> Table {
    let mut t = Table::new(
        "events",
        &[
            ("number", "no."),
            ("time", "time (UTC)"),
            ("kind", "kind"),
            ("text", "what happened"),
        ],
    );
    for (i, e) in events.iter().enumerate() {
        t.push(vec![
            super::table::int(i as u64 + 1),
            text(Rfc3339(e.time).to_string()),
            text(e.kind.replace('_', " ")),
            text(&e.text).class("wrap"),
        ]);
    }
    t
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reads_events_with_commas_in_the_text() {
        let body = "# comment\ntime,kind,text\n\n2025-01-21T10:00:00Z,maintenance,Cable re-terminated, logger restarted\n2025-01-20T14:00:00Z,site_visit,Inspection\n";
        let v = parse(Path::new("ev.csv"), body).unwrap();
        assert_eq!(v.len(), 2);
        assert_eq!(v[0].kind, "site_visit");
        assert_eq!(v[0].line, 5);
        assert_eq!(v[1].text, "Cable re-terminated, logger restarted");
        assert_eq!(v[1].time.millis(), 1_737_453_600_000);
    }

    #[test]
    fn errors_name_file_line_and_field() {
        let cases = [
            (
                "time,kind,text\nyesterday,site_visit,x\n",
                "ev.csv:2: field 1 (time)",
            ),
            (
                "time,kind,text\n2025-01-20T14:00:00Z,picnic,x\n",
                "ev.csv:2: field 2 (kind): unknown kind \"picnic\"",
            ),
            (
                "time,kind,text\n2025-01-20T14:00:00Z,site_visit\n",
                "ev.csv:2: expected `time,kind,text`",
            ),
            (
                "time,kind,text\n2025-01-20T14:00:00Z,site_visit, \n",
                "ev.csv:2: field 3 (text)",
            ),
            ("when,what\n", "ev.csv:1: expected the header"),
            ("# nothing\n", "no header"),
        ];
        for (body, want) in cases {
            let msg = format!("{:#}", parse(Path::new("ev.csv"), body).unwrap_err());
            assert!(msg.contains(want), "{body:?}: {msg}");
        }
    }
}
