//! The output side of `tenmin`, hardened: run the built binary in temporary
//! folders and check what it does to the files around it.
//!
//! One regression test per class of fault, then a catalogue of bad cases:
//! - an output naming one of the inputs, by any name, is refused and the input
//!   is left byte for byte as it was;
//! - symbolic links, devices (`/dev/null`, `/dev/full`), FIFOs and folders as
//!   outputs; write errors name the output (or stdout);
//! - a failed run leaves no temporary file and an existing output untouched;
//! - negative and out-of-range option values get a range message;
//! - `-o` means the same for every command (a folder for report and demo);
//! - the demo writes where it says, and its logger log decodes to its records;
//! - decode given a samples CSV or a sample file says so.
//!
//! The data are invented; expected outputs come from a second run of the
//! command to stdout or from the input files themselves, never from the run
//! under test.

use std::fs;
use std::io::Read;
use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};

mod common;
use common::{tenmin, text, write, BIN};

/// A 10-minute, 1 Hz station with one anemometer.
const STATION: &str = r#"
[logging]
interval_s = 600
sample_rate_hz = 1

[[channel]]
id = "ws"
kind = "speed"
resolution = 0.01
"#;

/// Samples of three intervals.
fn samples() -> String {
    let mut s = String::from("time,ws\n");
    for i in 0..1800 {
        s.push_str(&format!("{},{}\n", 1_737_331_200 + i, 5 + i % 7));
    }
    s
}

/// Erased flash: a log with no frames yet, which decodes to the header alone.
fn erased_log() -> Vec<u8> {
    vec![0xFF; 256]
}

/// A folder with `station.toml`, `samples.csv`, `log.bin` and `records.csv`
/// (the replay of the samples).
fn fixture() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    write(d, "station.toml", STATION);
    write(d, "samples.csv", samples());
    write(d, "log.bin", erased_log());
    let r = tenmin(&["replay", "-c", "station.toml", "samples.csv"], d);
    assert_eq!(r.status.code(), Some(0), "{}", text(&r.stderr));
    write(d, "records.csv", &r.stdout);
    dir
}

/// Every file under `d` (relative paths, sorted), and each one's bytes.
fn snapshot(d: &Path) -> Vec<(PathBuf, Vec<u8>)> {
    fn walk(root: &Path, d: &Path, out: &mut Vec<(PathBuf, Vec<u8>)>) {
        for e in fs::read_dir(d).unwrap() {
            let p = e.unwrap().path();
            let rel = p.strip_prefix(root).unwrap().to_path_buf();
            let meta = fs::symlink_metadata(&p).unwrap();
            if meta.is_dir() {
                out.push((rel, b"<dir>".to_vec()));
                walk(root, &p, out);
            } else if meta.file_type().is_symlink() {
                let t = fs::read_link(&p).unwrap();
                out.push((rel, format!("<link {}>", t.display()).into_bytes()));
            } else if meta.is_file() {
                out.push((rel, fs::read(&p).unwrap()));
            } else {
                // A device or FIFO: never read (a full device reads zeros forever).
                out.push((rel, b"<special>".to_vec()));
            }
        }
    }
    let mut v = Vec::new();
    walk(d, d, &mut v);
    v.sort();
    v
}

fn names(snap: &[(PathBuf, Vec<u8>)]) -> Vec<String> {
    snap.iter().map(|(p, _)| p.display().to_string()).collect()
}

fn code(o: &Output) -> Option<i32> {
    o.status.code()
}

/// Runs `tenmin args` in `d` and checks exit code 2, a message holding every
/// one of `wants`, and every file under `d` as in `before`; returns the output.
fn refused_in(d: &Path, args: &[&str], wants: &[&str], before: &[(PathBuf, Vec<u8>)]) -> Output {
    let o = tenmin(args, d);
    let err = text(&o.stderr);
    assert_eq!(code(&o), Some(2), "{args:?}: {err}");
    for w in wants {
        assert!(err.contains(w), "{args:?}: {err}");
    }
    assert_eq!(snapshot(d), before, "{args:?} changed a file");
    o
}

