//! Exclusions: stretches of readings excluded by decision (tower work, a broken
//! cable, a frozen sensor confirmed on site), listed in a file of their own
//! that the station file names (`[campaign] exclusions = "FILE"`, a path
//! relative to the station file).
//!
//! The file is CSV, one exclusion a line, diff-friendly; `#` starts a comment
//! line, blank lines are skipped:
//!
//! ```text
//! channels,from,to,reason,who,entered
//! WS80A,2025-03-04T09:00:00Z,2025-03-04T13:30:00Z,tower work: anemometer swap,J. Rivera,2025-03-05
//! all,2025-03-10T00:00:00Z,2025-03-10T02:00:00Z,logger cable cut by a mower,K. Osei,2025-03-11T08:15:00Z
//! ```
//!
//! - `channels`: `all`, or channel ids of the station file joined by `|`.
//! - `from`, `to`: RFC 3339 times (`Z` or a numeric offset); a reading at
//!   `from <= t < to` is excluded. `from` must be before `to`.
//! - `reason`, `who`: free text, not empty (quote a field with a comma in it).
//! - `entered`: when the exclusion was decided, a date `YYYY-MM-DD` or an
//!   RFC 3339 time.
//!
//! Nothing is deleted from any input: an excluded reading is handed to the
//! core as [`Reading::Excluded`], whatever its value, and counted in the tally
//! reason `excluded` ([`qc_core::Tally::excluded`]); its interval gets the flag
//! `excluded`. Rows that never came are not readings: a gap inside an
//! exclusion stays lost (absent), not excluded. Exclusions may overlap; a
//! reading is excluded once.

use std::path::{Path, PathBuf};

use anyhow::{anyhow, bail, Result};
use qc_core::{Reading, Timestamp};

use crate::timefmt::parse_time;

/// The column names, in order.
pub const HEADER: [&str; 6] = ["channels", "from", "to", "reason", "who", "entered"];

/// Largest exclusions file read, bytes (the station file's bound).
const MAX_BYTES: u64 = 1 << 20;

/// One exclusion as the file gives it.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Exclusion {
    /// Line in the file (1-based).
    pub line: usize,
    /// The channels' indices in station-file order; `None` for all.
    pub channels: Option<Vec<usize>>,
    /// `channels` as written.
    pub channels_text: String,
    /// First excluded instant.
    pub from: Timestamp,
    /// End (exclusive).
    pub to: Timestamp,
    /// Why.
    pub reason: String,
    /// Who decided.
    pub who: String,
    /// When it was entered, as written.
    pub entered: String,
}

/// The exclusions of a station: empty when the station file names none.
#[derive(Clone, Debug, Default)]
pub struct Exclusions {
    /// The file read, if any.
    pub path: Option<PathBuf>,
    /// In file order.
    pub list: Vec<Exclusion>,
    /// `(from ms, to ms, channel mask)` of each.
    spans: Vec<(i64, i64, u64)>,
    /// Where the channels excluded change, for [`Exclusions::apply`]: each
    /// `(ms, mask)` is in force from its time to the next one's; none before
    /// the first (the last's mask is 0). Built from `spans` ([`timeline`]).
    timeline: Vec<(i64, u64)>,
}

impl Exclusions {
    /// Whether there are none.
    pub fn is_empty(&self) -> bool {
        self.spans.is_empty()
    }

    /// Marks the readings of a sample at `t` that an exclusion covers as
    /// [`Reading::Excluded`] (`readings` in station-file order). A binary
    /// search of the timeline: a campaign's thousand exclusions cost a row
    /// about ten steps, not a thousand.
    #[inline]
    pub fn apply(&self, t: Timestamp, readings: &mut [Reading]) {
        let Some(&(first, _)) = self.timeline.first() else {
            return;
        };
        let ms = t.millis();
        if ms < first {
            return;
        }
        let k = self.timeline.partition_point(|&(at, _)| at <= ms);
        let mask = self.timeline.get(k.wrapping_sub(1)).map_or(0, |&(_, m)| m);
        if mask == 0 {
            return;
        }
        for (i, r) in readings.iter_mut().enumerate().take(64) {
            if mask & (1 << i) != 0 {
                *r = Reading::Excluded;
            }
        }
    }

