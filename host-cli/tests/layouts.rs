//! Declared input layouts, one feature at a time: each small field file is
//! replayed with its `[input]` and compared with tenmin's own samples CSV of the
//! same samples (written here by hand, in UTC), whose records must be
//! byte-identical. Times are converted by hand in the comments; the zone rules
//! used are cited where they matter.

mod common;
use common::{exits, tenmin, text, write};

/// A 10-minute station of one anemometer and one vane, with `extra` keys
/// appended (an `[input]` table, channel keys).
fn station(logging: &str, input: &str, ws_keys: &str, wd_keys: &str) -> String {
    format!(
        "[logging]\ninterval_s = 600\n{logging}\n\n{input}\n\n[[channel]]\nid = \"ws\"\nkind = \"speed\"\nresolution = 0.1\n{ws_keys}\n\n[[channel]]\nid = \"wd\"\nkind = \"direction\"\n{wd_keys}\n"
    )
}

/// Replays `file` with `toml` and the own-format `own_csv` with the same
/// station minus the layout; asserts identical records, on 1 and 2 threads.
fn same_records(name: &str, toml: &str, file: &[u8], own_csv: &str, own_toml: &str) {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    write(d, "layout.toml", toml);
    write(d, "own.toml", own_toml);
    let field = format!("field-{name}");
    write(d, &field, file);
    write(d, "own.csv", own_csv);
    let own = tenmin(&["replay", "-c", "own.toml", "own.csv", "-q"], d);
    assert!(own.status.success(), "{name}: own: {}", text(&own.stderr));
    assert!(!own.stdout.is_empty());
    for jobs in ["1", "2"] {
        let got = tenmin(
            &[
                "replay",
                "-c",
                "layout.toml",
                &field,
                "-q",
                "-j",
                jobs,
                "--chunk-size",
                "64",
            ],
            d,
        );
        assert!(got.status.success(), "{name}: {}", text(&got.stderr));
        assert_eq!(
            text(&got.stdout),
            text(&own.stdout),
            "{name} (jobs {jobs}): records differ from the same samples in tenmin's own CSV"
        );
    }
}

const RATE_1S: &str = "sample_rate_hz = 1";

#[test]
fn semicolons_decimal_commas_units_line_and_local_end_labels() {
    // Europe/Berlin in January is UTC+1 (CET; EU Directive 2000/84/EC keeps
    // summer time from the last Sunday of March to the last Sunday of October).
    // End labels: 01:00:01 local closes the second 00:00:00-00:00:01 UTC.
    let toml = station(
        RATE_1S,
        "[input]\ndelimiter = \";\"\ndecimal = \",\"\nunits_line = true\n\n[input.time]\ncolumn = \"Zeit\"\nformat = \"%d.%m.%Y %H:%M:%S\"\nzone = \"Europe/Berlin\"\nlabel = \"end\"",
        "column = \"WG\"",
        "column = \"WR\"",
    );
    let file = "Zeit;WG;WR\n;m/s;Grad\n20.01.2025 01:00:01;4,5;270\n20.01.2025 01:00:02;5,5;280\n20.01.2025 01:00:03;;290\n";
    let own = "time,ws,wd\n2025-01-20T00:00:00Z,4.5,270\n2025-01-20T00:00:01Z,5.5,280\n2025-01-20T00:00:02Z,,290\n";
    same_records(
        "semicolon.csv",
        &toml,
        file.as_bytes(),
        own,
        &station(RATE_1S, "", "", ""),
    );
}

#[test]
fn whitespace_positions_skipped_lines_and_missing_texts() {
    let toml = station(
        "sample_period_s = 60",
        "[input]\ndelimiter = \"whitespace\"\nskip_lines = 2\nheader = false\nmissing = [\"-9999.9\"]\n\n[input.time]\ncolumns = [1, 2, 3, 4, 5]\nformat = \"%Y %m %d %H %M\"",
        "column = 7",
        "column = 6",
    );
    let file = " A station\n  12.3  45.6 100 m\n 2016  1  1  0  0   270.0   3.1\n 2016  1  1  0  1 -9999.9   3.3\n\t2016  1  1  0  2   280.5 -9999.9\n";
    let own = "time,ws,wd\n2016-01-01T00:00:00Z,3.1,270.0\n2016-01-01T00:01:00Z,3.3,\n2016-01-01T00:02:00Z,,280.5\n";
    same_records(
        "network.dat",
        &toml,
        file.as_bytes(),
        own,
        &station("sample_period_s = 60", "", "", ""),
    );
}

