//! `tenmin`: replay wind-measurement field files through `qc-core`, the same
//! statistics core the logger runs, and check a logger's records bit for bit.
//!
//! The CLI is thin: it reads files into core types, calls the core and writes
//! what the core returns. See `CONTRACT.md` for the file formats and exit codes.

#![forbid(unsafe_code)]
// The library is the binary's body, public so that tests, fuzz targets and other
// front ends reach the same code; its docs are for contributors and may link
// private helpers.
#![allow(rustdoc::private_intra_doc_links)]

pub mod columnar;
pub mod config;
pub mod decode;
pub mod demo;
pub mod draft;
pub mod engine;
pub mod exclusions;
pub mod export;
pub mod fuzzing;
pub mod limits;
pub mod localtime;
pub mod logscan;
pub mod logtable;
pub mod options;
pub mod outages;
pub mod output;
mod pagescan;
pub mod parallel;
pub mod provenance;
pub mod reader;
pub mod records;
pub mod replay;
pub mod report;
pub mod samples;
pub mod sensors;
pub mod summary;
pub mod table;
pub mod tablecheck;
pub mod timefmt;
pub mod units;
pub mod verify;

use std::io::{self, IsTerminal};
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::Result;
use clap::{Args, Parser, Subcommand};

/// The file formats in brief, for `--help`.
macro_rules! formats {
    () => {
        "Files:
  station.toml  [logging] interval_s (default 600), sample_rate_hz (required),
                missing_values (default [-999, -9999]); [station] name;
                [[channel]] id, kind (speed | direction | scalar), unit, height_m,
                range = [lo, hi], resolution, gust_window_s (speed, default 3),
                offset_deg and speed_channel (direction), slope/offset for raw
                counts (the column then holds integer counts); optional
                [channel.screen] table overriding the screening defaults
                (step_limit, mean_range, sd_range, gust_max, min_recovery,
                flat_span_s, flat_tolerance, partner, above, icing, off = [...]);
                informational model, serial, note; [campaign] sensors = FILE,
                the sensor history.
  sensors.toml  [[entry]] id, channel, from (RFC 3339; in force until the
                channel's next entry or its `to`), model, serial, note,
                logger = { slope, offset } (the logger's transfer function),
                certificate = { id, date, slope, offset, uncertainty },
                offset_deg (vane): samples are converted with the entry in force,
                v = (v_logged - logger.offset) / logger.slope * cert.slope
                + cert.offset (speed and scalar values).
  samples CSV   header `time,<channel ids>` in any order; time RFC 3339
                (2025-01-20T00:00:01Z, offsets like +01:00, up to .mmm) or epoch
                seconds (decimal to ms); missing = empty, NaN or a missing-value code.
  records CSV   start,end,channel,n_possible,n_valid,mean,sd,min,max,gust,flags,
                n_missing,n_out_of_range,n_rejected,ti,resultant_length,
                resultant_speed,resultant_direction,n_spikes,n_flagged (readings
                whose `quality` code is not good),sensor_entries (the sensor
                history's entries in force; flag sensor_change where one
                changed inside the interval): one row per interval and
                channel, times UTC; empty field = no value; for direction, mean
                is the unit-vector mean and sd is sigma-theta.
  Parquet/Arrow by extension (.parquet .pq; .arrow .ipc .feather .arrows):
                records (replay -o, --format) with the CSV's columns typed
                (UTC ms timestamps, int64 counts, float64 statistics equal to
                the CSV's text, null = empty); samples (replay, verify, export
                -o) as a column time and one per channel id, null = missing.
"
    };
}

/// The options every command spells the same way, for `--help`.
macro_rules! shared {
    () => {
        "Options shared by all commands (each takes those that apply to it):
  -c, --config FILE    the station file (TOML)
  -o, --output PATH    where results go: a file for replay, export and decode
                       (replay and decode: stdout without it), a folder for report
                       and demo; a file is written whole or not at all (through a
                       temporary file in its folder, renamed at the end; through a
                       symbolic link, the link's target), a device or FIFO directly,
                       and never over one of the command's inputs
  -q, --quiet          no summary on stderr (replay, verify, export, decode)
  -j, --jobs N         threads reading samples (replay, verify)
  --skip-bad-rows      count bad sample rows and go on (replay, verify, export)
  --max-gap-days D     a larger forward jump in time stops the command (replay,
                       verify, export, decode)
  --strict             exit 1 on any damage in a log (decode)
"
    };
}

/// The exit codes, for `--help`.
macro_rules! exit_codes {
    () => {
        "Exit codes:
  0  success (verify: every field of every row identical)
  1  verify found differences
  2  bad input, bad usage or an I/O error (the message names file, line and field)"
    };
}

/// Replay wind-measurement samples through the logger's statistics core.
#[derive(Parser, Debug)]
#[command(
    name = "tenmin",
    version,
    about = "Replay wind-measurement samples through the logger's statistics core",
    long_about = "Replay wind-measurement samples (anemometers, vanes, thermometers) through \
qc-core, the statistics core a logger runs, to get 10-minute records (mean, standard \
deviation, min, max, gust, vector-mean direction, sigma-theta, recovery) bit-identical \
to the logger's, or to check a logger's records against its samples.\n\n\
Start with `tenmin demo`: it writes an invented station's files and walks through \
replay and verify.",
    after_help = exit_codes!(),
    after_long_help = concat!(
        "Examples:\n  tenmin demo\n  tenmin replay --config tenmin-demo/station.toml tenmin-demo/samples-*.csv -o records.csv\n\n",
        shared!(),
        "\n",
        formats!(),
        "\n",
        exit_codes!()
    )
)]
pub struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand, Debug)]
pub enum Command {
    /// Compute interval records from samples files.
    #[command(
        long_about = "Compute interval records (one row per interval and channel) from samples \
files, replayed in the order given as one continuous record: duplicate and backward times \
are rejected and counted by the core, also across files. Intervals with no samples are \
written as rows with empty statistics. A summary (rows read, rejections, per-channel \
recovery) goes to stderr.\n\n\
Readings the station file's exclusions file covers ([campaign] exclusions) are counted \
`excluded` and left out of every statistic. With -o, RECORDS.csv.provenance.json is written \
beside the records: tool and core versions, the command line, the configuration fingerprint \
and the SHA-256 and size of every input and of the records (check it later with \
`tenmin verify --provenance RECORDS.csv`); records to stdout get none.",
        after_long_help = concat!(
            "Example:\n  tenmin replay --config station.toml day-2025-01-20.csv day-2025-01-21.csv -o records.csv\n\n",
formats!(),
            "\n",
            "Exit codes:\n  0  success\n  2  bad input, bad usage or an I/O error (the message names file, line and field)"
        )
    )]
    Replay(ReplayArgs),
    /// Check a logger's records file against its samples, field by field.
    #[command(
        long_about = "Replay the samples and compare every field of every row with a records \
file written by the logger. Numbers must have identical bits; a difference is listed with \
the interval start, channel, field, both values and how many units in the last place (ulps) \
they are apart. Missing and extra rows are differences too. The logger's file must be in \
time order; channels within an interval may come in any order. A logger knows no \
exclusions, so the replay here applies none; --with-exclusions applies the station file's, \
for records that `tenmin replay` wrote.

