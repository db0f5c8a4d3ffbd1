//! Number forms shared by the report, the snippet, the plot and the warnings.

/// `value` in scientific notation with `decimals` decimals and a signed two-digit exponent,
/// e.g. `1.079063e+12`; `out of range` for an infinite or NaN value.
pub(crate) fn sci(value: f64, decimals: usize) -> String {
    if !value.is_finite() {
        // An overflowed estimate (e.g. the uncertainty factor of A when ln A's standard
        // error exceeds about 709) is never printed as inf or NaN.
        return "out of range".to_string();
    }
    let text = format!("{value:.decimals$e}");
    match text.split_once('e') {
        Some((mantissa, exponent)) => {
            let (sign, digits) = match exponent.strip_prefix('-') {
                Some(d) => ('-', d),
                None => ('+', exponent),
            };
            format!("{mantissa}e{sign}{digits:0>2}")
        }
        None => text,
    }
}

/// The file name of `source` (the whole text when it has none).
pub(crate) fn file_name(source: &str) -> String {
    std::path::Path::new(source)
        .file_name()
        .map_or(source.to_string(), |n| n.to_string_lossy().into_owned())
}
