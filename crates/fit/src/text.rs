//! Number forms shared by the report, the snippet, the plot and the warnings.

/// `value` in scientific notation with `decimals` decimals and a signed two-digit exponent,
/// e.g. `1.079063e+12`.
pub(crate) fn sci(value: f64, decimals: usize) -> String {
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