#[test]
fn a_row_filter_units_and_quoted_names() {
    // 10 mph = 4.4704 m/s and 20 knots = 10.2888... m/s (exact definitions,
    // NIST SP 811 B.8): with 0.1 m/s resolution the core keeps 4.5 and 10.3.
    let toml = station(
        RATE_1S,
        "[input]\nmissing = [\"NA\"]\nfilter = { column = \"site\", value = \"B\" }\n\n[input.time]\ncolumn = \"time stamp (UTC)\"",
        "column = \"Wind speed [mph]\"\nsource_unit = \"mph\"",
        "column = \"dir\"",
    );
    let file = "site,\"time stamp (UTC)\",\"Wind speed [mph]\",dir\nA,2025-01-20T00:00:00Z,99,1\nB,2025-01-20T00:00:00Z,10,90\nB,2025-01-20T00:00:01Z,NA,NA\nA,2025-01-20T00:00:01Z,99,1\nB,2025-01-20T00:00:02Z,0,180\n";
    let own = "time,ws,wd\n2025-01-20T00:00:00Z,4.4704,90\n2025-01-20T00:00:01Z,,\n2025-01-20T00:00:02Z,0,180\n";
    same_records(
        "sites.csv",
        &toml,
        file.as_bytes(),
        own,
        &station(RATE_1S, "", "", ""),
    );
    let knots = station(
        RATE_1S,
        "[input]\n[input.time]\ncolumn = \"t\"",
        "column = \"kt\"\nsource_unit = \"knot\"",
        "column = \"d\"",
    );
    same_records(
        "knots.csv",
        &knots,
        b"t,kt,d\n2025-01-20T00:00:00Z,20,10\n",
        "time,ws,wd\n2025-01-20T00:00:00Z,10.2888888888889,10\n",
        &station(RATE_1S, "", "", ""),
    );
}

#[test]
fn epoch_milliseconds_comments_and_fixed_offsets() {
    // 2025-01-20T00:00:00Z = 1737331200 s (POSIX time, common practice).
    let toml = station(
        RATE_1S,
        "[input]\ncomment = \"#\"\n\n[input.time]\ncolumn = \"ts\"\nepoch = \"ms\"",
        "",
        "",
    );
    let file =
        "# logger 7, firmware 2.1\nts,ws,wd\n1737331200000,4,10\n# a reset\n1737331201000,5,20\n";
    let own = "time,ws,wd\n2025-01-20T00:00:00Z,4,10\n2025-01-20T00:00:01Z,5,20\n";
    same_records(
        "epoch.csv",
        &toml,
        file.as_bytes(),
        own,
        &station(RATE_1S, "", "", ""),
    );
    // Year, day of year and HHMM at UTC-7: 2018 day 291 is 2018-10-18
    // (273 days to the end of September), 23:55 local is 06:55 UTC next day.
    let toml = station(
        "sample_period_s = 60",
        "[input]\n[input.time]\ncolumns = [\"Year\", \"DOY\", \"HHMM\"]\nformat = \"%Y %j %{hhmm}\"\nzone = \"-07:00\"",
        "",
        "",
    );
    let file = "Year,DOY,HHMM,ws,wd\n2018,291,2355,3,100\n2018,291,2356,4,110\n2018,292,5,5,120\n";
    let own = "time,ws,wd\n2018-10-19T06:55:00Z,3,100\n2018-10-19T06:56:00Z,4,110\n2018-10-19T07:05:00Z,5,120\n";
    same_records(
        "doy.csv",
        &toml,
        file.as_bytes(),
        own,
        &station("sample_period_s = 60", "", "", ""),
    );
}

