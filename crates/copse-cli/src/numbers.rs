//! Numbers as copse prints them: every way a report, a chart, a message or an output
//! file turns a number into text lives here, so one kind of number always reads the
//! same wherever it appears.

/// A number to about `digits` significant digits, without exponent for everyday sizes.
pub fn sig(v: f64, digits: usize) -> String {
    if !v.is_finite() {
        return v.to_string();
    }
    if v == 0.0 {
        return "0".to_string();
    }
    let mag = v.abs().log10().floor() as i64;
    if !(-5..=12).contains(&mag) {
        return format!("{v:.*e}", digits.saturating_sub(1));
    }
    let decimals = (digits as i64 - 1 - mag).clamp(0, 12) as usize;
    format!("{v:.decimals$}")
}

/// A data value as written in a file or on a chart axis: shortest form, rounded to six
/// decimals (`150000`, `0.095`).
pub fn plain(v: f64) -> String {
    format!("{}", (v * 1e6).round() / 1e6)
}

/// A share as a percentage with one decimal (`12.5%`).
pub fn pct(v: f64) -> String {
    format!("{:.1}%", 100.0 * v)
}

/// A share as a percentage with at most one decimal and no trailing zero (`12%`,
/// `12.5%`), for chart labels.
pub fn pct_short(v: f64) -> String {
    format!("{}%", plain((100.0 * v * 10.0).round() / 10.0))
}

