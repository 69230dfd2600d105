//! The panic handler of the no-panic proofs (`nopanic_states`,
//! `nopanic_records`): it calls a function that is defined nowhere. With
//! `panic = "abort"`, fat LTO and the linker's removal of unused sections, the
//! handler is linked only if some panic path survives optimisation; then the
//! undefined symbol fails the link, naming it. Included by `#[path]`.

#[cfg(feature = "semihosting-panic")]
compile_error!(
    "the no-panic proofs bring their own panic handler: build them with \
     `--no-default-features --features nopanic`"
);

// The only `unsafe` of these programs: a foreign function is declared in an
// `unsafe extern` block. It is deliberately defined nowhere (the point of the
// proof); `safe` because calling it needs no promise from the caller.
unsafe extern "C" {
    /// Defined nowhere: a reference to it that survives to the link fails it.
    safe fn error_a_panic_is_reachable_in_the_logger() -> !;
}

#[panic_handler]
fn panic(_: &core::panic::PanicInfo<'_>) -> ! {
    error_a_panic_is_reachable_in_the_logger()
}

/// With the feature `nopanic-canary`, one panic the optimiser cannot remove:
/// an index into an array that may be out of bounds. `run-checks.sh` builds
/// the proofs with it and expects the link to fail.
#[inline(never)]
pub fn canary() {
    #[cfg(feature = "nopanic-canary")]
    {
        let table = core::hint::black_box([1u8, 2, 3, 4]);
        core::hint::black_box(table[core::hint::black_box(4usize)]);
    }
}