    /// Reads `path`; `ids` are the station's channel ids in file order.
    pub fn load(path: &Path, ids: &[&str]) -> Result<Exclusions> {
        use std::io::Read;
        let f = std::fs::File::open(path)
            .map_err(|e| anyhow!("{}: cannot read the exclusions file: {e}", path.display()))?;
        let mut bytes = Vec::new();
        f.take(MAX_BYTES + 1)
            .read_to_end(&mut bytes)
            .map_err(|e| anyhow!("{}: cannot read the exclusions file: {e}", path.display()))?;
        if bytes.len() as u64 > MAX_BYTES {
            bail!(
                "{}: the exclusions file is larger than {MAX_BYTES} bytes",
                path.display()
            );
        }
        let text = crate::limits::utf8_text(path, bytes)?;
        parse(path, &text, ids)
    }
}

/// Parses the text of an exclusions file; `path` is used in messages.
pub fn parse(path: &Path, text: &str, ids: &[&str]) -> Result<Exclusions> {
    let p = path.display();
    let mut out = Exclusions {
        path: Some(path.to_path_buf()),
        ..Exclusions::default()
    };
    let mut header = false;
    for (i, raw) in text.lines().enumerate() {
        let line = i + 1;
        let raw = raw.strip_prefix('\u{feff}').unwrap_or(raw);
        if raw.trim().is_empty() || raw.trim_start().starts_with('#') {
            continue;
        }
        let mut rdr = csv::ReaderBuilder::new()
            .has_headers(false)
            .from_reader(raw.as_bytes());
        let mut rec = csv::StringRecord::new();
        match rdr.read_record(&mut rec) {
            Ok(true) => {}
            Ok(false) => continue,
            Err(e) => bail!("{p}:{line}: not a CSV line: {e}"),
        }
        let fields: Vec<&str> = rec.iter().map(str::trim).collect();
        if !header {
            if fields != HEADER {
                bail!(
                    "{p}:{line}: header: expected `{}`, found `{}`",
                    HEADER.join(","),
                    fields.join(",")
                );
            }
            header = true;
            continue;
        }
        if fields.len() != HEADER.len() {
            bail!(
                "{p}:{line}: {} fields, expected {} ({})",
                fields.len(),
                HEADER.len(),
                HEADER.join(",")
            );
        }
        let field_err = |k: usize, msg: String| anyhow!("{p}:{line}: field `{}`: {msg}", HEADER[k]);
        let channels_text = fields[0].to_string();
        let (channels, mask) = if channels_text == "all" {
            (None, (0..ids.len()).fold(0u64, |m, i| m | 1 << i))
        } else {
            let mut v = Vec::new();
            let mut mask = 0u64;
            for name in channels_text.split('|').map(str::trim) {
                let Some(i) = ids.iter().position(|id| *id == name) else {
                    return Err(field_err(
                        0,
                        format!(
                            "no channel {name:?} in the station file (its channels: {}; or `all`)",
                            ids.join(", ")
                        ),
                    ));
                };
                if mask & 1 << i == 0 {
                    v.push(i);
                }
                mask |= 1 << i;
            }
            (Some(v), mask)
        };
        let time = |k: usize| {
            parse_time(fields[k].as_bytes())
                .map_err(|e| field_err(k, format!("{:?}: {e}", fields[k])))
        };
        let from = time(1)?;
        let to = time(2)?;
        if from >= to {
            return Err(field_err(
                2,
                format!(
                    "{:?} is not after `from` {:?}: an exclusion runs from `from` up to (not including) `to`",
                    fields[2], fields[1]
                ),
            ));
        }
        for k in [3, 4] {
            if fields[k].is_empty() {
                return Err(field_err(k, "empty: say why and who decided".to_string()));
            }
        }
        let entered = fields[5];
        if !(is_date(entered) || parse_time(entered.as_bytes()).is_ok()) {
            return Err(field_err(
                5,
                format!("{entered:?}: expected a date such as 2025-03-05 or an RFC 3339 time"),
            ));
        }
        out.spans.push((from.millis(), to.millis(), mask));
        out.list.push(Exclusion {
            line,
            channels,
            channels_text,
            from,
            to,
            reason: fields[3].to_string(),
            who: fields[4].to_string(),
            entered: entered.to_string(),
        });
    }
    if !header {
        bail!(
            "{p}: no header line `{}` (an exclusions file with no exclusions still has it)",
            HEADER.join(",")
        );
    }
    out.timeline = timeline(&out.spans);
    Ok(out)
}