Another logger's own table: when the station file has [logger_table] (the table's layout, \
the keys of [input]) and [conventions.<channel id>] (which column holds which statistic: \
mean, sd, min, max, gust; how the logger computes it: sd divisor \"n\" or \"n-1\", max and \
gust of \"sample\" or \"running_mean\", direction mean method \"unit_vector\" or \
\"speed_weighted\" and north \"0\" or \"360\", direction sd method \"yamartino\", \
\"circular\" or \"angular\"; the decimals written, the rounding and min_samples), --records is \
that table. Each field is compared with the statistic the core computes from the samples in \
that convention: a value written with d decimals must be the statistic rounded to d decimals \
(with rounding \"unknown\": within half a unit of the last decimal, plus the method's floating-point \
bound). Each difference names the table's line, the interval, channel, statistic and column, \
and the difference in the channel's unit; then the counts per channel and statistic.

--infer tries every convention on every declared column, reports how many intervals each \
explains, and prints the station-file lines declaring the winners: learn how a logger computes \
its statistics from its raw samples and its own table.

With --provenance OUTPUT instead: check that a records file, decoded log or report and every \
input named in its provenance file (OUTPUT.provenance.json) still have the recorded size and \
SHA-256; one line per file, exit 1 naming a file that changed.",
        after_long_help = concat!(
            "Examples:\n  tenmin verify --config station.toml --samples day-*.csv --records logger-records.csv\n  tenmin verify --provenance records.csv\n",
            "  tenmin verify -c examples/logger-table/station.toml --samples examples/logger-table/samples.csv \\\n      --records examples/logger-table/logger-table.csv [--infer]\n\n",
            "Files: as for `tenmin replay --help`; --records is a records CSV, or the table [logger_table] \
declares (see CONTRACT.md, \"Checking another logger's table\").\n\n",
            "Exit codes:\n  0  every field of every row identical (a logger's table: every field accepted;\n     --infer: every column explained on every interval; --provenance: every file unchanged)\n  1  differences found (listed on stdout); --infer: intervals no convention explains;\n     --provenance: a file changed or is gone\n  2  bad input, bad usage or an I/O error (the message names file, line and field); an\n     unreadable provenance file"
        )
    )]
    Verify(VerifyArgs),
    /// Write an invented station's files, then replay and verify them.
    #[command(
        long_about = "Write an invented scenario: a station file, daily 1 Hz samples files with \
planted problems (logger outages with rows absent, missing-value code blocks, a vane stuck \
in a cold humid spell, an anemometer that drops out only in strong wind), and the logger's \
records computed through qc-core as the logger firmware would. Then replay the samples from \
disk, verify them against the logger's records and print a short summary. Needs nothing \
downloaded; the data are made up and describe no real site.",
        after_long_help = concat!(
            "Example:\n  tenmin demo -o tenmin-demo --days 2 --seed 1\n\n",
            "Writes into the folder DIR (-o, default tenmin-demo): DIR/station.toml, \
DIR/samples-YYYY-MM-DD.csv (one per day), DIR/logger-records.csv (the logger's records) and \
DIR/logger.log (the same records as the logger's record log, for `tenmin decode`). Each file \
is written whole or not at all.\n\n",
            "Exit codes:\n  0  success\n  1  the demo's verify found differences (a bug: please report it)\n  2  bad usage or an I/O error"
        )
    )]
    Demo(DemoArgs),
    /// Write an HTML report (recovery, missing data, wind rose, distributions) from records.
    #[command(
        long_about = "Read records files (as `tenmin replay` writes them) and write DIR/report.html, \
one self-contained page with SVG charts: recovery per channel and month against the usual 90 % target, \
missing-data diagnostics (are gaps independent of hour, month, wind speed, direction and temperature?), \
the wind rose, the speed distribution with its Weibull fit, turbulence intensity against the IEC 61400-1 \
normal turbulence model, and wind shear. The tables go to DIR as CSV files; a short summary goes to stdout; \
DIR/report.html.provenance.json names the records and station files read, with their SHA-256. \
See host-cli/REPORT.md.",
        after_long_help = concat!(
            "Example:\n  tenmin report --config station.toml records.csv -o report --sectors 12\n\n",
            "Files: station and records as for `tenmin replay --help`.\n\n",
            "Exit codes:\n  0  success\n  2  bad input, bad usage or an I/O error (the message names file, line and field)"
        )
    )]
    Report(report::ReportArgs),
    /// Write samples files as a binary sample file for a logger under test to replay.
    #[command(
        long_about = "Read samples files exactly as `tenmin replay` reads them (same columns, times, \
missing readings, errors and --skip-bad-rows) and write them as one binary sample file: a header \
holding the station file's whole configuration (interval, samples per interval, missing-value codes, \
every channel's kind, scale, range, gust window, mounting offset, speed link and screening settings), \
then one CRC-protected frame per row with the readings as the core receives them (values, raw counts \
or missing). Duplicate and backward times are kept: the logger's station rejects and counts them as \
the replay's does. The format is qc_core::wire (see CONTRACT.md, `Export`). A summary goes to stderr.",
        after_long_help = concat!(
            "Examples:\n  tenmin export --config station.toml day-2025-01-20.csv -o day.tmsf\n  tenmin export --config station.toml day-2025-01-20.csv -o day.parquet   (Parquet samples; .arrow: Arrow IPC)\n\n",
            "Files: station and samples as for `tenmin replay --help`.\n\n",
            "Exit codes:\n  0  success\n  2  bad input, bad usage or an I/O error (the message names file, line and field)"
        )
    )]
    Export(ExportArgs),
    /// Turn a logger's log (record or state frames) into records CSV, reporting damaged frames.
    #[command(
        long_about = "Read a logger's log (qc_core::wire frames, as the example firmware writes them), \
report damaged and torn spans with their byte offsets on stderr, and write records CSV in the \
replay's columns. The first good frame decides the kind of log; a frame of the other kind later is \
an error.