/// Runs `tenmin` with stdout going to `stdout`.
fn tenmin_to(args: &[&str], dir: &Path, stdout: Stdio) -> Output {
    Command::new(BIN)
        .args(args)
        .current_dir(dir)
        .stdout(stdout)
        .stderr(Stdio::piped())
        .output()
        .expect("run tenmin")
}

#[cfg(unix)]
fn symlink(target: &str, link: &Path) {
    std::os::unix::fs::symlink(target, link).unwrap();
}

// ---------------------------------------------------------------------------
// 1. An output that is one of the inputs

#[cfg(unix)]
#[test]
fn an_output_that_is_an_input_by_any_name_is_refused_and_the_input_kept() {
    let dir = fixture();
    let d = dir.path();
    symlink("samples.csv", &d.join("samples-link.csv"));
    fs::hard_link(d.join("samples.csv"), d.join("samples-hard.csv")).unwrap();
    symlink("log.bin", &d.join("log-link.bin"));
    fs::hard_link(d.join("station.toml"), d.join("station-hard.toml")).unwrap();
    fs::hard_link(d.join("log.bin"), d.join("log-hard.bin")).unwrap();
    let before = snapshot(d);
    let st = "station.toml";
    let cases: &[(&[&str], &str)] = &[
        (
            &["replay", "-c", st, "samples.csv", "-o", "./samples.csv"],
            "samples file",
        ),
        (
            &["replay", "-c", st, "samples.csv", "-o", "samples-link.csv"],
            "samples file",
        ),
        (
            &["replay", "-c", st, "samples.csv", "-o", "samples-hard.csv"],
            "samples file",
        ),
        (
            &["replay", "-c", st, "samples.csv", "-o", "station-hard.toml"],
            "station file",
        ),
        (
            &[
                "replay",
                "-c",
                st,
                "samples.csv",
                "--output",
                "sub/../samples.csv",
            ],
            "samples file",
        ),
        (
            &["export", "-c", st, "samples.csv", "-o", "samples-hard.csv"],
            "samples file",
        ),
        (
            &["export", "-c", st, "samples.csv", "-o", "./station.toml"],
            "station file",
        ),
        (&["decode", "-c", st, "log.bin", "-o", "./log.bin"], "log"),
        (
            &["decode", "-c", st, "log.bin", "-o", "log-link.bin"],
            "log",
        ),
        (
            &["decode", "-c", st, "log.bin", "-o", "log-hard.bin"],
            "log",
        ),
        (
            &["decode", "-c", st, "log.bin", "-o", "station-hard.toml"],
            "station file",
        ),
    ];
    fs::create_dir(d.join("sub")).unwrap();
    let before_with_sub = snapshot(d);
    for (args, what) in cases {
        let it_is = format!("it is the {what} ");
        let o = refused_in(d, args, &[&it_is, "an input"], &before_with_sub);
        assert!(o.stdout.is_empty(), "{args:?}");
    }
    fs::remove_dir(d.join("sub")).unwrap();
    assert_eq!(snapshot(d), before);
}

#[test]
fn no_file_a_report_writes_into_its_folder_may_be_an_input() {
    let dir = fixture();
    let d = dir.path();
    fs::create_dir(d.join("rep")).unwrap();
    fs::copy(d.join("records.csv"), d.join("rep/rose.csv")).unwrap();
    fs::copy(d.join("station.toml"), d.join("rep/recovery.csv")).unwrap();
    fs::copy(d.join("records.csv"), d.join("rep/report.html")).unwrap();
    let before = snapshot(d);
    for (args, what) in [
        (
            ["report", "-c", "station.toml", "rep/rose.csv", "-o", "rep"],
            "records file",
        ),
        (
            [
                "report",
                "-c",
                "rep/recovery.csv",
                "records.csv",
                "-o",
                "rep/",
            ],
            "station file",
        ),
        (
            [
                "report",
                "-c",
                "station.toml",
                "rep/report.html",
                "-o",
                "./rep",
            ],
            "records file",
        ),
    ] {
        refused_in(d, &args, &[&format!("it is the {what} ")], &before);
    }
    // A records file in the folder under a name the report does not write is fine.
    fs::rename(d.join("rep/rose.csv"), d.join("rep/my-records.csv")).unwrap();
    let o = tenmin(
        &[
            "report",
            "-c",
            "station.toml",
            "rep/my-records.csv",
            "-o",
            "rep",
        ],
        d,
    );
    assert_eq!(code(&o), Some(0), "{}", text(&o.stderr));
    assert_eq!(
        fs::read(d.join("rep/my-records.csv")).unwrap(),
        fs::read(d.join("records.csv")).unwrap()
    );
    assert!(d.join("rep/recovery.csv").is_file() && d.join("rep/report.html").is_file());
}

