//! `tenmin draft`: run the built binary on the example field files and on
//! small invented files, then replay each file with the station file drafted.
//! Expected columns come from the hand-written station files beside the
//! examples, or from the invented files as written here; never from the
//! draft itself.

use std::path::{Path, PathBuf};

mod common;
use common::{refused, tenmin, text, write};

fn examples() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/field-files")
}

fn toml_of(p: &Path) -> toml::Table {
    let s = std::fs::read_to_string(p).unwrap();
    s.parse::<toml::Table>()
        .unwrap_or_else(|e| panic!("{}: {e}\n{s}", p.display()))
}

/// The `[[channel]]` table with this id.
fn channel<'a>(t: &'a toml::Table, id: &str) -> &'a toml::Table {
    t["channel"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c.as_table().unwrap())
        .find(|c| c["id"].as_str() == Some(id))
        .unwrap_or_else(|| panic!("no channel {id:?} in {t:#?}"))
}

fn table<'a>(t: &'a toml::Table, path: &[&str]) -> &'a toml::Table {
    path.iter()
        .fold(t, |t, k| t[*k].as_table().unwrap_or_else(|| panic!("{k}")))
}

/// Drafts `file` into `dir/d.toml` (exit 0); returns that path.
fn draft(dir: &Path, file: &Path) -> PathBuf {
    let d = dir.join("d.toml");
    let out = tenmin(
        &["draft", file.to_str().unwrap(), "-o", d.to_str().unwrap()],
        dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    d
}

/// Drafts `file` into `dir/d.toml` (exit 0), replays it with the draft
/// (exit 0), returns the draft and the records.
fn draft_and_replay(dir: &Path, file: &Path) -> (toml::Table, String) {
    let d = draft(dir, file);
    let r = dir.join("r.csv");
    let out = tenmin(
        &[
            "replay",
            "--config",
            d.to_str().unwrap(),
            file.to_str().unwrap(),
            "-o",
            r.to_str().unwrap(),
        ],
        dir,
    );
    assert_eq!(
        out.status.code(),
        Some(0),
        "replay with the draft: {}\n{}",
        text(&out.stderr),
        std::fs::read_to_string(&d).unwrap()
    );
    (toml_of(&d), std::fs::read_to_string(&r).unwrap())
}

/// Records rows of one channel as column -> field maps.
fn rows_of(records: &str, id: &str) -> Vec<std::collections::HashMap<String, String>> {
    common::records(records)
        .into_iter()
        .filter(|r| r["channel"] == id)
        .collect()
}

#[test]
fn the_example_field_files_replay_with_their_drafts_and_map_speed_and_direction() {
    for (folder, file) in [
        ("asos-ewr-hourly", "asos-nyc-2013-hourly.csv"),
        ("midc-1min", "midc-uat-20181018-1min.csv"),
        ("surfrad-1min", "surfrad-alamosa-2016-001-1min.dat"),
    ] {
        let dir = tempfile::tempdir().unwrap();
        let src = examples().join(folder);
        let (draft, records) = draft_and_replay(dir.path(), &src.join(file));
        // The hand-written station file beside the example maps these.
        let hand = toml_of(&src.join("station.toml"));
        for id in ["ws", "wd"] {
            assert_eq!(
                channel(&draft, id).get("column"),
                channel(&hand, id).get("column"),
                "{folder}: channel {id}"
            );
        }
        assert_eq!(channel(&draft, "ws")["kind"].as_str(), Some("speed"));
        assert_eq!(channel(&draft, "wd")["kind"].as_str(), Some("direction"));
        assert_eq!(channel(&draft, "wd")["speed_channel"].as_str(), Some("ws"));
        // The same time columns and sample period as the hand-written file.
        let (ht, dt) = (
            table(&hand, &["input", "time"]),
            table(&draft, &["input", "time"]),
        );
        assert_eq!(dt.get("column"), ht.get("column"), "{folder}");
        assert_eq!(dt.get("columns"), ht.get("columns"), "{folder}");
        assert_eq!(dt.get("format"), ht.get("format"), "{folder}");
        assert_eq!(
            table(&draft, &["logging"]).get("sample_period_s"),
            table(&hand, &["logging"]).get("sample_period_s"),
            "{folder}"
        );
        assert!(!rows_of(&records, "ws").is_empty(), "{folder}");
    }
}

#[test]
fn midc_draft_hints_at_local_standard_time_and_leaves_the_zone_to_check() {
    let dir = tempfile::tempdir().unwrap();
    let d = draft(
        dir.path(),
        &examples().join("midc-1min/midc-uat-20181018-1min.csv"),
    );
    let s = std::fs::read_to_string(&d).unwrap();
    let zone = s.lines().find(|l| l.starts_with("zone = ")).unwrap();
    assert!(
        zone.starts_with("zone = \"UTC\"") && zone.contains("CHECK"),
        "{zone}"
    );
    assert!(
        s.contains("\"MST\": the times may be local standard time"),
        "{s}"
    );
    // The pressure in mBar is converted (1 mbar = 1 hPa, by definition).
    assert_eq!(
        channel(&toml_of(&d), "p")["source_unit"].as_str(),
        Some("mbar")
    );
}

#[test]
fn surfrad_quality_columns_are_drafted() {
    let dir = tempfile::tempdir().unwrap();
    let d = draft(
        dir.path(),
        &examples().join("surfrad-1min/surfrad-alamosa-2016-001-1min.dat"),
    );
    let s = std::fs::read_to_string(&d).unwrap();
    // Columns 44 and 46 hold the quality codes of 43 and 45 (the
    // hand-written station file says so).
    assert!(
        s.lines()
            .any(|l| l == "quality = { column = 44, good = [\"0\"] }"),
        "{s}"
    );
    assert!(
        s.lines()
            .any(|l| l == "quality = { column = 46, good = [\"0\"] }"),
        "{s}"
    );
    let t = toml_of(&d);
    assert_eq!(table(&t, &["input"])["skip_lines"].as_integer(), Some(2));
    assert_eq!(table(&t, &["input"])["header"].as_bool(), Some(false));
    assert_eq!(
        table(&t, &["input"])["delimiter"].as_str(),
        Some("whitespace")
    );
}

#[test]
fn semicolons_and_decimal_commas() {
    let dir = tempfile::tempdir().unwrap();
    let f = write(
        dir.path(),
        "ten-seconds.csv",
        "Zeit;Windgeschwindigkeit [m/s];Windrichtung [°];Temperatur [°C]\n\
         01.03.2024 00:00:00;3,4;270;5,5\n\
         01.03.2024 00:00:10;3,9;265;5,5\n\
         01.03.2024 00:00:20;-9999;262;5,6\n\
         01.03.2024 00:00:30;4,4;259;5,6\n\
         01.03.2024 00:00:40;4,0;280;5,7\n\
         01.03.2024 00:00:50;3,1;290;5,7\n\
         01.03.2024 00:01:00;2,8;300;5,8\n",
    );
    let (d, records) = draft_and_replay(dir.path(), &f);
    let input = table(&d, &["input"]);
    assert_eq!(input["delimiter"].as_str(), Some(";"));
    assert_eq!(input["decimal"].as_str(), Some(","));
    assert!(input["missing"]
        .as_array()
        .unwrap()
        .iter()
        .any(|m| m.as_str() == Some("-9999")));
    let time = table(&d, &["input", "time"]);
    assert_eq!(time["column"].as_str(), Some("Zeit"));
    assert_eq!(time["format"].as_str(), Some("%d.%m.%Y %H:%M:%S"));
    assert_eq!(
        table(&d, &["logging"])["sample_period_s"].as_integer(),
        Some(10)
    );
    assert_eq!(
        channel(&d, "ws")["column"].as_str(),
        Some("Windgeschwindigkeit [m/s]")
    );
    assert_eq!(
        channel(&d, "wd")["column"].as_str(),
        Some("Windrichtung [°]")
    );
    assert_eq!(channel(&d, "t")["column"].as_str(), Some("Temperatur [°C]"));
    // All seven rows fall in 00:00-00:10: six speeds and the -9999 missing;
    // the mean of 3.4 3.9 4.4 4.0 3.1 2.8 is 21.6 / 6 = 3.6.
    let ws = rows_of(&records, "ws");
    assert_eq!(ws[0]["n_valid"], "6");
    assert_eq!(ws[0]["n_missing"], "1");
    let mean: f64 = ws[0]["mean"].parse().unwrap();
    assert!((mean - 3.6).abs() < 1e-9, "{mean}");
}

#[test]
fn tabs_and_a_date_time_column() {
    let dir = tempfile::tempdir().unwrap();
    let mut s = String::from("timestamp\tws\twd\n");
    for i in 0..30 {
        s += &format!(
            "2024-03-01 00:{i:02}:00\t{}.5\t{}\n",
            i % 7 + 1,
            i * 11 % 360
        );
    }
    let f = write(dir.path(), "minutes.tsv", s);
    let (d, records) = draft_and_replay(dir.path(), &f);
    assert_eq!(table(&d, &["input"])["delimiter"].as_str(), Some("tab"));
    let time = table(&d, &["input", "time"]);
    assert_eq!(time["format"].as_str(), Some("%Y-%m-%d %H:%M:%S"));
    assert_eq!(
        table(&d, &["logging"])["sample_period_s"].as_integer(),
        Some(60)
    );
    assert_eq!(
        table(&d, &["logging"])["interval_s"].as_integer(),
        Some(600)
    );
    assert_eq!(channel(&d, "ws")["column"].as_str(), Some("ws"));
    assert_eq!(channel(&d, "wd")["column"].as_str(), Some("wd"));
    // 30 one-minute rows: three 10-minute intervals of 10 samples.
    let ws = rows_of(&records, "ws");
    assert_eq!(ws.len(), 3);
    assert!(ws.iter().all(|r| r["n_valid"] == "10"), "{ws:?}");
}

#[test]
fn rfc3339_times_with_an_offset_need_no_zone() {
    let dir = tempfile::tempdir().unwrap();
    let mut s = String::from("time,speed,dir,rh\n");
    for i in 0..20 {
        s += &format!(
            "2024-03-01T01:{i:02}:00+01:00,{}.2,{},{}.5\n",
            i % 5 + 2,
            i * 17 % 360,
            50 + i
        );
    }
    let f = write(dir.path(), "offset.csv", s);
    let (d, records) = draft_and_replay(dir.path(), &f);
    let time = table(&d, &["input", "time"]);
    assert_eq!(time["column"].as_str(), Some("time"));
    assert!(
        time.get("format").is_none() && time.get("zone").is_none(),
        "{time:?}"
    );
    assert_eq!(channel(&d, "ws")["column"].as_str(), Some("speed"));
    assert_eq!(channel(&d, "wd")["column"].as_str(), Some("dir"));
    assert_eq!(channel(&d, "rh")["column"].as_str(), Some("rh"));
    // 01:00+01:00 is 00:00Z (RFC 3339, section 4.2).
    assert_eq!(rows_of(&records, "ws")[0]["start"], "2024-03-01T00:00:00Z");
}

#[test]
fn epoch_milliseconds_at_one_hertz() {
    let dir = tempfile::tempdir().unwrap();
    let mut s = String::from("epoch_ms,WS_80m,WD_78m\n");
    // 1709251200 s is 2024-03-01T00:00:00Z (POSIX time, from memory; `date -u -d @1709251200`).
    for i in 0..40i64 {
        s += &format!(
            "{},{}.{:02},{}.0\n",
            1_709_251_200_000 + i * 1000,
            i % 9 + 3,
            i * 7 % 100,
            i * 23 % 360
        );
    }
    let f = write(dir.path(), "fast.csv", s);
    let (d, records) = draft_and_replay(dir.path(), &f);
    assert_eq!(table(&d, &["input", "time"])["epoch"].as_str(), Some("ms"));
    assert_eq!(
        table(&d, &["logging"])["sample_rate_hz"].as_integer(),
        Some(1)
    );
    let ws = channel(&d, "ws");
    assert_eq!(ws["column"].as_str(), Some("WS_80m"));
    assert_eq!(ws["height_m"].as_integer(), Some(80));
    assert_eq!(channel(&d, "wd")["column"].as_str(), Some("WD_78m"));
    let rows = rows_of(&records, "ws");
    assert_eq!(rows[0]["start"], "2024-03-01T00:00:00Z");
    assert_eq!(rows[0]["n_valid"], "40");
}

#[test]
fn no_header_year_day_of_year_and_hhmm() {
    let dir = tempfile::tempdir().unwrap();
    let mut s = String::new();
    for i in 0..31 {
        let m = i * 10;
        s += &format!(
            "2024,61,{},{}.{},{}\n",
            m / 60 * 100 + m % 60,
            i % 6 + 1,
            i % 10,
            i * 29 % 360
        );
    }
    let f = write(dir.path(), "positions.csv", s);
    let (d, records) = draft_and_replay(dir.path(), &f);
    assert_eq!(table(&d, &["input"])["header"].as_bool(), Some(false));
    let time = table(&d, &["input", "time"]);
    assert_eq!(
        time["columns"]
            .as_array()
            .unwrap()
            .iter()
            .map(|c| c.as_integer().unwrap())
            .collect::<Vec<_>>(),
        [1, 2, 3]
    );
    assert_eq!(time["format"].as_str(), Some("%Y %j %{hhmm}"));
    assert_eq!(channel(&d, "ws")["column"].as_integer(), Some(4));
    assert_eq!(channel(&d, "wd")["column"].as_integer(), Some(5));
    // Day 61 of the leap year 2024 is 1 March.
    assert_eq!(rows_of(&records, "ws")[0]["start"], "2024-03-01T00:00:00Z");
}

#[test]
fn compressed_files_are_read_as_streams() {
    use std::io::Write;
    let dir = tempfile::tempdir().unwrap();
    let mut s = String::from("time,wspd,wdir\n");
    for i in 0..20 {
        s += &format!(
            "2024-03-01T00:{i:02}:00Z,{}.1,{}\n",
            i % 4 + 1,
            i * 13 % 360
        );
    }
    let p = dir.path().join("day.csv.gz");
    let mut gz = flate2::write::GzEncoder::new(
        std::fs::File::create(&p).unwrap(),
        flate2::Compression::default(),
    );
    gz.write_all(s.as_bytes()).unwrap();
    gz.finish().unwrap();
    let (d, _) = draft_and_replay(dir.path(), &p);
    assert_eq!(channel(&d, "ws")["column"].as_str(), Some("wspd"));
    assert_eq!(channel(&d, "wd")["column"].as_str(), Some("wdir"));
}

#[test]
fn bad_input_is_exit_2_naming_the_file() {
    let dir = tempfile::tempdir().unwrap();
    let endless = vec![b'7'; (1 << 20) + 10];
    let cases: [(&str, Vec<u8>, &str); 4] = [
        ("empty.csv", Vec::new(), "empty"),
        (
            "garbage.bin",
            (0..4096u32).map(|i| (i * 7919 % 251) as u8).collect(),
            "not a text file",
        ),
        (
            "endless.csv",
            endless,
            "no line end in the first 1048576 bytes",
        ),
        (
            "words.csv",
            b"a,b\nx,y\nz,w\n".to_vec(),
            "no column of numbers",
        ),
    ];
    for (name, bytes, says) in cases {
        let p = write(dir.path(), name, &bytes);
        let out = tenmin(&["draft", p.to_str().unwrap()], dir.path());
        let err = text(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{name}: {err}");
        assert!(err.contains(name) && err.contains(says), "{name}: {err}");
        assert!(out.stdout.is_empty(), "{name}");
    }
    // A missing file, and an output over the input.
    let out = tenmin(&["draft", "no-such.csv"], dir.path());
    assert_eq!(out.status.code(), Some(2));
    assert!(text(&out.stderr).contains("no-such.csv"));
    let p = write(
        dir.path(),
        "keep.csv",
        "time,ws\n2024-03-01T00:00:00Z,1.5\n",
    );
    let out = tenmin(&["draft", "keep.csv", "-o", "./keep.csv"], dir.path());
    assert_eq!(out.status.code(), Some(2), "{}", text(&out.stderr));
    assert_eq!(
        std::fs::read_to_string(&p).unwrap(),
        "time,ws\n2024-03-01T00:00:00Z,1.5\n"
    );
}

#[test]
fn without_a_time_the_draft_is_written_but_says_it_does_not_load() {
    let dir = tempfile::tempdir().unwrap();
    let f = write(dir.path(), "notime.csv", "a,ws\nx,1.5\ny,2.5\nz,3.5\n");
    let d = dir.path().join("d.toml");
    let out = tenmin(&["draft", "notime.csv", "-o", "d.toml"], dir.path());
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    assert!(
        text(&out.stderr).contains("does not load as it is"),
        "{}",
        text(&out.stderr)
    );
    let out = tenmin(
        &["replay", "-c", d.to_str().unwrap(), f.to_str().unwrap()],
        dir.path(),
    );
    refused(&out, &["`columns`"]);
}