A record log holds the statistics the logger finished itself: every good frame is a row.

A state log holds, per interval and channel, the exact integer end state, written by a logger that \
leaves finishing to the PC: the states of each interval are finished and screened here, in time \
order, and the rows are those the logger's own station would have written, bit for bit. An interval \
some of whose states were lost is finished without them: rows only for the channels whose states \
arrived, and its cross-channel screening flags (pair, shear, icing) treat the lost channels as \
having no samples (reported on stderr).

The station file must be the one the logger was built with: every state frame and every record \
frame of format version 2 carries the logger's channel count and the fingerprint of its \
configuration, and a frame of another channel count or fingerprint (a channel more or fewer, a \
setting of the statistics or the screening changed, channels of other settings in another order) \
stops the command. Record frames of version 1 carry no fingerprint: they are read with a warning. \
Frames whose counts no station makes (more samples than the interval has milliseconds, channels of \
one interval holding different samples) stop the command.

Frames are put back in sequence order (frames written out of order are kept and reported); \
sequence numbers count modulo 2^32. A run of frames whose time the frames around them contradict \
(a logger clock glitch) is left out and reported, and the good frames around it are kept; frames \
behind everything read (a log written twice) are left out. Intervals with no samples are written \
as the replay writes them only between two frames that agree on sequence and time; where frames \
were lost or left out, or the log's first or last interval jumps with nothing before or after it \
to confirm the time, the intervals without frames are not written, and `tenmin verify` lists them as missing. \
Frames that do not match the station file are an error. With -o, RECORDS.csv.provenance.json \
beside the records names the log, the station file and its side files with their SHA-256 \
(see `tenmin verify --provenance`).",
        after_long_help = concat!(
            "Example:\n  tenmin decode --config station.toml logger.log -o records.csv\n  tenmin verify --config station.toml --samples day-*.csv --records records.csv\n\n",
            "Exit codes:\n  0  the log was read (damage, if any, reported on stderr)\n  1  with --strict: damaged, torn, lost, out-of-order, glitched, repeated or unchecked\n     (version 1) frames, a first sequence number other than 0, intervals left unknown, or an\n     interval of a state log without some channels' states (records still written)\n  2  bad input, bad usage or an I/O error; frames that do not match the station file (a log of\n     another configuration or channel count); counts no station makes; a log mixing record and\n     state frames"
        )
    )]
    Decode(DecodeArgs),
    /// Look at a field file as it is and print a starter station file for it.
    #[command(
        long_about = "Look at the start of a field file as the logger or the archive wrote it (at \
most the first 1 MiB or 5000 lines; .gz and .zst are decompressed) and print a starter station \
file declaring its layout, for you to check and edit rather than write from nothing.

