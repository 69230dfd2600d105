//! Declared input layouts, one feature at a time: each small field file is
//! replayed with its `[input]` and compared with tenmin's own samples CSV of the
//! same samples (written here by hand, in UTC), whose records must be
//! byte-identical. Times are converted by hand in the comments; the zone rules
//! used are cited where they matter.

mod common;
use common::{tenmin, text, write};

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
