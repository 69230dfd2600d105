//! The core's layers: every module imports only from the modules before it in
//! [`LAYERS`] (the layers below it, and those to its left in its own layer),
//! so the files read bottom-up and no two import each other.
//!
//! The check reads `src/**/*.rs`, drops comments and test code (`#[cfg(test)]`
//! items: tests may use anything), and collects each module's `crate::x`,
//! `crate::{x, ..}` and `super::x` references. A reference to the crate
//! root's re-exports (`crate::Layout`) is refused: code names the module an
//! item lives in, so the check can see the edge. The crate docs (lib.rs,
//! "Layers") and DEVELOPERS.md ("Layers of the core") show the same table;
//! the check compares both with [`LAYERS`], so the docs cannot drift.

use std::collections::BTreeMap;
use std::fs;
use std::path::{Path, PathBuf};

/// Bottom-up: each layer's name and its modules, in the order they may import
/// each other (a module may import those listed before it, never after).
/// `wire::x` is the file `src/wire/x.rs`; `wire` is `src/wire/mod.rs`, the
/// facade that re-exports its parts. `lib.rs` (the crate root, which
/// re-exports everything) and the test-only `test_rng` are not layered.
const LAYERS: &[(&str, &[&str])] = &[
    (
        "primitives",
        &[
            "limits",
            "error",
            "flags",
            "time",
            "cmath",
            "moments",
            "angle",
            "direction",
            "gust",
            "spike",
            "crc",
            "sentinel",
        ],
    ),
    ("channel", &["channel"]),
    ("screen", &["screen", "recovery"]),
    ("station", &["station"]),
    (
        "wire, analysis",
        &[
            "wire::frame",
            "wire::record",
            "wire::state",
            "wire::scan",
            "wire::sample",
            "wire",
            "analysis",
            "conventions",
        ],
    ),
];

/// Files that are not layered: the crate root, and a test-only helper.
const UNLAYERED: &[&str] = &["lib", "test_rng"];

fn src() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("src")
}

/// Every `.rs` file under `src`, as (module path, text).
fn modules() -> Vec<(String, String)> {
    fn walk(dir: &Path, prefix: &str, out: &mut Vec<(String, String)>) {
        let mut entries: Vec<_> = fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().path())
            .collect();
        entries.sort();
        for p in entries {
            let stem = p.file_stem().unwrap().to_str().unwrap().to_string();
            if p.is_dir() {
                walk(&p, &format!("{prefix}{stem}::"), out);
            } else if p.extension().is_some_and(|e| e == "rs") {
                let name = if stem == "mod" {
                    prefix.trim_end_matches("::").to_string()
                } else {
                    format!("{prefix}{stem}")
                };
                out.push((name, fs::read_to_string(&p).unwrap()));
            }
        }
    }
    let mut out = Vec::new();
    walk(&src(), "", &mut out);
    out
}

/// The code of a file without comments and without `#[cfg(test)]` items
/// (rustfmt layout: an item ends at the `}` or `;` line of its own indent).
fn code_only(text: &str) -> String {
    let mut out = String::new();
    let mut lines = text.lines();
    while let Some(line) = lines.next() {
        let t = line.trim_start();
        if t == "#[cfg(test)]" {
            let indent = &line[..line.len() - t.len()];
            let item = lines.next().unwrap_or("");
            if item.trim_end().ends_with('{') {
                let end = format!("{indent}}}");
                for l in lines.by_ref() {
                    if l == end {
                        break;
                    }
                }
            }
            continue;
        }
        if t.starts_with("//") {
            continue;
        }
        // A trailing comment (no `//` appears in this crate's strings).
        let code = match line.find("//") {
            Some(i) => &line[..i],
            None => line,
        };
        out.push_str(code);
        out.push('\n');
    }
    out
}

