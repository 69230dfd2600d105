//! Provenance: beside every records file, report and decoded log a small JSON
//! file, `<output>.provenance.json`, names what produced it, so that an auditor
//! can confirm which files and settings gave a result (`tenmin verify
//! --provenance`).
//!
//! ```json
//! {
//!   "format": "tenmin-provenance/1",
//!   "tool": { "name": "tenmin", "version": "0.1.0" },
//!   "core": { "name": "qc-core", "version": "0.1.0" },
//!   "command": ["tenmin", "replay", "-c", "station.toml", "day1.csv", "-o", "records.csv"],
//!   "working_dir": "/home/ana/campaign",
//!   "config_fingerprint": "0x1a2b3c4d",
//!   "inputs": [
//!     { "role": "station", "path": "station.toml", "size": 812, "sha256": "9f86d0..." },
//!     { "role": "exclusions", "path": "exclusions.csv", "size": 301, "sha256": "..." },
//!     { "role": "samples", "path": "day1.csv", "size": 3456789, "sha256": "..." }
//!   ],
//!   "output": { "path": "records.csv", "size": 123456, "sha256": "..." }
//! }
//! ```
//!
//! - Paths are as the command saw them: relative ones are relative to
//!   `working_dir`, the folder the command ran in. `verify --provenance`
//!   looks for a relative path there, and else relative to the provenance
//!   file's own folder (a campaign folder moved whole).
//! - `inputs`: the station file, every side file it names
//!   ([`StationFile::side_files`]), then the samples files or the logger's log,
//!   in command-line order. `sha256` is lowercase hex of the file's bytes as
//!   read (a `.gz` file's compressed bytes), `size` its length in bytes.
//! - `config_fingerprint`: `qc_core::config_fingerprint` of the station file,
//!   the value a logger's frames carry.
//! - `output`: the file written, hashed by reading it back after it was
//!   written; a report's output is its `report.html`.
//! - The provenance file is written after the output, atomically
//!   (`output.rs`). An output to stdout gets none: there is no file to put it
//!   beside (say `-o FILE` to have one).

use std::fs::File;
use std::io::Read;
use std::path::{Path, PathBuf};

use anyhow::{anyhow, bail, Context, Result};
use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

use crate::config::StationFile;

/// The format name this code writes and reads.
pub const FORMAT: &str = "tenmin-provenance/1";

/// Largest provenance file read, bytes.
const MAX_BYTES: u64 = 1 << 20;

/// A program and its version.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Program {
    /// Crate name.
    pub name: String,
    /// Crate version.
    pub version: String,
}

/// One file, hashed.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FileHash {
    /// What the file is: `station`, `exclusions` (a side file's key),
    /// `samples`, `log`; absent for the output.
    #[serde(skip_serializing_if = "Option::is_none", default)]
    pub role: Option<String>,
    /// The path as the command saw it.
    pub path: String,
    /// Bytes.
    pub size: u64,
    /// SHA-256, lowercase hex.
    pub sha256: String,
}

/// A provenance file.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Provenance {
    /// [`FORMAT`].
    pub format: String,
    /// The `tenmin` command.
    pub tool: Program,
    /// The statistics core.
    pub core: Program,
    /// The command line, program name first.
    pub command: Vec<String>,
    /// The folder the command ran in.
    pub working_dir: String,
    /// `qc_core::config_fingerprint` of the station file, `0x` and 8 hex digits.
    pub config_fingerprint: String,
    /// Every input.
    pub inputs: Vec<FileHash>,
    /// The output.
    pub output: FileHash,
}

/// The provenance file of `output`: `<output>.provenance.json`.
pub fn path_for(output: &Path) -> PathBuf {
    let mut s = output.as_os_str().to_owned();
    s.push(".provenance.json");
    PathBuf::from(s)
}

/// SHA-256 (lowercase hex) and size of the file at `path`, read in pieces.
pub fn hash_file(path: &Path) -> Result<(String, u64)> {
    let mut f = File::open(path).with_context(|| format!("{}: cannot read", path.display()))?;
    let mut h = Sha256::new();
    let mut buf = vec![0u8; 1 << 16];
    let mut size = 0u64;
    loop {
        let n = f
            .read(&mut buf)
            .with_context(|| format!("{}: cannot read", path.display()))?;
        if n == 0 {
            break;
        }
        size += n as u64;
        h.update(&buf[..n]);
    }
    let hex = h.finalize().iter().map(|b| format!("{b:02x}")).collect();
    Ok((hex, size))
}

fn file_hash(role: Option<&str>, path: &Path) -> Result<FileHash> {
    let (sha256, size) = hash_file(path)?;
    Ok(FileHash {
        role: role.map(str::to_string),
        path: path.to_string_lossy().into_owned(),
        size,
        sha256,
    })
}

/// The inputs of a command reading `cfg` and `files` (each of `role`): the
/// station file, its side files, then the files.
pub fn inputs<'a>(
    cfg: &StationFile,
    role: &'a str,
    files: impl IntoIterator<Item = &'a Path>,
) -> Vec<(String, PathBuf)> {
    let mut v = vec![("station".to_string(), cfg.path.clone())];
    v.extend(
        cfg.side_files()
            .into_iter()
            .map(|(k, p)| (k.to_string(), p)),
    );
    v.extend(
        files
            .into_iter()
            .map(|p| (role.to_string(), p.to_path_buf())),
    );
    v
}