// ---------------------------------------------------------------------------
// 2. Links, devices, FIFOs, folders, write errors, failures

#[cfg(unix)]
#[test]
fn output_through_a_symlink_replaces_the_target_and_keeps_the_link() {
    let dir = fixture();
    let d = dir.path();
    let want = fs::read(d.join("records.csv")).unwrap();
    fs::create_dir(d.join("store")).unwrap();
    write(d, "store/real.csv", "old contents\n");
    symlink("store/real.csv", &d.join("link.csv"));
    // A link to a link, and a link to a name not yet taken.
    symlink("link.csv", &d.join("link2.csv"));
    symlink("store/new.csv", &d.join("dangling.csv"));
    for link in ["link.csv", "link2.csv", "dangling.csv"] {
        let o = tenmin(
            &[
                "replay",
                "-q",
                "-c",
                "station.toml",
                "samples.csv",
                "-o",
                link,
            ],
            d,
        );
        assert_eq!(code(&o), Some(0), "{link}: {}", text(&o.stderr));
        assert!(
            fs::symlink_metadata(d.join(link))
                .unwrap()
                .file_type()
                .is_symlink(),
            "{link} is no longer a link"
        );
        assert_eq!(fs::read(d.join(link)).unwrap(), want, "{link}");
    }
    assert_eq!(fs::read(d.join("store/real.csv")).unwrap(), want);
    assert_eq!(fs::read(d.join("store/new.csv")).unwrap(), want);
    // No temporary file left in either folder.
    let left = names(&snapshot(d));
    assert!(left.iter().all(|n| !n.contains("partial")), "{left:?}");
}

#[cfg(unix)]
#[test]
fn an_existing_output_keeps_its_permissions() {
    use std::os::unix::fs::PermissionsExt;
    let dir = fixture();
    let d = dir.path();
    write(d, "out.csv", "old\n");
    fs::set_permissions(d.join("out.csv"), fs::Permissions::from_mode(0o640)).unwrap();
    let o = tenmin(
        &[
            "replay",
            "-c",
            "station.toml",
            "samples.csv",
            "-o",
            "out.csv",
        ],
        d,
    );
    assert_eq!(code(&o), Some(0), "{}", text(&o.stderr));
    let mode = fs::metadata(d.join("out.csv"))
        .unwrap()
        .permissions()
        .mode();
    assert_eq!(mode & 0o777, 0o640);
}

/// The null device (`name` "null", Linux minor 1:3) or the full device
/// ("full", 1:7: every write fails with ENOSPC), for output tests. Where this
/// process may create device nodes (root), a node of its own in `dir`, so that
/// a regression replacing a device by a regular file replaces that node and
/// not the system's; else the system's `/dev/NAME`, which an unprivileged
/// process cannot replace. `None` for root without the right to create nodes.
#[cfg(target_os = "linux")]
fn device(dir: &Path, name: &str) -> Option<PathBuf> {
    let minor = if name == "full" { "7" } else { "3" };
    let own = dir.join(format!("dev-{name}"));
    let made = Command::new("mknod")
        .args(["-m", "666"])
        .arg(&own)
        .args(["c", "1", minor])
        .stderr(Stdio::null())
        .status()
        .is_ok_and(|s| s.success());
    if made {
        return Some(own);
    }
    let uid = Command::new("id").arg("-u").output().ok()?;
    if text(&uid.stdout).trim() == "0" {
        eprintln!("skipped: root without the right to create device nodes");
        return None;
    }
    Some(PathBuf::from(format!("/dev/{name}")))
}

/// The three commands that write one file, each writing to `out`.
#[cfg(target_os = "linux")]
fn writers(out: &str) -> [[&str; 6]; 3] {
    [
        ["replay", "-c", "station.toml", "samples.csv", "-o", out],
        ["export", "-c", "station.toml", "samples.csv", "-o", out],
        ["decode", "-c", "station.toml", "log.bin", "-o", out],
    ]
}