What it detects: the delimiter (comma, semicolon, tab or runs of spaces: the one giving the same \
number of fields on the most lines), lines of metadata before the table, a header line (words \
where the data hold numbers), a units line after it, comment lines starting with #, a decimal \
comma; the time column or columns and their format (RFC 3339, epoch seconds or milliseconds, \
dates like 2016-01-01 00:00:00 or 1/1/2022 0:05, or year, day-of-year or month and day, hour \
and minute in columns of their own), kept only when it reads every row read and the times \
increase with one common step; that step as the sample period, and an interval of 600 s (or an \
hour or a day for slower data); missing-value codes among the numbers (-9999, -7999, NA ...); \
and for each column a guess of what it measures from its name, its unit ([m/s], (mph), a units \
line) and its values: wind speed (ws, ws2 ...), gust, wind direction (wd ...), air \
temperature (t), humidity (rh) and pressure (p), with a resolution from the decimals written, \
the usual range for the kind and a quality column after a value (written commented out: this \
build does not read quality columns yet). Columns it does not draft are listed as comments.

You must check the draft: the file rarely says its time zone (UTC is written, marked CHECK, with \
a hint when a column name suggests local standard time, such as MST), whether a stamp marks the \
start or the end of its period, the units the file does not name, and every guess of a column's \
meaning. Lines to check are marked CHECK. The draft is a station file `tenmin replay` loads as \
it is.",
        after_long_help = concat!(
            "Examples:\n  tenmin draft logger-2024-06.dat -o station.toml\n  tenmin replay --config station.toml logger-2024-06.dat -o records.csv\n\n",
            "Exit codes:\n  0  a draft was written\n  2  bad input (an empty file, not text, no line end in the first 1 MiB, no table of\n     numbers), bad usage or an I/O error (the message names the file)"
        )
    )]
    Draft(draft::DraftArgs),
}