/// Writes `<output>.provenance.json` for `output`, just written by a command
/// on `cfg` with `inputs` ([`inputs`]).
pub fn write(output: &Path, cfg: &StationFile, inputs: &[(String, PathBuf)]) -> Result<()> {
    // A device or a pipe has no folder to put a file beside.
    if !std::fs::metadata(output).is_ok_and(|m| m.is_file()) {
        return Ok(());
    }
    let cores: Vec<qc_core::ChannelConfig> = cfg.channels.iter().map(|c| c.core).collect();
    let fp = qc_core::config_fingerprint(&cfg.station, &cores);
    let prov = Provenance {
        format: FORMAT.to_string(),
        tool: Program {
            name: "tenmin".to_string(),
            version: env!("CARGO_PKG_VERSION").to_string(),
        },
        core: Program {
            name: "qc-core".to_string(),
            version: qc_core::VERSION.to_string(),
        },
        command: std::env::args_os()
            .map(|a| a.to_string_lossy().into_owned())
            .collect(),
        working_dir: std::env::current_dir()
            .map(|d| d.to_string_lossy().into_owned())
            .unwrap_or_default(),
        config_fingerprint: format!("0x{fp:08x}"),
        inputs: inputs
            .iter()
            .map(|(role, p)| file_hash(Some(role), p))
            .collect::<Result<_>>()?,
        output: file_hash(None, output)?,
    };
    let mut json = serde_json::to_string_pretty(&prov)?;
    json.push('\n');
    let at = path_for(output);
    crate::output::write_file(&at, "the provenance", json.as_bytes())?;
    // Read back what was written.
    let back = read(&at)?;
    if back != prov {
        bail!("{}: reads back other than written", at.display());
    }
    Ok(())
}

/// Reads a provenance file.
pub fn read(path: &Path) -> Result<Provenance> {
    let f = File::open(path)
        .with_context(|| format!("{}: cannot read the provenance file", path.display()))?;
    let mut bytes = Vec::new();
    f.take(MAX_BYTES + 1)
        .read_to_end(&mut bytes)
        .with_context(|| format!("{}: cannot read the provenance file", path.display()))?;
    if bytes.len() as u64 > MAX_BYTES {
        bail!(
            "{}: larger than {MAX_BYTES} bytes: not a provenance file",
            path.display()
        );
    }
    let p: Provenance = serde_json::from_slice(&bytes).map_err(|e| {
        anyhow!(
            "{}:{}: not a provenance file: {e}",
            path.display(),
            e.line()
        )
    })?;
    if p.format != FORMAT {
        bail!(
            "{}: format {:?}: this build reads {FORMAT:?}",
            path.display(),
            p.format
        );
    }
    Ok(p)
}

/// What [`check`] found.
#[derive(Debug, Default)]
pub struct Check {
    /// Files that match: `(what, path)`.
    pub same: Vec<(String, PathBuf)>,
    /// Files that changed or are gone, with why.
    pub changed: Vec<(String, PathBuf, String)>,
}

/// Where a path named in the provenance file `prov_path` is now: relative to
/// its `working_dir` if there, else relative to the provenance file's folder.
fn locate(p: &Provenance, prov_path: &Path, named: &str) -> PathBuf {
    let named = Path::new(named);
    if named.is_absolute() {
        return named.to_path_buf();
    }
    let from_wd = Path::new(&p.working_dir).join(named);
    if from_wd.exists() {
        return from_wd;
    }
    let beside = prov_path.parent().unwrap_or(Path::new("")).join(named);
    if beside.exists() {
        return beside;
    }
    // The output's provenance file sits beside it: its own name there.
    from_wd
}

/// Checks that the output (`output`, or the path the provenance names) and
/// every input named in the provenance file `prov_path` still have their
/// recorded size and SHA-256.
pub fn check(prov_path: &Path, output: Option<&Path>) -> Result<Check> {
    let p = read(prov_path)?;
    let mut c = Check::default();
    let out_path = match output {
        Some(o) => o.to_path_buf(),
        None => locate(&p, prov_path, &p.output.path),
    };
    let files = std::iter::once(("output".to_string(), out_path, &p.output)).chain(
        p.inputs.iter().map(|f| {
            (
                format!("input ({})", f.role.as_deref().unwrap_or("?")),
                locate(&p, prov_path, &f.path),
                f,
            )
        }),
    );
    for (what, path, f) in files {
        match hash_file(&path) {
            Err(e) => c.changed.push((what, path, format!("{e:#}"))),
            Ok((sha, size)) if sha != f.sha256 || size != f.size => c.changed.push((
                what,
                path,
                format!(
                    "{size} bytes, SHA-256 {sha}; the provenance records {} bytes, SHA-256 {}",
                    f.size, f.sha256
                ),
            )),
            Ok(_) => c.same.push((what, path)),
        }
    }
    Ok(c)
}