/// The timeline of `spans` (`(from, to, mask)`, `from < to`): at each time
/// where an exclusion starts or ends, the channels excluded from then on
/// (a channel stays excluded while any exclusion of it runs). Equal masks in
/// a row are one entry.
fn timeline(spans: &[(i64, i64, u64)]) -> Vec<(i64, u64)> {
    let mut events: Vec<(i64, u64, bool)> = spans
        .iter()
        .flat_map(|&(from, to, m)| [(from, m, true), (to, m, false)])
        .collect();
    events.sort_unstable_by_key(|e| e.0);
    let mut running = [0u32; 64];
    let mut out: Vec<(i64, u64)> = Vec::new();
    let mut i = 0;
    while let Some(&(at, ..)) = events.get(i) {
        while let Some(&(_, m, opens)) = events.get(i).filter(|e| e.0 == at) {
            for (b, n) in running.iter_mut().enumerate() {
                if m >> b & 1 == 1 {
                    *n = if opens { *n + 1 } else { n.saturating_sub(1) };
                }
            }
            i += 1;
        }
        let mask = (running.iter().enumerate())
            .filter(|(_, n)| **n > 0)
            .fold(0u64, |m, (b, _)| m | 1 << b);
        if out.last().map(|l| l.1) != Some(mask) {
            out.push((at, mask));
        }
    }
    out
}

/// Whether `s` is a calendar date `YYYY-MM-DD`.
fn is_date(s: &str) -> bool {
    parse_time(format!("{s}T00:00:00Z").as_bytes()).is_ok() && s.len() == 10
}

#[cfg(test)]
mod tests {
    use super::*;

    const IDS: [&str; 3] = ["WS80", "WD78", "T2"];

    fn parse_text(body: &str) -> Result<Exclusions> {
        parse(
            Path::new("ex.csv"),
            &format!("# comment\nchannels,from,to,reason,who,entered\n{body}"),
            &IDS,
        )
    }

    #[test]
    fn reads_and_applies() {
        let x = parse_text(
            "WS80|T2,2025-03-04T09:00:00Z,2025-03-04T09:00:02Z,\"tower work, swap\",A. B,2025-03-05\n\
             \n\
             all,2025-03-04T10:00:00+01:00,2025-03-04T09:00:01.500Z,cable,C,2025-03-05T08:00:00Z\n",
        )
        .unwrap();
        assert_eq!(x.list.len(), 2);
        assert_eq!(x.list[0].reason, "tower work, swap");
        assert_eq!(x.list[0].channels, Some(vec![0, 2]));
        assert_eq!(x.list[1].line, 5);
        let at = |s: &str| parse_time(s.as_bytes()).unwrap();
        let v = Reading::Value(1.0);
        let mut r = [v; 3];
        x.apply(at("2025-03-04T08:59:59Z"), &mut r);
        assert_eq!(r, [v; 3]);
        x.apply(at("2025-03-04T09:00:00Z"), &mut r);
        assert_eq!(r, [Reading::Excluded; 3]);
        let mut r = [v; 3];
        x.apply(at("2025-03-04T09:00:01.500Z"), &mut r);
        assert_eq!(r, [Reading::Excluded, v, Reading::Excluded]);
        let mut r = [v; 3];
        x.apply(at("2025-03-04T09:00:02Z"), &mut r);
        assert_eq!(r, [v; 3], "`to` is not excluded");
    }

