//! The committed header is what cbindgen generates from the sources now, and
//! every function in it is documented. `TM_BLESS=1` rewrites the header.

use std::path::Path;

fn generate() -> String {
    let dir = env!("CARGO_MANIFEST_DIR");
    let config =
        cbindgen::Config::from_file(Path::new(dir).join("cbindgen.toml")).expect("cbindgen.toml");
    let mut out = Vec::new();
    cbindgen::Builder::new()
        .with_src(Path::new(dir).join("src/lib.rs"))
        .with_config(config)
        .generate()
        .expect("cbindgen generates the header")
        .write(&mut out);
    String::from_utf8(out).expect("the header is UTF-8")
}

#[test]
fn committed_header_is_fresh() {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("include/tenmin_qc.h");
    let fresh = generate();
    if std::env::var_os("TM_BLESS").is_some() {
        std::fs::write(&path, &fresh).expect("write the header");
    }
    let committed = std::fs::read_to_string(&path).unwrap_or_default();
    assert!(
        committed == fresh,
        "{} differs from a fresh cbindgen generation: run TM_BLESS=1 cargo test -p qc-capi --test header and commit it",
        path.display()
    );
}

#[test]
fn every_function_is_documented() {
    let header = generate();
    let lines: Vec<&str> = header.lines().collect();
    let mut functions = 0;
    for (i, line) in lines.iter().enumerate() {
        // A declaration: `type name(` at the start of a line (cbindgen writes
        // one per function, arguments on the following lines).
        let Some(name) = line.split_whitespace().find_map(|w| {
            let w = w.trim_start_matches('*').strip_prefix("tm_")?;
            w.split_once('(').map(|(name, _)| name)
        }) else {
            continue;
        };
        if line.starts_with(' ') || line.starts_with('#') || line.starts_with("//") {
            continue;
        }
        functions += 1;
        let above = lines[..i].iter().rev().take_while(|l| l.starts_with("//"));
        assert!(
            above.count() >= 2,
            "tm_{name} has no documentation in the header"
        );
    }
    assert!(
        functions >= 20,
        "only {functions} functions found in the header"
    );
}