#[derive(Args, Debug)]
pub struct ExportArgs {
    /// Station file (TOML).
    #[arg(long, short = 'c', value_name = "STATION.toml")]
    config: PathBuf,
    /// Samples CSV files, in this order as one record.
    #[arg(required = true, value_name = "SAMPLES")]
    samples: Vec<PathBuf>,
    /// File to write the sample file to: written whole or not at all, never over an input.
    #[arg(long, short = 'o', value_name = "OUT.tmsf")]
    output: PathBuf,
    /// Count bad rows in the summary and go on, instead of stopping at the first.
    #[arg(long)]
    skip_bad_rows: bool,
    /// Do not print the summary on stderr.
    #[arg(long, short = 'q')]
    quiet: bool,
    /// A forward jump between consecutive samples larger than this many days stops the
    /// command, as in `tenmin replay`.
    #[arg(long, default_value_t = samples::DEFAULT_MAX_GAP_DAYS, value_name = "D",
          allow_negative_numbers = true, value_parser = options::whole::<u32>(1, u32::MAX as u64))]
    max_gap_days: u32,
    /// Accept data rows that give no samples at all (every row bad and skipped with
    /// --skip-bad-rows): an empty sample file. Without it, that is an error (exit 2).
    #[arg(long)]
    allow_no_records: bool,
}

#[derive(Args, Debug)]
pub struct DecodeArgs {
    /// Station file (TOML) of the logger that wrote the log (for a state log, the one
    /// the logger was built with).
    #[arg(long, short = 'c', value_name = "STATION.toml")]
    config: PathBuf,
    /// The log: record frames or state frames.
    #[arg(value_name = "LOG")]
    log: PathBuf,
    /// File to write the records to [default: stdout]: written whole or not at all, never
    /// over an input.
    #[arg(long, short = 'o', value_name = "RECORDS.csv")]
    output: Option<PathBuf>,
    /// Exit with 1 when anything was damaged, torn, lost, out of order, glitched, repeated
    /// or unchecked (in a state log, also when an interval lacks some channels' states).
    #[arg(long)]
    strict: bool,
    /// Print on stderr only the problems, not the summary of a clean log.
    #[arg(long, short = 'q')]
    quiet: bool,
    /// Empty intervals between two frames (consecutive sequence numbers) spanning more
    /// than this many days stop the command: a wrong logger clock would otherwise write an
    /// empty row per interval, as in `tenmin replay`.
    #[arg(long, default_value_t = samples::DEFAULT_MAX_GAP_DAYS, value_name = "D",
          allow_negative_numbers = true, value_parser = options::whole::<u32>(1, u32::MAX as u64))]
    max_gap_days: u32,
}