/// The paths after `prefix` in `code`: `crate::a::B` gives `a::B`,
/// `crate::{a::B, c}` gives `a::B` and `c`.
fn paths_after(code: &str, prefix: &str) -> Vec<String> {
    let mut out = Vec::new();
    let mut rest = code;
    while let Some(i) = rest.find(prefix) {
        let before = rest[..i].chars().last();
        rest = &rest[i + prefix.len()..];
        if before.is_some_and(|c| c.is_alphanumeric() || c == '_' || c == ':' || c == '$') {
            continue; // `x::crate::` or `$crate::`: not a path from the root
        }
        if let Some(group) = rest.strip_prefix('{') {
            // A group: split its top-level items.
            let mut depth = 0;
            let mut item = String::new();
            for c in group.chars() {
                match c {
                    '{' => depth += 1,
                    '}' if depth == 0 => break,
                    '}' => depth -= 1,
                    ',' if depth == 0 => {
                        out.push(std::mem::take(&mut item));
                        continue;
                    }
                    _ => {}
                }
                item.push(c);
            }
            out.push(item);
        } else {
            let end = rest
                .find(|c: char| !(c.is_alphanumeric() || c == '_' || c == ':'))
                .unwrap_or(rest.len());
            out.push(rest[..end].to_string());
        }
    }
    out.iter()
        .map(|p| {
            p.split("::")
                .map(str::trim)
                .filter(|s| !s.is_empty())
                .collect::<Vec<_>>()
                .join("::")
        })
        .filter(|p| !p.is_empty())
        .collect()
}

fn position() -> BTreeMap<&'static str, usize> {
    LAYERS
        .iter()
        .flat_map(|(_, mods)| mods.iter().copied())
        .enumerate()
        .map(|(i, m)| (m, i))
        .collect()
}

/// The module a path names: `wire::frame` when that file exists, else its
/// first segment (`channel::Tally` -> `channel`).
fn module_of(path: &str, pos: &BTreeMap<&str, usize>) -> Option<String> {
    let segs: Vec<&str> = path.split("::").collect();
    if segs.len() >= 2 {
        let two = format!("{}::{}", segs[0], segs[1]);
        if pos.contains_key(two.as_str()) {
            return Some(two);
        }
    }
    pos.contains_key(segs[0]).then(|| segs[0].to_string())
}

/// (module, the module it imports) for every reference in the code.
fn edges() -> Vec<(String, String)> {
    let pos = position();
    let mut edges = Vec::new();
    let mut problems = Vec::new();
    for (module, text) in modules() {
        if UNLAYERED.contains(&module.as_str()) {
            continue;
        }
        let code = code_only(&text);
        let mut refs = paths_after(&code, "crate::");
        if let Some((parent, _)) = module.rsplit_once("::") {
            // `super::x` in `wire::record` is `wire::x`.
            refs.extend(
                paths_after(&code, "super::")
                    .into_iter()
                    .map(|p| format!("{parent}::{p}")),
            );
        } else {
            refs.extend(paths_after(&code, "super::"));
        }
        // A child module named without a prefix (`use frame::X` in `wire`).
        for child in pos
            .keys()
            .filter_map(|m| m.strip_prefix(&format!("{module}::")))
        {
            let named = format!("{child}::");
            let seen = code.match_indices(&named).any(|(i, _)| {
                !code[..i]
                    .chars()
                    .last()
                    .is_some_and(|c| c.is_alphanumeric() || c == '_' || c == ':')
            });
            if seen {
                refs.push(format!("{module}::{child}"));
            }
        }
        for r in refs {
            if r == "self" || r.starts_with("self::") {
                continue;
            }
            match module_of(&r, &pos) {
                Some(m) => edges.push((module.clone(), m)),
                None => problems.push(format!(
                    "{module}: `crate::{r}` is not a module of the table: name the module \
                     an item lives in (not the crate root's re-export), or add the module to LAYERS"
                )),
            }
        }
    }
    assert!(problems.is_empty(), "{}", problems.join("\n"));
    edges
}