/// A number with at most `decimals` decimals and no trailing zeros.
pub fn trim_num(v: f64, decimals: usize) -> String {
    let s = format!("{v:.decimals$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// A number with `decimals` decimals and a `+` in front when it is above zero; one that
/// rounds to zero is written without a sign (`0.0000`, never `-0.0000`).
pub fn signed(v: f64, decimals: usize) -> String {
    let s = fixed(v, decimals);
    if v > 0.0 && s.bytes().any(|b| (b'1'..=b'9').contains(&b)) {
        format!("+{s}")
    } else {
        s
    }
}

/// Decimals for a column of numbers whose largest is `top`: enough for four
/// significant digits of the top (four when the top is not above zero).
pub fn column_decimals(top: f64) -> usize {
    if top > 0.0 {
        (3 - top.log10().floor() as i64).clamp(0, 10) as usize
    } else {
        4
    }
}

/// A p-value as printed: three decimals, or `<0.001`.
pub fn p_value(p: f64) -> String {
    if p < 0.001 {
        "<0.001".to_string()
    } else {
        format!("{p:.3}")
    }
}

/// A file size in decimal units: bytes below 10,000, then kB, then MB.
pub fn decimal_bytes(n: u64) -> String {
    if n < 10_000 {
        format!("{n} bytes")
    } else if n < 10_000_000 {
        format!("{:.1} kB", n as f64 / 1e3)
    } else {
        format!("{:.1} MB", n as f64 / 1e6)
    }
}

/// A memory size in binary units, as the system reports memory: "3.2 GiB".
pub fn binary_bytes(bytes: f64) -> String {
    const UNITS: [&str; 6] = ["bytes", "KiB", "MiB", "GiB", "TiB", "PiB"];
    let mut v = bytes;
    let mut u = 0;
    while v >= 1024.0 && u + 1 < UNITS.len() {
        v /= 1024.0;
        u += 1;
    }
    if u == 0 {
        format!("{v:.0} {}", UNITS[0])
    } else {
        format!("{v:.1} {}", UNITS[u])
    }
}

/// Decimals of an output-file column of values whose largest size is `top`: six
/// significant digits of the top, so every cell of the column has the same precision.
pub fn value_decimals(top: f64) -> usize {
    if top > 0.0 && top.is_finite() {
        (5 - top.log10().floor() as i64).clamp(0, 10) as usize
    } else {
        6
    }
}

/// Decimals of an output-file column of probabilities (and their standard errors).
pub const PROBABILITY_DECIMALS: usize = 6;

/// A value in an output-file column with a fixed number of decimals (see
/// [`value_decimals`]): NaN (no value) is an empty cell, and a value that rounds to
/// zero is written `0` followed by its decimals, never with a minus sign.
pub fn fixed(v: f64, decimals: usize) -> String {
    let mut s = String::new();
    fixed_into(&mut s, v, decimals);
    s
}

/// [`fixed`] into `out` (cleared first), for writing many cells through one buffer.
pub fn fixed_into(out: &mut String, v: f64, decimals: usize) {
    use std::fmt::Write as _;
    out.clear();
    if v.is_nan() {
        return;
    }
    let _ = write!(out, "{v:.decimals$}");
    if let Some(rest) = out.strip_prefix('-') {
        if rest.bytes().all(|b| b == b'0' || b == b'.') {
            out.remove(0);
        }
    }
}

/// `n` followed by the singular or plural words: "1 input has", "3 inputs have".
pub fn count(n: usize, one: &str, many: &str) -> String {
    format!("{n} {}", if n == 1 { one } else { many })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn counts_take_the_right_number() {
        assert_eq!(count(1, "row", "rows"), "1 row");
        assert_eq!(count(0, "row", "rows"), "0 rows");
        assert_eq!(count(2, "row", "rows"), "2 rows");
    }

    #[test]
    fn significant_digits() {
        assert_eq!(sig(0.012345, 3), "0.0123");
        assert_eq!(sig(1234.5, 3), "1234");
        assert_eq!(sig(-2.5, 2), "-2.5");
        assert_eq!(sig(0.0, 3), "0");
        assert_eq!(sig(1.5e-7, 3), "1.50e-7");
        assert_eq!(sig(f64::INFINITY, 3), "inf");
    }

    #[test]
    fn plain_rounds_to_six_decimals() {
        assert_eq!(plain(150000.0), "150000");
        assert_eq!(plain(0.095), "0.095");
        assert_eq!(plain(0.1 + 0.2), "0.3");
    }

    #[test]
    fn percentages() {
        assert_eq!(pct(0.125), "12.5%");
        assert_eq!(pct(0.0), "0.0%");
        assert_eq!(pct_short(0.12), "12%");
        assert_eq!(pct_short(0.1254), "12.5%");
    }

    #[test]
    fn trimmed_and_signed_numbers() {
        assert_eq!(trim_num(1.0, 3), "1");
        assert_eq!(trim_num(2.5, 3), "2.5");
        assert_eq!(trim_num(0.1234, 3), "0.123");
        assert_eq!(trim_num(12.0, 0), "12");
        assert_eq!(signed(0.25, 2), "+0.25");
        assert_eq!(signed(-0.25, 2), "-0.25");
        assert_eq!(signed(0.0, 1), "0.0");
        assert_eq!(signed(-0.00001, 4), "0.0000");
        assert_eq!(signed(0.00001, 4), "0.0000");
    }

    #[test]
    fn output_columns_keep_one_precision() {
        assert_eq!(value_decimals(6300.0), 2);
        assert_eq!(value_decimals(0.9), 6);
        assert_eq!(value_decimals(0.0), 6);
        assert_eq!(fixed(3753.2, 2), "3753.20");
        assert_eq!(fixed(3661.133333, 2), "3661.13");
        assert_eq!(fixed(-0.0000001, 6), "0.000000");
        assert_eq!(fixed(-0.5, 1), "-0.5");
        assert_eq!(fixed(f64::NAN, 3), "");
    }

    #[test]
    fn column_decimals_give_four_significant_digits_of_the_top() {
        assert_eq!(column_decimals(0.0123), 5);
        assert_eq!(column_decimals(1.5), 3);
        assert_eq!(column_decimals(12345.0), 0);
        assert_eq!(column_decimals(0.0), 4);
        assert_eq!(column_decimals(1e-20), 10);
    }

    #[test]
    fn p_values_stop_at_a_thousandth() {
        assert_eq!(p_value(0.0004), "<0.001");
        assert_eq!(p_value(0.001), "0.001");
        assert_eq!(p_value(0.05), "0.050");
    }

    #[test]
    fn byte_sizes() {
        assert_eq!(decimal_bytes(9_999), "9999 bytes");
        assert_eq!(decimal_bytes(12_345), "12.3 kB");
        assert_eq!(decimal_bytes(25_000_000), "25.0 MB");
        assert_eq!(binary_bytes(512.0), "512 bytes");
        assert_eq!(binary_bytes(3.0 * 1024.0 * 1024.0 * 1024.0), "3.0 GiB");
    }
}