#[derive(Args, Debug)]
pub struct ReplayArgs {
    /// Station file (TOML).
    #[arg(long, short = 'c', value_name = "STATION.toml")]
    config: PathBuf,
    /// Samples CSV files, replayed in this order as one record.
    #[arg(required = true, value_name = "SAMPLES")]
    samples: Vec<PathBuf>,
    /// File to write the records to [default: stdout]: written whole or not at all, never
    /// over an input. A name ending .parquet (or .pq) writes Parquet, .arrow (.ipc,
    /// .feather) Arrow IPC, unless --format says otherwise.
    #[arg(long, short = 'o', value_name = "RECORDS.csv")]
    output: Option<PathBuf>,
    /// The records' file format [default: by the extension of -o, else csv]: parquet and
    /// arrow hold the CSV's columns typed (times as UTC timestamps, counts as int64,
    /// statistics as float64 with the CSV's exact values, null where the CSV is empty);
    /// the file is read back after writing.
    #[arg(long, value_enum, value_name = "FORMAT")]
    format: Option<columnar::Format>,
    #[command(flatten)]
    input: InputArgs,
}

#[derive(Args, Debug)]
pub struct InputArgs {
    /// Count bad rows in the summary and go on, instead of stopping at the first.
    #[arg(long)]
    skip_bad_rows: bool,
    /// Do not print the summary on stderr.
    #[arg(long, short = 'q')]
    quiet: bool,
    /// Threads replaying samples [default: the available cores, less one when a file is
    /// compressed (.gz, .zst), at most 2]. With 1, one thread replays while a helper reads
    /// (and decompresses) the files; with N above 1, a reader thread and N replaying
    /// workers. The records are the same either way.
    #[arg(long, short = 'j', value_name = "N", allow_negative_numbers = true,
          value_parser = options::whole::<u16>(1, u16::MAX as u64))]
    jobs: Option<u16>,
    /// A forward jump between consecutive samples larger than this many days stops the
    /// command (a wrong logger clock would otherwise write an empty row per interval).
    #[arg(long, default_value_t = samples::DEFAULT_MAX_GAP_DAYS, value_name = "D",
          allow_negative_numbers = true, value_parser = options::whole::<u32>(1, u32::MAX as u64))]
    max_gap_days: u32,
    /// Accept data rows that give no records at all (every row bad and skipped with
    /// --skip-bad-rows); without it, that is an error (exit 2).
    #[arg(long)]
    allow_no_records: bool,
    /// Bytes per chunk of parallel replay (for testing).
    #[arg(long, hide = true, default_value_t = samples::DEFAULT_CHUNK_SIZE as u64,
          allow_negative_numbers = true, value_parser = options::whole::<u64>(64, 1 << 23))]
    chunk_size: u64,
}

#[derive(Args, Debug)]
pub struct VerifyArgs {
    /// Station file (TOML).
    #[arg(
        long,
        short = 'c',
        value_name = "STATION.toml",
        required_unless_present = "provenance"
    )]
    config: Option<PathBuf>,
    /// Samples CSV files, replayed in this order as one record.
    #[arg(long, required_unless_present = "provenance", num_args = 1.., value_name = "SAMPLES")]
    samples: Vec<PathBuf>,
    /// The logger's records CSV, or (with `[logger_table]`) the logger's own table.
    #[arg(
        long,
        value_name = "LOGGER.csv",
        required_unless_present = "provenance"
    )]
    records: Option<PathBuf>,
    /// Instead of replaying: check that a records file (or report, or decoded log) and
    /// every input its provenance file (OUTPUT.provenance.json, beside it) names still
    /// have the recorded size and SHA-256. Give the output or its provenance file.
    #[arg(long, value_name = "OUTPUT", conflicts_with_all = ["config", "samples", "records"])]
    provenance: Option<PathBuf>,
    /// List at most this many differences (the rest are counted).
    #[arg(long, default_value_t = 20, value_name = "N", allow_negative_numbers = true,
          value_parser = options::whole::<usize>(0, u32::MAX as u64))]
    max_diffs: usize,
    /// With a `[logger_table]` in the station file: instead of verifying, try every
    /// convention on every declared column, report how many intervals each explains and
    /// print the station-file lines declaring the winners.
    #[arg(long)]
    infer: bool,
    /// Apply the station file's exclusions ([campaign] exclusions) in the replay, as
    /// `tenmin replay` does: for a records file that tenmin wrote. Without it none are
    /// applied, since a logger's own records know no exclusions.
    #[arg(long)]
    with_exclusions: bool,
    #[command(flatten)]
    input: InputArgs,
}

