//! Value parsers shared by the commands' options.
//!
//! Every whole-number option (`--jobs`, `--max-gap-days`, `--days`, `--seed`,
//! `--max-diffs`, ...) goes through [`Whole`], so a value out of range, negative
//! or not a number gets one message naming the option and its range:
//! `--max-gap-days must be a whole number from 1 to 4294967295, got -1`. Such
//! options take values that start with `-` (`allow_negative_numbers`), so that
//! clap hands `-1` to the parser instead of taking it for an option.

use std::ffi::OsStr;
use std::marker::PhantomData;

use clap::builder::TypedValueParser;
use clap::error::ErrorKind;

/// A whole number from `lo` to `hi`, as `T`.
#[derive(Clone, Copy, Debug)]
pub struct Whole<T> {
    lo: u64,
    hi: u64,
    _t: PhantomData<fn() -> T>,
}

/// A parser of whole numbers from `lo` to `hi` (both included) into `T`;
/// `hi` must fit in `T`.
pub const fn whole<T>(lo: u64, hi: u64) -> Whole<T> {
    Whole {
        lo,
        hi,
        _t: PhantomData,
    }
}

impl<T> Whole<T> {
    /// Parses `text`; the error says the range and what was given, without
    /// the option's name.
    pub fn check(&self, text: &str) -> Result<u64, String> {
        match text.trim().parse::<u64>() {
            Ok(n) if (self.lo..=self.hi).contains(&n) => Ok(n),
            _ => Err(format!(
                "must be a whole number from {} to {}, got {text}",
                self.lo, self.hi
            )),
        }
    }
}

/// The option's name as typed: `--long`, `-s`, or its value name.
fn name(arg: Option<&clap::Arg>) -> String {
    match arg {
        Some(a) => match (a.get_long(), a.get_short()) {
            (Some(l), _) => format!("--{l}"),
            (None, Some(s)) => format!("-{s}"),
            (None, None) => a.get_id().to_string(),
        },
        None => "the value".to_string(),
    }
}

impl<T> TypedValueParser for Whole<T>
where
    T: TryFrom<u64> + Clone + Send + Sync + 'static,
{
    type Value = T;

    fn parse_ref(
        &self,
        cmd: &clap::Command,
        arg: Option<&clap::Arg>,
        value: &OsStr,
    ) -> Result<T, clap::Error> {
        let text = value.to_string_lossy();
        let fail = |why: String| {
            let mut cmd = cmd.clone();
            cmd.error(ErrorKind::ValueValidation, format!("{} {why}", name(arg)))
        };
        let n = self.check(&text).map_err(fail)?;
        T::try_from(n).map_err(|_| fail(format!("is too large, got {text}")))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn range_messages() {
        let w = whole::<u32>(1, u64::from(u32::MAX));
        assert_eq!(w.check("7"), Ok(7));
        assert_eq!(w.check(" 4294967295 "), Ok(4_294_967_295));
        for bad in ["-1", "0", "4294967296", "1.5", "", "x"] {
            assert_eq!(
                w.check(bad),
                Err(format!(
                    "must be a whole number from 1 to 4294967295, got {bad}"
                ))
            );
        }
    }
}