#[cfg(target_os = "linux")]
#[test]
fn the_null_device_is_written_in_place() {
    use std::os::unix::fs::FileTypeExt;
    let dir = fixture();
    let d = dir.path();
    let Some(null) = device(d, "null") else {
        return;
    };
    let null = null.to_str().unwrap();
    let before = snapshot(d);
    for args in writers(null) {
        let o = tenmin(&args, d);
        assert_eq!(code(&o), Some(0), "{args:?}: {}", text(&o.stderr));
        let t = fs::symlink_metadata(null).unwrap().file_type();
        assert!(t.is_char_device(), "{null} was replaced by a regular file");
    }
    assert_eq!(snapshot(d), before, "a file appeared or changed");
}

#[cfg(target_os = "linux")]
#[test]
fn a_full_device_is_an_error_naming_it() {
    use std::os::unix::fs::FileTypeExt;
    let dir = fixture();
    let d = dir.path();
    let Some(full) = device(d, "full") else {
        return;
    };
    let full = full.to_str().unwrap();
    let before = snapshot(d);
    for args in writers(full) {
        let o = tenmin(&args, d);
        let err = text(&o.stderr);
        assert_eq!(code(&o), Some(2), "{args:?}: {err}");
        assert!(err.contains("cannot write"), "{args:?}: {err}");
        assert!(err.contains(&format!("to {full}: ")), "{args:?}: {err}");
        assert!(!err.contains("cannot read"), "{args:?}: {err}");
        let t = fs::symlink_metadata(full).unwrap().file_type();
        assert!(t.is_char_device(), "{full} was replaced by a regular file");
    }
    // stdout on the full device: the error names stdout.
    let st = "station.toml";
    let cases: [(&[&str], &str); 4] = [
        (&["replay", "-c", st, "samples.csv"], "records"),
        (&["decode", "-c", st, "log.bin"], "records"),
        (
            &[
                "verify",
                "-c",
                st,
                "--samples",
                "samples.csv",
                "--records",
                "records.csv",
            ],
            "the comparison",
        ),
        (
            &["report", "-c", st, "records.csv", "-o", "rep"],
            "the report's summary",
        ),
    ];
    for (args, what) in cases {
        let dev = fs::OpenOptions::new().write(true).open(full).unwrap();
        let o = tenmin_to(args, d, Stdio::from(dev));
        let err = text(&o.stderr);
        assert_eq!(code(&o), Some(2), "{args:?}: {err}");
        assert!(
            err.contains(&format!("tenmin: error: cannot write {what} to stdout: ")),
            "{args:?}: {err}"
        );
    }
    fs::remove_dir_all(d.join("rep")).unwrap();
    assert_eq!(snapshot(d), before);
}

#[cfg(unix)]
#[test]
fn a_fifo_output_is_written_in_place() {
    let dir = fixture();
    let d = dir.path();
    let fifo = d.join("pipe");
    let made = Command::new("mkfifo").arg(&fifo).status().unwrap();
    assert!(made.success(), "mkfifo");
    // A second name of the FIFO, to let the reader go should the command
    // never open it (the test then fails instead of waiting forever).
    fs::hard_link(&fifo, d.join("pipe-spare")).unwrap();
    let want = fs::read(d.join("records.csv")).unwrap();
    let opened = std::sync::Arc::new(std::sync::atomic::AtomicBool::new(false));
    let reader = {
        let (fifo, opened) = (fifo.clone(), opened.clone());
        std::thread::spawn(move || {
            let mut f = fs::File::open(&fifo).unwrap();
            opened.store(true, std::sync::atomic::Ordering::SeqCst);
            let mut got = Vec::new();
            f.read_to_end(&mut got).unwrap();
            got
        })
    };
    let o = tenmin(
        &["replay", "-c", "station.toml", "samples.csv", "-o", "pipe"],
        d,
    );
    if !opened.load(std::sync::atomic::Ordering::SeqCst) {
        // The reader is waiting in `open` (or just left it): a writer lets it go.
        let _ = fs::OpenOptions::new()
            .write(true)
            .open(d.join("pipe-spare"));
    }
    let got = reader.join().unwrap();
    assert_eq!(code(&o), Some(0), "{}", text(&o.stderr));
    assert_eq!(got, want);
    use std::os::unix::fs::FileTypeExt;
    assert!(fs::symlink_metadata(&fifo).unwrap().file_type().is_fifo());
}