#[derive(Args, Debug)]
pub struct DemoArgs {
    /// Folder to write the demo's files into (created if needed).
    #[arg(
        long = "output",
        short = 'o',
        alias = "out",
        default_value = "tenmin-demo",
        value_name = "DIR"
    )]
    output: PathBuf,
    /// Days of 1 Hz samples.
    #[arg(long, default_value_t = 2, value_name = "N", allow_negative_numbers = true,
          value_parser = options::whole::<u32>(1, 366))]
    days: u32,
    /// Random seed of the invented weather and faults.
    #[arg(long, default_value_t = 1, value_name = "N", allow_negative_numbers = true,
          value_parser = options::whole::<u64>(0, u64::MAX))]
    seed: u64,
}

/// The whole command: parses the arguments, runs, prints errors; the binary's `main`.
pub fn main() -> ExitCode {
    // A panic inside the Parquet and Arrow decoders on a damaged file is an
    // error naming the file (`columnar::guarded`): not printed as a crash.
    let default_hook = std::panic::take_hook();
    std::panic::set_hook(Box::new(move |info| {
        if !columnar::in_guarded_decoding() {
            default_hook(info);
        }
    }));
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    match run(cli) {
        Ok(code) => code,
        Err(e) if is_broken_pipe(&e) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("tenmin: error: {e:#}");
            ExitCode::from(2)
        }
    }
}

fn is_broken_pipe(e: &anyhow::Error) -> bool {
    e.chain().any(|c| {
        c.downcast_ref::<io::Error>()
            .is_some_and(|io| io.kind() == io::ErrorKind::BrokenPipe)
    })
}

fn run(cli: Cli) -> Result<ExitCode> {
    match cli.command {
        Command::Replay(a) => replay_cmd(a),
        Command::Verify(a) => verify_cmd(a),
        Command::Demo(a) => demo::run(&a.output, a.days, a.seed),
        Command::Report(a) => report::run(&a),
        Command::Export(a) => export::run(&a),
        Command::Decode(a) => decode::run(&a),
        Command::Draft(a) => draft::run(&a),
    }
}

fn options(a: &InputArgs, files: &[PathBuf]) -> samples::Options {
    samples::Options {
        skip_bad_rows: a.skip_bad_rows,
        progress: true,
        jobs: a
            .jobs
            .map_or_else(|| replay::default_jobs(files), usize::from),
        chunk_size: a.chunk_size as usize,
        max_gap_days: a.max_gap_days,
        allow_no_records: a.allow_no_records,
        digests: false,
    }
}

fn ids(cfg: &config::StationFile) -> Vec<String> {
    cfg.channels.iter().map(|c| c.id.clone()).collect()
}

fn replay_cmd(a: ReplayArgs) -> Result<ExitCode> {
    if let Some(out) = &a.output {
        output::refuse_inputs(out, &inputs(&a.config, "samples file", &a.samples))?;
    }
    let cfg = config::load(&a.config)?;
    let used = provenance::inputs(&cfg, "samples", a.samples.iter().map(PathBuf::as_path));
    if let Some(out) = &a.output {
        let named: Vec<(&str, &Path)> = used
            .iter()
            .map(|(r, p)| (r.as_str(), p.as_path()))
            .collect();
        output::refuse_inputs(out, &named)?;
        output::refuse_inputs(&provenance::path_for(out), &named)?;
    }
    // With a provenance file, each samples file's digest comes from the
    // replay's own reading of it.
    let opts = samples::Options {
        digests: a.output.is_some(),
        ..options(&a.input, &a.samples)
    };
    let format = columnar::Format::choose(a.format, a.output.as_deref());
    if format != columnar::Format::Csv && a.output.is_none() && io::stdout().is_terminal() {
        anyhow::bail!(
            "{} records are binary: give -o FILE, or redirect stdout to a file or pipe",
            format.name()
        );
    }
    // The records file is read back (and hashed for the provenance file)
    // on a helper thread as it is written.
    let ((summary, written), records_digest) =
        output::write_to_digest(a.output.as_deref(), "records", |w| {
            if format == columnar::Format::Csv {
                let mut writer =
                    records::Writer::new(w, ids(&cfg))?.with_sensors(cfg.sensors.clone());
                let s = replay::replay(&cfg, &a.samples, opts, &mut writer)?;
                writer.finish()?;
                return Ok((s, None));
            }
            let mut writer = columnar::RecordsOut::new(w, format, ids(&cfg), cfg.sensors.clone())?;
            let s = replay::replay(&cfg, &a.samples, opts, &mut writer)?;
            Ok((s, Some(writer.finish()?)))
        })?;
    if let (Some(out), Some(written)) = (&a.output, &written) {
        columnar::check_records(out, written)?;
    }
    if let Some(out) = &a.output {
        provenance::write(out, &cfg, &used, &summary.input.digests, records_digest)?;
    }
    if !a.input.quiet {
        let _ = summary.write(&mut io::stderr().lock(), &cfg);
    }
    Ok(ExitCode::SUCCESS)
}