#[test]
fn slow_data_gets_no_invented_gust() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    write(d, "s.toml", station("sample_period_s = 60", "", "", ""));
    write(
        d,
        "s.csv",
        "time,ws,wd\n2025-01-20T00:00:00Z,4,10\n2025-01-20T00:01:00Z,9,20\n",
    );
    let out = tenmin(&["replay", "-c", "s.toml", "s.csv", "-q"], d);
    assert!(out.status.success(), "{}", text(&out.stderr));
    let rec = text(&out.stdout);
    let ws = rec.lines().find(|l| l.contains(",ws,")).unwrap();
    let f: Vec<&str> = ws.split(',').collect();
    // start,end,channel,n_possible,n_valid,mean,sd,min,max,gust
    assert_eq!((f[3], f[4], f[8], f[9]), ("10", "2", "9", ""), "{ws}");
    // An explicit window of one sample is the largest 1-minute mean.
    write(
        d,
        "g.toml",
        station("sample_period_s = 60", "", "gust_window_s = 60", ""),
    );
    let out = tenmin(&["replay", "-c", "g.toml", "s.csv", "-q"], d);
    assert!(out.status.success(), "{}", text(&out.stderr));
    let rec = text(&out.stdout);
    let ws = rec.lines().find(|l| l.contains(",ws,")).unwrap();
    assert_eq!(ws.split(',').nth(9), Some("9"), "{ws}");
}

#[test]
fn a_layout_that_cannot_be_right_is_refused_before_any_sample() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    write(d, "s.csv", "t,speed,dir\n2025-01-20T00:00:00Z,4,10\n");
    let cases = [
        (
            station(
                RATE_1S,
                "[input]\n[input.time]\ncolumn = \"t\"",
                "column = \"spd\"",
                "column = \"dir\"",
            ),
            "no column \"spd\" in the header, which `column` of channel \"ws\" at bad.toml:13 names",
        ),
        (
            station(
                RATE_1S,
                "[input]\n[input.time]\ncolumn = \"t\"\nformat = \"%H:%M\"",
                "",
                "",
            ),
            "gives no full date",
        ),
        (
            station(
                RATE_1S,
                "[input]\n[input.time]\ncolumn = \"t\"\nzone = \"Atlantis/Capital\"",
                "",
                "",
            ),
            "zone",
        ),
        (
            station(RATE_1S, "[input]\ndelimiter = \"|\"", "", ""),
            "`delimiter`",
        ),
        (
            station(RATE_1S, "[input]\nheader = false", "column = \"speed\"", ""),
            "without a header",
        ),
        (
            station(
                RATE_1S,
                "[input]\n[input.time]\ncolumn = \"t\"",
                "column = \"speed\"\nsource_unit = \"degF\"",
                "column = \"dir\"",
            ),
            "cannot be converted to m/s",
        ),
        (
            station(RATE_1S, "", "column = \"speed\"", ""),
            "add an [input] table",
        ),
    ];
    for (toml, want) in cases {
        write(d, "bad.toml", &toml);
        let out = tenmin(&["replay", "-c", "bad.toml", "s.csv"], d);
        let err = text(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{want}: {err}");
        assert!(
            err.contains(want) && err.contains("bad.toml"),
            "{want}: {err}"
        );
    }
}

/// The rows of a records CSV, split into fields (header left out).
fn rows(csv: &[u8]) -> Vec<Vec<String>> {
    text(csv)
        .lines()
        .skip(1)
        .map(|l| l.split(',').map(str::to_string).collect())
        .collect()
}

const N_MISSING: usize = 11;
const N_FLAGGED: usize = 19;