#[test]
fn an_existing_folder_as_output_file_is_refused_without_a_temporary_file() {
    let dir = fixture();
    let d = dir.path();
    fs::create_dir(d.join("out")).unwrap();
    let before = snapshot(d);
    for args in [
        &["replay", "-c", "station.toml", "samples.csv", "-o", "out"][..],
        &["export", "-c", "station.toml", "samples.csv", "-o", "out"],
        &["decode", "-c", "station.toml", "log.bin", "-o", "out/"],
    ] {
        refused_in(d, args, &["is a folder"], &before);
    }
    // And the other way round: a file where report and demo want a folder.
    for args in [
        &[
            "report",
            "-c",
            "station.toml",
            "records.csv",
            "-o",
            "samples.csv",
        ][..],
        &["demo", "--days", "1", "-o", "records.csv"],
    ] {
        refused_in(d, args, &["is a file", "folder"], &before);
    }
}

#[test]
fn a_failure_mid_run_leaves_the_old_output_and_no_temporary_file() {
    let dir = fixture();
    let d = dir.path();
    // Two samples a week apart (a thousand empty intervals written in
    // between, more than the output's buffer), then a bad row.
    write(
        d,
        "bad.csv",
        "time,ws\n1737331200,5\n1737936000,6\n1737936001,6.x\n",
    );
    write(d, "out.csv", "old output\n");
    write(d, "out.tmsf", "old sample file\n");
    let before = snapshot(d);
    for args in [
        &[
            "replay",
            "-j",
            "1",
            "-c",
            "station.toml",
            "bad.csv",
            "-o",
            "out.csv",
        ][..],
        &[
            "replay",
            "-j",
            "2",
            "-c",
            "station.toml",
            "bad.csv",
            "-o",
            "out.csv",
        ],
        &["export", "-c", "station.toml", "bad.csv", "-o", "out.tmsf"],
        &["export", "-c", "station.toml", "bad.csv", "-o", "new.tmsf"],
    ] {
        refused_in(d, args, &["bad.csv:4:"], &before);
    }
}

// ---------------------------------------------------------------------------
// 3. Option values

#[test]
fn negative_and_out_of_range_values_get_a_range_message() {
    let dir = fixture();
    let d = dir.path();
    let st = "station.toml";
    let cases: &[(&[&str], &str)] = &[
        (
            &["replay", "-c", st, "samples.csv", "--max-gap-days", "-1"],
            "--max-gap-days must be a whole number from 1 to 4294967295, got -1",
        ),
        (
            &[
                "verify",
                "-c",
                st,
                "--samples",
                "samples.csv",
                "--records",
                "records.csv",
                "--max-gap-days",
                "0",
            ],
            "--max-gap-days must be a whole number from 1 to 4294967295, got 0",
        ),
        (
            &[
                "export",
                "-c",
                st,
                "samples.csv",
                "-o",
                "x.tmsf",
                "--max-gap-days",
                "-7",
            ],
            "--max-gap-days must be a whole number from 1 to 4294967295, got -7",
        ),
        (
            &[
                "decode",
                "-c",
                st,
                "log.bin",
                "--max-gap-days",
                "4294967296",
            ],
            "--max-gap-days must be a whole number from 1 to 4294967295, got 4294967296",
        ),
        (
            &["replay", "-c", st, "samples.csv", "-j", "-2"],
            "--jobs must be a whole number from 1 to 65535, got -2",
        ),
        (
            &["replay", "-c", st, "samples.csv", "--jobs", "1.5"],
            "--jobs must be a whole number from 1 to 65535, got 1.5",
        ),
        (
            &[
                "verify",
                "-c",
                st,
                "--samples",
                "samples.csv",
                "--records",
                "records.csv",
                "--max-diffs",
                "-1",
            ],
            "--max-diffs must be a whole number from 0 to 4294967295, got -1",
        ),
        (
            &["demo", "--days", "-1"],
            "--days must be a whole number from 1 to 366, got -1",
        ),
        (
            &["demo", "--days", "367"],
            "--days must be a whole number from 1 to 366, got 367",
        ),
        (
            &["demo", "--seed", "-1"],
            "--seed must be a whole number from 0 to 18446744073709551615, got -1",
        ),
        (
            &["report", "-c", st, "records.csv", "--sectors", "-8"],
            "sectors must be 8, 12, 16 or 36",
        ),
        (
            &["report", "-c", st, "records.csv", "--air-density", "-1.2"],
            "air density must be a number of kg/m^3 between 0.5 and 2.0",
        ),
    ];
    let before = snapshot(d);
    for (args, want) in cases {
        let o = refused_in(d, args, &[want], &before);
        let err = text(&o.stderr);
        assert!(
            !err.contains("tip:") && !err.contains("-- -"),
            "{args:?}: {err}"
        );
    }
}