/// The inputs of a command, for [`output::refuse_inputs`]: the station file
/// and the `files` (each a `what`).
fn inputs<'a>(config: &'a Path, what: &'a str, files: &'a [PathBuf]) -> Vec<(&'a str, &'a Path)> {
    let mut v = vec![("station file", config)];
    v.extend(files.iter().map(|f| (what, f.as_path())));
    v
}

fn verify_cmd(a: VerifyArgs) -> Result<ExitCode> {
    if let Some(p) = &a.provenance {
        return verify::provenance(p);
    }
    let (Some(config), Some(records)) = (&a.config, &a.records) else {
        anyhow::bail!("verify needs --config, --samples and --records, or --provenance");
    };
    let mut cfg = config::load(config)?;
    // A logger's records: a logger knows no exclusions, so the replay here
    // applies none (CONTRACT.md, Verify), unless asked for records tenmin wrote.
    if !a.with_exclusions {
        cfg.exclusions = Default::default();
    }
    if cfg.logger_table.is_some() || a.infer {
        return table_cmd(&a, config, records, &cfg);
    }
    let mut cmp = verify::Comparer::open(records, cfg.station, ids(&cfg), a.max_diffs)?
        .with_sensors(cfg.sensors.clone());
    let summary = replay::replay(&cfg, &a.samples, options(&a.input, &a.samples), &mut cmp)?;
    let report = cmp.finish()?;
    if !a.input.quiet {
        let _ = summary.write(&mut io::stderr().lock(), &cfg);
    }
    let mut out = output::Output::stdout("the comparison");
    verify::print_report(&mut out, &report, records)?;
    out.finish()?;
    Ok(if report.total == 0 {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(1)
    })
}

/// `tenmin verify` of another logger's own table (`[logger_table]`), or `--infer`.
fn table_cmd(
    a: &VerifyArgs,
    config: &std::path::Path,
    records: &std::path::Path,
    cfg: &config::StationFile,
) -> Result<ExitCode> {
    if cfg.logger_table.is_none() {
        anyhow::bail!(
            "{}: --infer needs a [logger_table] and [conventions] naming the table's columns (see CONTRACT.md, \"Checking another logger's table\")",
            config.display()
        );
    }
    let rows = logtable::read(cfg, records)?;
    let mut collect = tablecheck::Collect::new(cfg.station.interval_s);
    let summary = replay::replay(cfg, &a.samples, options(&a.input, &a.samples), &mut collect)?;
    if !a.input.quiet {
        let _ = summary.write(&mut io::stderr().lock(), cfg);
    }
    let mut buf = Vec::new();
    let ok = if a.infer {
        tablecheck::infer(cfg, records, &rows, &collect, &mut buf)?
    } else {
        tablecheck::verify(cfg, records, &rows, &collect, a.max_diffs, &mut buf)?.differences == 0
    };
    let mut out = output::Output::stdout("the comparison");
    io::Write::write_all(&mut out, &buf)?;
    out.finish()?;
    Ok(if ok {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(1)
    })
}