#[test]
fn quality_codes_not_good_count_as_flagged_and_stay_out_of_the_statistics() {
    // Invented data. Good codes "0" and "1"; a bad code makes the reading
    // flagged whatever its value: 99.9 (out of range were it read), "x" (not a
    // number), and an empty code (not among the good ones) included.
    let toml = station(
        RATE_1S,
        "[input]\n\n[input.time]\ncolumn = \"time\"",
        "column = \"ws\"\nquality = { column = \"q1\", good = [\"0\", \"1\"] }",
        "column = \"wd\"\nquality = { column = \"q2\", good = [\"0\"] }\nspeed_channel = \"ws\"",
    );
    let file = "time,ws,q1,wd,q2\n\
        2025-01-20T00:00:00Z,4.5,0,270,0\n\
        2025-01-20T00:00:01Z,5.0,1,275,0\n\
        2025-01-20T00:00:02Z,99.9,2,280,0\n\
        2025-01-20T00:00:03Z,5.5,0,x,9\n\
        2025-01-20T00:00:04Z,6.0,0,290,\n\
        2025-01-20T00:00:05Z,,0,300,0\n\
        2025-01-20T00:00:06Z,6.5,0,310,0\n\
        2025-01-20T00:10:00Z,7.0,3,320,0\n\
        2025-01-20T00:10:01Z,7.5,0,330,0\n";
    // The same samples in tenmin's own CSV, the flagged readings missing.
    let own = "time,ws,wd\n\
        2025-01-20T00:00:00Z,4.5,270\n\
        2025-01-20T00:00:01Z,5.0,275\n\
        2025-01-20T00:00:02Z,,280\n\
        2025-01-20T00:00:03Z,5.5,\n\
        2025-01-20T00:00:04Z,6.0,\n\
        2025-01-20T00:00:05Z,,300\n\
        2025-01-20T00:00:06Z,6.5,310\n\
        2025-01-20T00:10:00Z,,320\n\
        2025-01-20T00:10:01Z,7.5,330\n";
    let own_toml = station(RATE_1S, "", "", "speed_channel = \"ws\"");
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    write(d, "layout.toml", &toml);
    write(d, "own.toml", &own_toml);
    write(d, "field.csv", file);
    write(d, "own.csv", own);
    let o = tenmin(&["replay", "-c", "own.toml", "own.csv", "-q"], d);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let f = tenmin(&["replay", "-c", "layout.toml", "field.csv"], d);
    assert!(f.status.success(), "{}", text(&f.stderr));
    assert!(text(&f.stdout).starts_with("start,"));
    assert!(text(&f.stdout)
        .lines()
        .next()
        .unwrap()
        .contains(",n_spikes,n_flagged,n_excluded"));
    let (fr, or) = (rows(&f.stdout), rows(&o.stdout));
    assert_eq!(fr.len(), 4);
    // Counted by hand from the file above: ws 1 flagged in the first
    // interval and 1 in the second, wd 2 in the first.
    let flagged: Vec<&str> = fr.iter().map(|r| r[N_FLAGGED].as_str()).collect();
    assert_eq!(flagged, ["1", "2", "1", "0"]);
    let valid: Vec<&str> = fr.iter().map(|r| r[4].as_str()).collect();
    assert_eq!(valid, ["5", "5", "1", "2"]);
    // The mean of 4.5, 5.0, 5.5, 6.0 and 6.5 m/s: 5.5, without the flagged 99.9.
    assert_eq!(fr[0][5], "5.5");
    for (a, b) in fr.iter().zip(&or) {
        // Every other column equal; what the own CSV counts missing, the
        // field file counts missing or flagged.
        for k in 0..a.len() {
            if k != N_MISSING && k != N_FLAGGED {
                assert_eq!(a[k], b[k], "column {k}: {a:?} vs {b:?}");
            }
        }
        let n = |s: &str| s.parse::<u32>().unwrap();
        assert_eq!(n(&b[N_FLAGGED]), 0);
        assert_eq!(n(&a[N_MISSING]) + n(&a[N_FLAGGED]), n(&b[N_MISSING]));
    }
    // The summary counts them per channel: ws 2, wd 2.
    let summary = text(&f.stderr);
    let header = summary.lines().find(|l| l.starts_with("channel")).unwrap();
    let col = header
        .split_whitespace()
        .position(|w| w == "flagged")
        .unwrap();
    for (id, want) in [("ws", "2"), ("wd", "2")] {
        let line = summary
            .lines()
            .find(|l| l.starts_with(&format!("{id} ")))
            .unwrap();
        assert_eq!(line.split_whitespace().nth(col), Some(want), "{summary}");
    }
    // Two threads: the same bytes.
    let j2 = tenmin(
        &[
            "replay",
            "-c",
            "layout.toml",
            "field.csv",
            "-q",
            "-j",
            "2",
            "--chunk-size",
            "64",
        ],
        d,
    );
    assert!(j2.status.success(), "{}", text(&j2.stderr));
    assert_eq!(j2.stdout, f.stdout);
    // A logger's records without the n_flagged column read as 0 flagged:
    // the own CSV's records verify against the own CSV; against the field
    // file they differ in n_flagged (and n_missing).
    let strip = |csv: &[u8]| -> String {
        text(csv)
            .lines()
            .map(|l| &l[..l.rfind(',').unwrap()])
            .map(|l| format!("{l}\n"))
            .collect()
    };
    write(d, "old-own.csv", strip(&o.stdout));
    let v = tenmin(
        &[
            "verify",
            "-q",
            "-c",
            "own.toml",
            "--samples",
            "own.csv",
            "--records",
            "old-own.csv",
        ],
        d,
    );
    exits(&v, 0);
    let v = tenmin(
        &[
            "verify",
            "-c",
            "layout.toml",
            "--samples",
            "field.csv",
            "--records",
            "old-own.csv",
        ],
        d,
    );
    let report = exits(&v, 1);
    assert!(report.contains("n_flagged"), "{report}");
}

