//! Real data: one day (2018-10-18) of 1-minute wind data from NREL MIDC station
//! UAT (see `tests/data/PROVENANCE.md`), through a `qc-core` station, against
//! per-interval statistics computed with numpy by `tests/scripts/midc_reference.py`
//! (the numpy version is in the first line of its output file).
//!
//! The 1-minute rows are taken as samples at 1/60 Hz: 10-minute intervals of 10
//! samples each (`interval_s` 600, `samples_per_interval` 10). Time is Year, DOY
//! and MST (HHMM, local standard time, UTC-7): UTC = MST + 7 h.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use qc_core::{
    ChannelConfig, ChannelRecord, Event, Layout, Reading, Station, StationConfig, Timestamp,
};
use tenmin_tests::reference::angle_between_deg;
use tenmin_tests::support::{utc, value};

const SPEED: &str = "Avg Wind Speed @ 3m [m/s]";
const DIRECTION: &str = "Avg Wind Direction @ 3m [deg from N]";

fn data(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("data")
        .join(name)
}

/// Rows of a comma-separated file as header -> field maps, skipping `#` lines.
/// Panics with file, line and field on anything malformed.
fn read_csv(name: &str) -> (String, Rows) {
    let path = data(name);
    let text = std::fs::read_to_string(&path)
        .unwrap_or_else(|e| panic!("{}: cannot read: {e}", path.display()));
    let mut comments = String::new();
    let mut header: Option<Vec<String>> = None;
    let mut rows = Vec::new();
    for (i, line) in text.lines().enumerate() {
        if line.starts_with('#') {
            comments.push_str(line);
            comments.push('\n');
            continue;
        }
        let fields: Vec<String> = line.split(',').map(str::to_string).collect();
        match &header {
            None => header = Some(fields),
            Some(h) => {
                assert_eq!(fields.len(), h.len(), "{name} line {}: field count", i + 1);
                rows.push((i + 1, h.iter().cloned().zip(fields).collect()));
            }
        }
    }
    (comments, rows)
}

fn field<T: std::str::FromStr>(
    name: &str,
    line: usize,
    row: &BTreeMap<String, String>,
    key: &str,
) -> T {
    let raw = row
        .get(key)
        .unwrap_or_else(|| panic!("{name} line {line}: no field `{key}`"));
    raw.parse()
        .unwrap_or_else(|_| panic!("{name} line {line}, field `{key}`: cannot read `{raw}`"))
}

/// "2018-10-18T07:00:00Z" to a timestamp.
fn parse_utc(name: &str, line: usize, s: &str) -> Timestamp {
    fn part<T: std::str::FromStr>(name: &str, line: usize, s: &str, a: usize, b: usize) -> T {
        s.get(a..b)
            .and_then(|x| x.parse().ok())
            .unwrap_or_else(|| panic!("{name} line {line}: bad time `{s}`"))
    }
    let n = |a, b| part::<u8>(name, line, s, a, b);
    utc(
        part(name, line, s, 0, 4),
        n(5, 7),
        n(8, 10),
        n(11, 13),
        n(14, 16),
        n(17, 19),
    )
}

/// Numbered lines of a file, each as header -> field.
type Rows = Vec<(usize, BTreeMap<String, String>)>;

struct Interval {
    speed: ChannelRecord,
    vane: ChannelRecord,
    /// The directions as the file gives them (for the arithmetic-mean note).
    raw_directions: Vec<f64>,
}