    /// The timeline's binary search against the rule as the file states it
    /// (a reading at `from <= t < to` of any exclusion of its channel is
    /// excluded), on random files of 1 to 400 exclusions, overlapping,
    /// nested, touching and sharing ends, and times around every end.
    #[test]
    fn the_timeline_excludes_what_the_rule_says() {
        let mut x = 3u64;
        let mut rnd = |n: u64| {
            x = x.wrapping_mul(6_364_136_223_846_793_005).wrapping_add(1);
            (x >> 33) % n
        };
        let base = 1_741_046_400i64; // 2025-03-04T00:00:00Z
        let rfc = |s: i64| crate::timefmt::Rfc3339(Timestamp::from_millis(s * 1000)).to_string();
        let names = ["WS80", "WD78", "T2", "all", "WS80|T2", "WD78|T2"];
        for round in 0..60 {
            let n = 1 + rnd(if round % 2 == 0 { 8 } else { 400 });
            let mut body = String::new();
            let mut spans = Vec::new();
            for _ in 0..n {
                let from = base + rnd(3_000) as i64;
                let long = rnd(4) == 0;
                let to = from + 1 + rnd(if long { 2_000 } else { 30 }) as i64;
                let who = names[rnd(names.len() as u64) as usize];
                body += &format!("{who},{},{},r,w,2025-03-05\n", rfc(from), rfc(to));
                let mask: u64 = match who {
                    "all" => 0b111,
                    _ => who
                        .split('|')
                        .map(|c| 1 << IDS.iter().position(|i| *i == c).unwrap())
                        .sum(),
                };
                spans.push((from, to, mask));
            }
            let ex = parse_text(&body).unwrap();
            let ends = spans.iter().flat_map(|&(f, t, _)| [f - 1, f, t - 1, t]);
            let random = (0..500).map(|_| base - 10 + rnd(5_100) as i64);
            for sec in ends.chain(random) {
                let want = spans
                    .iter()
                    .filter(|&&(f, t, _)| f <= sec && sec < t)
                    .fold(0u64, |m, s| m | s.2);
                let mut r = [Reading::Value(1.0); 3];
                ex.apply(Timestamp::from_millis(sec * 1000), &mut r);
                let got = (0..3)
                    .filter(|&c| r[c] == Reading::Excluded)
                    .fold(0, |m, c| m | 1 << c);
                assert_eq!(got, want, "round {round}, {}", rfc(sec));
            }
        }
    }

    #[test]
    fn bad_files_name_file_line_and_field() {
        for (body, want) in [
            (
                "WS80,2025-03-04T10:00:00Z,2025-03-04T09:00:00Z,r,w,2025-03-05\n",
                "ex.csv:3: field `to`",
            ),
            (
                "WS80,2025-03-04T10:00:00Z,2025-03-04T10:00:00Z,r,w,2025-03-05\n",
                "is not after `from`",
            ),
            (
                "WS99,2025-03-04T09:00:00Z,2025-03-04T10:00:00Z,r,w,2025-03-05\n",
                "ex.csv:3: field `channels`: no channel \"WS99\"",
            ),
            (
                "WS80,2025-03-04 09:00,2025-03-04T10:00:00Z,r,w,2025-03-05\n",
                "ex.csv:3: field `from`",
            ),
            (
                "WS80,2025-03-04T09:00:00,2025-03-04T10:00:00Z,r,w,2025-03-05\n",
                "without a zone",
            ),
            (
                "WS80,2025-03-04T09:00:00Z,2025-03-04T10:00:00Z,,w,2025-03-05\n",
                "ex.csv:3: field `reason`: empty",
            ),
            (
                "WS80,2025-03-04T09:00:00Z,2025-03-04T10:00:00Z,r,w,2025-13-05\n",
                "ex.csv:3: field `entered`",
            ),
            (
                "WS80,2025-03-04T09:00:00Z,2025-03-04T10:00:00Z,r,w\n",
                "ex.csv:3: 5 fields, expected 6",
            ),
        ] {
            let e = format!("{:#}", parse_text(body).unwrap_err());
            assert!(e.contains(want), "{e}\nwanted: {want}");
        }
        let e = format!(
            "{:#}",
            parse(Path::new("ex.csv"), "from,to\n", &IDS).unwrap_err()
        );
        assert!(e.contains("ex.csv:1: header"), "{e}");
    }
}