#[test]
fn no_records_rows_names_the_files() {
    let dir = fixture();
    let d = dir.path();
    let header = "start,end,channel,n_possible,n_valid,mean,sd,min,max,gust,flags\n";
    write(d, "empty-a.csv", header);
    write(d, "empty-b.csv", header);
    let o = tenmin(
        &[
            "report",
            "-c",
            "station.toml",
            "empty-a.csv",
            "empty-b.csv",
            "-o",
            "rep",
        ],
        d,
    );
    let err = text(&o.stderr);
    assert_eq!(code(&o), Some(2), "{err}");
    assert!(
        err.contains("no records rows in empty-a.csv, empty-b.csv"),
        "{err}"
    );
    assert!(!d.join("rep").exists());
}

// ---------------------------------------------------------------------------
// 4. One CLI surface

#[test]
fn output_means_the_same_for_every_command() {
    let dir = fixture();
    let d = dir.path();
    let want = fs::read(d.join("records.csv")).unwrap();
    for flag in ["-o", "--output"] {
        let o = tenmin(
            &["replay", "-c", "station.toml", "samples.csv", flag, "r.csv"],
            d,
        );
        assert_eq!(code(&o), Some(0), "{}", text(&o.stderr));
        assert_eq!(fs::read(d.join("r.csv")).unwrap(), want);
        let o = tenmin(
            &["decode", "-c", "station.toml", "log.bin", flag, "l.csv"],
            d,
        );
        assert_eq!(code(&o), Some(0), "{}", text(&o.stderr));
        let o = tenmin(
            &[
                "export",
                "-c",
                "station.toml",
                "samples.csv",
                flag,
                "s.tmsf",
            ],
            d,
        );
        assert_eq!(code(&o), Some(0), "{}", text(&o.stderr));
        assert!(fs::read(d.join("s.tmsf")).unwrap().starts_with(b"TMSF"));
    }
    // Report: -o, --output and the old --out all name the folder.
    for (flag, folder) in [("-o", "rep1"), ("--output", "rep2"), ("--out", "rep3")] {
        let o = tenmin(
            &["report", "-c", "station.toml", "records.csv", flag, folder],
            d,
        );
        assert_eq!(code(&o), Some(0), "{flag}: {}", text(&o.stderr));
        assert!(d.join(folder).join("report.html").is_file(), "{flag}");
        assert!(text(&o.stdout).contains(&format!("{folder}/report.html")));
    }
    // The help of every command that writes shows -o/--output.
    for sub in ["replay", "export", "decode", "report", "demo"] {
        let h = text(&tenmin(&[sub, "--help"], d).stdout);
        assert!(h.contains("-o, --output"), "{sub}: {h}");
        assert!(!h.contains("--out "), "{sub}: {h}");
    }
    let h = text(&tenmin(&["--help"], d).stdout);
    assert!(h.contains("Options shared by all commands"), "{h}");
}

// ---------------------------------------------------------------------------
// 5. The demo