#[test]
fn the_network_example_with_quality_codes_replays_and_counts_bad_codes() {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../examples/field-files/surfrad-1min");
    let toml = root.join("station.toml");
    let data = root.join("surfrad-alamosa-2016-001-1min.dat");
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let (toml, data) = (toml.to_str().unwrap(), data.to_str().unwrap());
    let whole = tenmin(&["replay", "-c", toml, data, "-q"], d);
    assert!(whole.status.success(), "{}", text(&whole.stderr));
    let rows_whole = rows(&whole.stdout);
    // 144 ten-minute intervals of a day, five channels; every code in the
    // file is 0 (good).
    assert_eq!(rows_whole.len(), 144 * 5);
    assert!(rows_whole.iter().all(|r| r[N_FLAGGED] == "0"));
    // Fault injection: the first minute's wind speed code set to 1 (not
    // among the good codes), fields joined by single spaces (the file's
    // delimiter is any run of whitespace).
    let original = std::fs::read_to_string(data).unwrap();
    let mut lines: Vec<String> = original.lines().map(str::to_string).collect();
    let mut fields: Vec<&str> = lines[2].split_whitespace().collect();
    assert_eq!(fields[43], "0", "column 44 is the speed's code");
    fields[43] = "1";
    lines[2] = fields.join(" ");
    write(d, "bad-code.dat", lines.join("\n") + "\n");
    let bad = tenmin(&["replay", "-c", toml, "bad-code.dat", "-q"], d);
    assert!(bad.status.success(), "{}", text(&bad.stderr));
    let rows_bad = rows(&bad.stdout);
    assert_eq!(rows_bad.len(), rows_whole.len());
    assert_eq!(rows_bad[0][2], "ws");
    assert_eq!(rows_bad[0][N_FLAGGED], "1");
    assert_eq!(rows_bad[0][4], "9", "9 of 10 speeds valid");
    assert_eq!(rows_whole[0][4], "10");
    // The vane's resultant loses that minute's pair; its own statistics
    // and counts, and every other row, are as before.
    assert_eq!(rows_bad[1][..15], rows_whole[1][..15]);
    assert_ne!(rows_bad[1][16], rows_whole[1][16], "resultant speed");
    assert!(
        rows_bad[2..] == rows_whole[2..],
        "rows after the first interval's vane differ"
    );
}

#[test]
fn a_time_format_that_cannot_read_the_first_row_is_refused_even_skipping_bad_rows() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    write(d, "s.csv", "t,speed,dir\n2025-01-20T00:00:00Z,4,10\n");
    let toml = station(
        RATE_1S,
        "[input]\n[input.time]\ncolumn = \"t\"\nformat = \"%d.%m.%Y %H:%M\"",
        "column = \"speed\"",
        "column = \"dir\"",
    );
    write(d, "bad.toml", &toml);
    for extra in [None, Some("--skip-bad-rows")] {
        let mut args = vec!["replay", "-c", "bad.toml", "s.csv"];
        args.extend(extra);
        let out = tenmin(&args, d);
        let err = text(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{err}");
        assert!(
            err.contains("s.csv:2: field 1 (t)")
                && err.contains("[input.time] at bad.toml:7 cannot read the first data row"),
            "{err}"
        );
        assert!(
            out.stdout.is_empty() || !text(&out.stdout).contains("2025"),
            "{err}"
        );
    }
}

#[test]
fn rows_read_in_one_pass_and_the_general_way_give_the_same_records() {
    // Invented rows, mostly plain (read in one pass), mixed with rows that
    // take the general way (spaces around a number, a comment line, an
    // unused column holding text), empty fields, and times with gaps,
    // duplicates and backward steps: the records must be those of the same
    // samples in tenmin's own CSV. Then with a missing-value text, which some
    // speeds hold (an empty field in the own CSV), and `NaN` in others.
    one_pass_and_general_records(false);
    one_pass_and_general_records(true);
}