/// Feeds the 1-minute file through a station and returns its closed intervals by start.
fn core_intervals() -> BTreeMap<Timestamp, Interval> {
    let name = "midc-uat-20181018-1min.csv";
    let (_, rows) = read_csv(name);
    assert_eq!(rows.len(), 1440, "{name}: one day of minutes");
    let cfg = StationConfig {
        interval_s: 600,
        samples_per_interval: 10,
        missing_values: [Some(-7999.0), None, None, None],
    };
    let layout = Layout::new::<3>(
        cfg,
        &[ChannelConfig::speed(0.001), ChannelConfig::direction()],
    )
    .expect("layout");
    let mut station: Station<2, 3> = Station::new(layout);
    let mut out = BTreeMap::new();
    let mut raw: BTreeMap<i64, Vec<f64>> = BTreeMap::new();
    let mut keep = |e: Event<'_, 2, 3>| {
        if let Event::Closed(acc, _) = e {
            let start = layout.interval_start(acc.index());
            out.insert(
                start,
                (
                    layout.finish(acc, 0).unwrap(),
                    layout.finish(acc, 1).unwrap(),
                ),
            );
        }
    };
    for (line, row) in &rows {
        let year: i32 = field(name, *line, row, "Year");
        let doy: i64 = field(name, *line, row, "DOY");
        let mst: i64 = field(name, *line, row, "MST");
        let speed: f64 = field(name, *line, row, SPEED);
        let direction: f64 = field(name, *line, row, DIRECTION);
        assert!(
            (1..=366).contains(&doy) && (0..2400).contains(&mst) && mst % 100 < 60,
            "{name} line {line}: time"
        );
        let t = utc(year, 1, 1, 0, 0, 0).millis()
            + (doy - 1) * 86_400_000
            + (mst / 100) * 3_600_000
            + (mst % 100) * 60_000
            + 7 * 3_600_000; // MST = UTC-7
        let t = Timestamp::from_millis(t);
        raw.entry(layout.interval_of(t))
            .or_default()
            .push(direction);
        station.push(
            t,
            &[Reading::Value(speed), Reading::Value(direction)],
            &mut keep,
        );
    }
    station.close(&mut keep);
    out.into_iter()
        .map(|(start, (speed, vane))| {
            let k = layout.interval_of(start);
            let raw_directions = raw.remove(&k).unwrap_or_default();
            (
                start,
                Interval {
                    speed,
                    vane,
                    raw_directions,
                },
            )
        })
        .collect()
}

#[test]
fn unit_vector_means_match_numpy() {
    let name = "midc-uat-20181018-10min-numpy.csv";
    let (comments, rows) = read_csv(name);
    let numpy = comments
        .split_whitespace()
        .skip_while(|w| *w != "numpy")
        .nth(1)
        .unwrap_or_else(|| panic!("{name}: first line must name the numpy version"))
        .trim_end_matches(':')
        .to_string();
    let core = core_intervals();
    assert_eq!(rows.len(), 144, "{name}: 144 ten-minute intervals");
    assert_eq!(core.len(), rows.len(), "intervals closed by the station");

    let mut far_from_arithmetic = 0;
    for (line, row) in &rows {
        let start = parse_utc(name, *line, &row["interval_start_utc"]);
        let got = core.get(&start).unwrap_or_else(|| {
            panic!("{name} line {line}: no interval at {start:?} from the core")
        });
        let samples: u32 = field(name, *line, row, "samples");
        assert_eq!(got.vane.tally.valid, samples, "{name} line {line}: samples");
        assert_eq!(
            got.speed.tally.valid, samples,
            "{name} line {line}: samples"
        );

        // Unit-vector mean direction, atan2(mean sin, mean cos) in [0, 360),
        // against numpy (version `numpy`, from the file's first line) within
        // 1e-6 degrees. The core's Q30 unit vectors are within 2^-29 of the true
        // ones; with the smallest mean resultant length in this day (0.16) that
        // moves the mean by at most 6.7e-7 degrees.
        let want: f64 = field(name, *line, row, "direction_unit_vector_mean_deg");
        let mean = value(got.vane.mean, "mean direction");
        let d = angle_between_deg(mean, want);
        assert!(
            d <= 1e-6,
            "{name} line {line}: core {mean} vs numpy {numpy} {want} ({d:e} deg)"
        );

        // Speed mean against numpy's mean of the file's values: the core holds
        // 0.001 m/s quanta (the file's resolution) and divides an exact sum once;
        // numpy adds 10 f64 values. 1e-12 m/s covers both roundings.
        let want: f64 = field(name, *line, row, "speed_mean_m_s");
        let speed = value(got.speed.mean, "mean speed");
        assert!(
            (speed - want).abs() <= 1e-12,
            "{name} line {line}: speed {speed} vs numpy {numpy} {want}"
        );

        // The arithmetic mean of the same directions (numpy's and our own) is a
        // different number wherever the directions cross north.
        let arithmetic: f64 = field(name, *line, row, "direction_arithmetic_mean_deg");
        let own = got.raw_directions.iter().sum::<f64>() / got.raw_directions.len() as f64;
        assert!(
            (own - arithmetic).abs() < 0.01,
            "{name} line {line}: arithmetic mean"
        );
        if angle_between_deg(mean, arithmetic) > 100.0 {
            far_from_arithmetic += 1;
        }
    }
    // Averaging angles arithmetically is wrong (EPA-454/R-99-005 sec. 6.2, found);
    // on this day 28 of the 144 intervals have an arithmetic mean more than 100
    // degrees from the unit-vector mean (counted from the numpy file).
    assert_eq!(far_from_arithmetic, 28);
}