#[test]
fn every_module_is_in_the_table_once() {
    let pos = position();
    let count: usize = LAYERS.iter().map(|(_, m)| m.len()).sum();
    assert_eq!(count, pos.len(), "a module is listed twice in LAYERS");
    let files: Vec<String> = modules().into_iter().map(|(m, _)| m).collect();
    for f in &files {
        assert!(
            pos.contains_key(f.as_str()) || UNLAYERED.contains(&f.as_str()),
            "src file of module `{f}` is not in LAYERS: give it a layer"
        );
    }
    for m in pos.keys() {
        assert!(
            files.iter().any(|f| f == m),
            "LAYERS names `{m}`, which has no file"
        );
    }
}

#[test]
fn modules_import_only_from_below() {
    let pos = position();
    let mut upward = Vec::new();
    for (from, to) in edges() {
        if from != to && pos[to.as_str()] > pos[from.as_str()] {
            upward.push(format!(
                "{from} imports {to}, which comes after it in LAYERS"
            ));
        }
    }
    upward.sort();
    upward.dedup();
    assert!(upward.is_empty(), "upward imports:\n{}", upward.join("\n"));
}

#[test]
fn the_check_sees_imports() {
    // The check is not empty: it sees the edges that make the layers.
    let e = edges();
    for (from, to) in [
        ("channel", "spike"),
        ("screen", "channel"),
        ("station", "crc"),
        ("station", "screen"),
        ("wire::sample", "station"),
        ("wire::scan", "wire::record"),
        ("wire", "wire::frame"),
        ("conventions", "station"),
    ] {
        assert!(
            e.iter().any(|(f, t)| f == from && t == to),
            "{from} -> {to} not seen"
        );
    }
    // And it would see an upward one, in every form a reference takes.
    let code = code_only(
        "use crate::station::Layout;\nuse crate::{wire::Crc32, time};\n\
         fn f() { super::frame::x(); }\n#[cfg(test)]\nmod tests {\n    use crate::wire;\n}\n",
    );
    assert_eq!(
        paths_after(&code, "crate::"),
        ["station::Layout", "wire::Crc32", "time"]
    );
    assert_eq!(paths_after(&code, "super::"), ["frame::x"]);
}

/// The layers as a diagram shows them: the lines of the first ```text block
/// after `heading`, top-down, each `name   module module ...` (the name
/// ends at two spaces).
fn diagram(text: &str, heading: &str) -> Vec<(String, Vec<String>)> {
    let from = text
        .find(heading)
        .unwrap_or_else(|| panic!("no `{heading}`"));
    let block = &text[from..];
    let start = block.find("```text\n").expect("no ```text block") + 8;
    let end = start + block[start..].find("```").unwrap();
    block[start..end]
        .lines()
        .map(|l| l.trim_start_matches("//!").trim())
        .filter(|l| !l.is_empty() && l.chars().any(char::is_alphanumeric))
        .map(|l| {
            let (name, mods) = l.split_once("  ").expect("name, two spaces, modules");
            (
                name.trim().to_string(),
                mods.split_whitespace().map(str::to_string).collect(),
            )
        })
        .collect()
}

fn table_top_down() -> Vec<(String, Vec<String>)> {
    LAYERS
        .iter()
        .rev()
        .map(|(n, m)| (n.to_string(), m.iter().map(|s| s.to_string()).collect()))
        .collect()
}

#[test]
fn crate_docs_show_the_table() {
    let lib = fs::read_to_string(src().join("lib.rs")).unwrap();
    assert_eq!(diagram(&lib, "//! # Layers"), table_top_down());
}

#[test]
fn developers_md_shows_the_table() {
    let dev = Path::new(env!("CARGO_MANIFEST_DIR")).join("../DEVELOPERS.md");
    let text = fs::read_to_string(dev).unwrap();
    assert_eq!(diagram(&text, "## Layers of the core"), table_top_down());
}
