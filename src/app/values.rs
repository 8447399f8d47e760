//! Value parsers with the documented limits (beside `args::positive` and `args::level`): clap refuses anything outside them with exit 2 and a
//! message naming the option, before any work. Negative numbers are accepted as values
//! (`allow_negative_numbers`) so that `--exponent -1` meets the domain message, not "unexpected
//! argument".

/// Resamples `--bootstrap` draws at most (each refits the model; in `eras`, per window).
pub const MAX_BOOTSTRAP: u64 = 100_000;
/// Seasons in an `eras --window` (0 is refused by the analysis itself, with its own message).
pub const MAX_WINDOW: u64 = 10_000;
/// Teams listed by `--top`.
pub const MAX_TOP: u64 = 1_000_000;

/// A finite number of 0 or more.
pub fn non_negative(s: &str) -> Result<f64, String> {
    match s.trim().parse::<f64>() {
        Ok(x) if x.is_finite() && x >= 0.0 => Ok(x),
        _ => Err(format!("expected a non-negative number, got '{s}'")),
    }
}

/// A whole number from 0 to `MAX`.
pub fn count<const MAX: u64>(s: &str) -> Result<usize, String> {
    let n: u64 = s
        .trim()
        .parse()
        .map_err(|_| format!("expected a whole number from 0 to {MAX}, got '{s}'"))?;
    if n > MAX {
        return Err(format!("at most {MAX} (a documented limit), got {n}"));
    }
    usize::try_from(n).map_err(|_| format!("{n} is too large for this machine"))
}

/// A whole number from 1 to `MAX`.
pub fn count_u64<const MAX: u64>(s: &str) -> Result<u64, String> {
    let n: u64 = s
        .trim()
        .parse()
        .map_err(|_| format!("expected a whole number from 1 to {MAX}, got '{s}'"))?;
    if n == 0 || n > MAX {
        return Err(format!(
            "must lie from 1 to {MAX} (a documented limit), got {n}"
        ));
    }
    Ok(n)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn limits_refuse_what_would_overflow_or_abort() {
        assert!(count::<MAX_TOP>("9223372036854775808").is_err());
        assert!(count::<MAX_BOOTSTRAP>("1000000000").is_err());
        assert_eq!(count::<MAX_BOOTSTRAP>("100000"), Ok(100_000));
        assert!(non_negative("-0.1").is_err() && non_negative("NaN").is_err());
        assert_eq!(non_negative("0"), Ok(0.0));
        assert!(count_u64::<10>("0").is_err() && count_u64::<10>("11").is_err());
    }
}
