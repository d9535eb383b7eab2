//! What one cell means: missing-value tokens, finite numbers, and cells quoted in
//! messages.
use copse_forest::{DecimalMark, STANDARD_MISSING_TOKENS};
use serde::{Deserialize, Serialize};

/// Cell texts that mean "missing" (besides an empty cell, which always does).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Missing {
    tokens: Vec<String>,
}

impl Missing {
    /// The tokens used when none are given ([`STANDARD_MISSING_TOKENS`]).
    pub fn standard() -> Self {
        Missing {
            tokens: STANDARD_MISSING_TOKENS
                .iter()
                .map(|t| t.to_string())
                .collect(),
        }
    }

    /// Missing tokens from a comma-separated list; surrounding spaces are dropped.
    ///
    /// # Example
    /// ```
    /// let m = copse_data::Missing::from_list("NA, -999");
    /// assert!(m.is_missing("-999") && m.is_missing("") && !m.is_missing("0"));
    /// ```
    pub fn from_list(list: &str) -> Self {
        Missing::from_tokens(list.split(','))
    }

    /// Missing tokens from a list (a model card's, say); empty tokens are dropped.
    pub fn from_tokens<S: AsRef<str>>(tokens: impl IntoIterator<Item = S>) -> Self {
        Missing {
            tokens: tokens
                .into_iter()
                .map(|t| t.as_ref().trim().to_string())
                .filter(|t| !t.is_empty())
                .collect(),
        }
    }

    /// The tokens a model was trained with (from its card).
    pub fn of_model(model: &copse_forest::Forest) -> Self {
        Missing::from_tokens(&model.card().missing_tokens)
    }

    /// The tokens (an empty cell is always missing too).
    pub fn tokens(&self) -> &[String] {
        &self.tokens
    }

    /// True when an already trimmed cell is missing.
    #[inline]
    pub fn is_missing(&self, cell: &str) -> bool {
        cell.is_empty() || self.tokens.iter().any(|t| t == cell)
    }
}

impl Default for Missing {
    fn default() -> Self {
        Missing::standard()
    }
}

/// A finite number, or `None` (text, `inf`, `nan`, or overflow such as `1e400`).
#[inline]
pub fn parse_number(cell: &str) -> Option<f64> {
    cell.parse::<f64>().ok().filter(|v| v.is_finite())
}

/// A finite number written with the decimal mark `mark`, or `None`. With a comma mark,
/// `5,1` is 5.1, and a cell holding a point is not a number (in such files a point
/// groups thousands, which copse does not read).
///
/// # Example
/// ```
/// use copse_data::{read_number, DecimalMark};
/// assert_eq!(read_number("5,1", DecimalMark::Comma), Some(5.1));
/// assert_eq!(read_number("-2,5e3", DecimalMark::Comma), Some(-2500.0));
/// assert_eq!(read_number("5.1", DecimalMark::Comma), None);
/// assert_eq!(read_number("5,1", DecimalMark::Point), None);
/// ```
#[inline]
pub fn read_number(cell: &str, mark: DecimalMark) -> Option<f64> {
    match mark {
        DecimalMark::Point => parse_number(cell),
        DecimalMark::Comma if cell.contains('.') => None,
        DecimalMark::Comma => {
            // A copy on the stack with the comma as a point; longer cells are rare.
            let mut buf = [0u8; 64];
            if cell.len() > buf.len() {
                return parse_number(&cell.replace(',', "."));
            }
            let b = &mut buf[..cell.len()];
            b.copy_from_slice(cell.as_bytes());
            b.iter_mut().filter(|c| **c == b',').for_each(|c| *c = b'.');
            std::str::from_utf8(b).ok().and_then(parse_number)
        }
    }
}

/// True when a trimmed cell reads as a number written with a decimal comma and is not
/// a number as written: digits, one comma, digits, with an optional sign (`5,1`,
/// `-0,25`).
pub fn looks_decimal_comma(cell: &str) -> bool {
    let body = cell.strip_prefix(['-', '+']).unwrap_or(cell);
    match body.split_once(',') {
        Some((whole, part)) => {
            let digits = |t: &str| !t.is_empty() && t.bytes().all(|b| b.is_ascii_digit());
            digits(whole) && digits(part)
        }
        None => false,
    }
}

/// A cell as quoted in a message: control characters escaped (`\n`, `\r`, `\t`,
/// `\0`, others as `\u{..}`), so every message stays on one line and nothing reaches
/// the terminal raw, and shortened to 40 characters.
///
/// # Example
/// ```
/// assert_eq!(copse_data::clip("two\nlines\0"), "two\\nlines\\0");
/// ```
pub fn clip(t: &str) -> String {
    let mut out = String::new();
    for (shown, c) in t.chars().enumerate() {
        if shown == 37 && t.chars().count() > 40 {
            out.push_str("...");
            break;
        }
        push_escaped(&mut out, c);
    }
    out
}

/// `text` with control characters escaped (`\n`, `\r`, `\t`, `\0`, others as
/// `\u{..}`), so it prints as one line and sends nothing raw to a terminal.
///
/// # Example
/// ```
/// assert_eq!(copse_data::one_line("a\nb\u{1b}"), "a\\nb\\u{1b}");
/// ```
pub fn one_line(text: &str) -> std::borrow::Cow<'_, str> {
    if !text.chars().any(char::is_control) {
        return text.into();
    }
    let mut out = String::with_capacity(text.len() + 8);
    text.chars().for_each(|c| push_escaped(&mut out, c));
    out.into()
}

/// Appends `c`, escaped when it is a control character.
fn push_escaped(out: &mut String, c: char) {
    match c {
        '\n' => out.push_str("\\n"),
        '\r' => out.push_str("\\r"),
        '\t' => out.push_str("\\t"),
        '\0' => out.push_str("\\0"),
        c if c.is_control() => out.push_str(&format!("\\u{{{:x}}}", u32::from(c))),
        c => out.push(c),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn overflow_and_infinity_are_not_numbers() {
        assert_eq!(parse_number("1e400"), None);
        assert_eq!(parse_number("inf"), None);
        assert_eq!(parse_number("-inf"), None);
        assert_eq!(parse_number("nan"), None);
        assert_eq!(parse_number("-2.5e3"), Some(-2500.0));
    }

    #[test]
    fn decimal_commas_are_read_only_when_asked_for_and_recognised() {
        assert_eq!(read_number("0,25", DecimalMark::Comma), Some(0.25));
        assert_eq!(read_number("7", DecimalMark::Comma), Some(7.0));
        assert_eq!(read_number("1,2,3", DecimalMark::Comma), None);
        assert_eq!(read_number("1.5", DecimalMark::Point), Some(1.5));
        let long = format!("0,{}", "1".repeat(80));
        assert!(read_number(&long, DecimalMark::Comma).is_some_and(|v| (v - 0.111).abs() < 1e-3));
        for yes in ["5,1", "-0,25", "+12,0"] {
            assert!(looks_decimal_comma(yes), "{yes}");
        }
        for no in ["5", "5.1", "5,", ",5", "a,b", "1,2,3", "5,1e3", ""] {
            assert!(!looks_decimal_comma(no), "{no}");
        }
    }

    #[test]
    fn missing_tokens_match_whole_trimmed_cells() {
        let m = Missing::from_list(" NA , -999 ,");
        assert!(m.is_missing(""));
        assert!(m.is_missing("-999"));
        assert!(!m.is_missing("NaN"));
        assert!(!m.is_missing("NAN"));
    }
}