/// The paths the demo says it wrote, from its "wrote:" list.
fn printed_paths(stdout: &str, days: usize) -> Vec<String> {
    let mut paths = Vec::new();
    let mut lines = stdout.lines().skip_while(|l| *l != "wrote:").skip(1);
    for l in lines.by_ref() {
        let Some(item) = l.strip_prefix("  ") else {
            break;
        };
        let (path, _) = item.split_once(": ").expect("path: what");
        match path.split_once(" to ") {
            Some((first, last)) => {
                // samples-2025-01-20.csv to samples-2025-01-NN.csv
                assert!(first.ends_with("samples-2025-01-20.csv"), "{first}");
                let prefix = &first[..first.len() - "20.csv".len()];
                for day in 0..days {
                    paths.push(format!("{prefix}{}.csv", 20 + day));
                }
                assert_eq!(paths.last().unwrap(), last);
            }
            None => paths.push(path.to_string()),
        }
    }
    paths
}

#[test]
fn the_demo_writes_where_it_says_and_its_log_decodes_to_its_records() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let o = tenmin(&["demo", "--days", "2", "-o", "my demo/"], d);
    let out = text(&o.stdout);
    assert_eq!(code(&o), Some(0), "{out}{}", text(&o.stderr));
    let mut printed = printed_paths(&out, 2);
    assert_eq!(
        printed,
        [
            "my demo/station.toml",
            "my demo/events.csv",
            "my demo/exclusions.csv",
            "my demo/sensors.toml",
            "my demo/samples-2025-01-20.csv",
            "my demo/samples-2025-01-21.csv",
            "my demo/logger-records.csv",
            "my demo/logger.log",
        ]
    );
    // Exactly the printed files, nothing else (no temporary file).
    let mut written: Vec<String> = names(&snapshot(d))
        .into_iter()
        .filter(|n| n != "my demo")
        .collect();
    printed.sort();
    written.sort();
    assert_eq!(written, printed);

    // The log decodes to the logger's records, byte for byte.
    let dec = tenmin(
        &["decode", "-c", "my demo/station.toml", "my demo/logger.log"],
        d,
    );
    assert_eq!(code(&dec), Some(0), "{}", text(&dec.stderr));
    let records = fs::read(d.join("my demo/logger-records.csv")).unwrap();
    assert_eq!(dec.stdout, records);
    // A log: frames of the wire format's length, each opening with its sync
    // marker, fewer than the rows (none for intervals without samples).
    use qc_core::wire::{FRAME_LEN, SYNC};
    let log = fs::read(d.join("my demo/logger.log")).unwrap();
    assert_eq!(log.len() % FRAME_LEN, 0);
    assert!(log.chunks(FRAME_LEN).all(|f| f[..4] == SYNC));
    let rows = records.iter().filter(|&&b| b == b'\n').count() - 1;
    assert!(
        log.len() / FRAME_LEN < rows,
        "{} frames, {rows} rows",
        log.len() / FRAME_LEN
    );

    // The commands it prints run as printed (paths quoted for the shell).
    let tries: Vec<&str> = out
        .lines()
        .skip_while(|l| *l != "try:")
        .skip(1)
        .filter_map(|l| l.strip_prefix("  tenmin "))
        .collect();
    assert_eq!(tries.len(), 3, "{out}");
    if cfg!(unix) {
        for t in tries {
            let st = Command::new("sh")
                .arg("-c")
                .arg(format!("\"$TENMIN\" {t}"))
                .env("TENMIN", BIN)
                .current_dir(d)
                .output()
                .unwrap();
            assert_eq!(code(&st), Some(0), "{t}: {}", text(&st.stderr));
        }
        assert_eq!(fs::read(d.join("decoded.csv")).unwrap(), records);
        // The replay applies the demo's exclusion (ws60, 2025-01-20 09:00 to
        // 11:30: 15 intervals of 600 readings); the logger knew none. Every
        // other row is the logger's, byte for byte.
        let replayed = fs::read_to_string(d.join("records.csv")).unwrap();
        let logged = String::from_utf8(records.clone()).unwrap();
        assert_eq!(replayed.lines().count(), logged.lines().count());
        let mut excluded = 0;
        for (a, b) in replayed.lines().zip(logged.lines()) {
            if a != b {
                let f: Vec<&str> = a.split(',').collect();
                assert_eq!(f[2], "ws60", "{a}");
                assert!(
                    ("2025-01-20T09:00:00Z".."2025-01-20T11:30:00Z").contains(&f[0]),
                    "{a}"
                );
                // n_excluded, before the last column (sensor_entries).
                assert_eq!(f[f.len() - 2], "600", "{a}");
                excluded += 1;
            }
        }
        assert_eq!(excluded, 15);
    }
}