fn one_pass_and_general_records(codes: bool) {
    let missing = if codes { "missing = [\"NAN\"]\n" } else { "" };
    let toml = station(
        RATE_1S,
        &format!("[input]\ndelimiter = \";\"\ndecimal = \",\"\ncomment = \"#\"\n{missing}\n[input.time]\ncolumn = \"Zeit\"\nformat = \"%Y-%m-%d %H:%M:%S\""),
        "column = \"WG\"",
        "column = \"WR\"",
    );
    let mut x = 0x2545_F491_4F6C_DD1Du64;
    let mut next = move || {
        x ^= x << 13;
        x ^= x >> 7;
        x ^= x << 17;
        x
    };
    let mut file = String::from("Zeit;Notiz;WG;WR\n");
    let mut own = String::from("time,ws,wd\n");
    let mut s = 1_737_331_200i64; // 2025-01-20T00:00:00Z
    for _ in 0..5000 {
        s += match next() % 50 {
            0 => 0,
            1 => -3,
            2 => 700,
            _ => 1,
        };
        let t = qc_core::Timestamp::from_millis(s * 1000).civil();
        let (date, clock) = (
            format!("{:04}-{:02}-{:02}", t.year, t.month, t.day),
            format!("{:02}:{:02}:{:02}", t.hour, t.minute, t.second),
        );
        let ws = (next() % 3000) as f64 / 100.0;
        let wd = (next() % 3600) as f64 / 10.0;
        let (ws_f, ws_o) = match next() % 20 {
            0 => (String::new(), String::new()),
            1 => (format!(" {} ", ws).replace('.', ","), ws.to_string()),
            2 if codes => ("NAN".to_string(), String::new()),
            3 if codes => ("nan".to_string(), "NaN".to_string()),
            _ => (ws.to_string().replace('.', ","), ws.to_string()),
        };
        let note = if next() % 10 == 0 { "Wartung" } else { "" };
        if next() % 40 == 0 {
            file.push_str("# Kommentar; 1,5\n");
        }
        file.push_str(&format!(
            "{date} {clock};{note};{ws_f};{}\n",
            wd.to_string().replace('.', ",")
        ));
        own.push_str(&format!("{date}T{clock}Z,{ws_o},{wd}\n"));
    }
    same_records(
        if codes {
            "one-pass-codes.csv"
        } else {
            "one-pass.csv"
        },
        &toml,
        file.as_bytes(),
        &own,
        &station(RATE_1S, "", "", ""),
    );
}

#[test]
fn a_bad_row_after_crlf_ends_and_blank_lines_is_reported_on_its_own_line() {
    // Windows line ends and a blank line before a bad row: the row is on
    // line 5 (header 1, rows 2 and 3, blank 4), whether the layout is read
    // in one pass (with or without a missing-value text) or (with a unit
    // conversion) the general way. The general way once counted each line
    // end twice.
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    write(
        d,
        "s.csv",
        "t;speed;dir\r\n\
         2025-01-20T00:00:00Z;4;10\r\n\
         2025-01-20T00:00:01Z;5;20\r\n\
         \r\n\
         2025-01-20T00:00:02Z;x;30\r\n\
         2025-01-20T00:00:03Z;6;40\r\n",
    );
    for (missing, ws) in [
        ("", "column = \"speed\""),
        ("missing = [\"NA\"]\n", "column = \"speed\""),
        ("", "column = \"speed\"\nsource_unit = \"km/h\""),
    ] {
        let toml = station(
            RATE_1S,
            &format!("[input]\ndelimiter = \";\"\n{missing}[input.time]\ncolumn = \"t\""),
            ws,
            "column = \"dir\"",
        );
        write(d, "s.toml", &toml);
        for jobs in ["1", "2"] {
            let out = tenmin(&["replay", "-c", "s.toml", "s.csv", "-j", jobs], d);
            let err = text(&out.stderr);
            assert_eq!(out.status.code(), Some(2), "{err}");
            assert!(
                err.contains("s.csv:5: field 2 (ws)"),
                "{missing} {ws} jobs {jobs}: {err}"
            );
        }
    }
}
