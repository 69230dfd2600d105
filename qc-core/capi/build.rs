//! One cfg derived from the features, nothing else: `tm_one_engine` when
//! exactly one logger kind (`record-logger`, `state-logger`) and exactly one
//! shape (`c4g3`, `c8g3`, `c8g12`, `c16g12`) are built. Then a started
//! logger can only be that kind of that shape, and the entry points call its
//! code directly (src/lib.rs, "Configured builds") instead of through the
//! pointers a logger block holds when several may be started. Sizes are no
//! build-script knob: they stay the shapes' constants.

use std::env;

fn main() {
    println!("cargo::rerun-if-changed=build.rs");
    println!("cargo::rustc-check-cfg=cfg(tm_one_engine)");
    let on = |feature: &str| {
        let var = format!("CARGO_FEATURE_{}", feature.to_uppercase().replace('-', "_"));
        env::var_os(var).is_some()
    };
    let kinds = ["record-logger", "state-logger"];
    let shapes = ["c4g3", "c8g3", "c8g12", "c16g12"];
    let built = |names: &[&str]| names.iter().filter(|n| on(n)).count();
    if built(&kinds) == 1 && built(&shapes) == 1 {
        println!("cargo::rustc-cfg=tm_one_engine");
    }
}