// ---------------------------------------------------------------------------
// 6. decode given something that is not a log

#[test]
fn decode_says_what_a_file_is_when_it_is_not_a_log() {
    let dir = fixture();
    let d = dir.path();
    let e = tenmin(
        &[
            "export",
            "-c",
            "station.toml",
            "samples.csv",
            "-o",
            "day.tmsf",
        ],
        d,
    );
    assert_eq!(code(&e), Some(0), "{}", text(&e.stderr));
    write(d, "bom.csv", format!("\u{feff}{}", samples()));
    write(d, "notes.txt", "logger swapped on 2025-01-20\n");
    let cases = [
        ("samples.csv", "samples.csv: this is a samples CSV (its header starts with `time,ws`), not a logger's log"),
        ("bom.csv", "bom.csv: this is a samples CSV"),
        ("day.tmsf", "day.tmsf: this is a sample file (it starts with `TMSF`, as `tenmin export` writes it), not a logger's log"),
        ("records.csv", "records.csv: this is a records CSV"),
        ("notes.txt", "notes.txt: this is a text file, not a logger's log"),
    ];
    for (file, want) in cases {
        let o = tenmin(&["decode", "-c", "station.toml", file, "-o", "out.csv"], d);
        let err = text(&o.stderr);
        assert_eq!(code(&o), Some(2), "{file}: {err}");
        assert!(err.contains(want), "{file}: {err}");
        assert!(!err.contains("good frames"), "{file}: {err}");
        assert!(!d.join("out.csv").exists(), "{file}");
    }
    // A log that is erased flash, or empty, still decodes (no frames, no rows).
    write(d, "empty.log", "");
    for file in ["log.bin", "empty.log"] {
        let o = tenmin(&["decode", "-c", "station.toml", file], d);
        assert_eq!(code(&o), Some(0), "{file}: {}", text(&o.stderr));
    }
}

// ---------------------------------------------------------------------------
// Catalogue of bad cases: each exits 2 with a message naming the place, and
// leaves every file as it was.

#[test]
fn an_output_in_a_missing_folder_makes_the_folder() {
    let dir = fixture();
    let d = dir.path();
    let o = tenmin(
        &[
            "replay",
            "-c",
            "station.toml",
            "samples.csv",
            "-o",
            "no/such/out.csv",
        ],
        d,
    );
    assert_eq!(code(&o), Some(0), "{}", text(&o.stderr));
    assert!(fs::read_to_string(d.join("no/such/out.csv"))
        .unwrap()
        .starts_with("start,end,channel"));
}

#[test]
fn catalogue_of_bad_output_cases() {
    let dir = fixture();
    let d = dir.path();
    fs::create_dir(d.join("folder")).unwrap();
    write(d, "nested-file", "x");
    let before = snapshot(d);
    let st = "station.toml";
    let cases: &[(&[&str], &str)] = &[
        // An output under a regular file.
        (
            &[
                "export",
                "-c",
                st,
                "samples.csv",
                "-o",
                "nested-file/x.tmsf",
            ],
            "nested-file/x.tmsf",
        ),
        // The station file given as decode's log.
        (
            &["decode", "-c", st, st],
            "station.toml: this is a text file",
        ),
        // The output is the station file.
        (
            &["replay", "-c", st, "samples.csv", "-o", st],
            "it is the station file station.toml, an input",
        ),
        // A folder given to a command that writes a file.
        (
            &["decode", "-c", st, "log.bin", "-o", "folder"],
            "folder: is a folder",
        ),
        // A samples file given where the report wants a folder.
        (
            &["report", "-c", st, "records.csv", "-o", "samples.csv"],
            "samples.csv: is a file",
        ),
        // A value that is no number.
        (
            &["replay", "-c", st, "samples.csv", "--max-gap-days", "ten"],
            "--max-gap-days must be a whole number",
        ),
    ];
    for (args, want) in cases {
        let err = text(&refused_in(d, args, &[want], &before).stderr);
        assert!(!err.contains("panicked"), "{args:?}: {err}");
    }
}
