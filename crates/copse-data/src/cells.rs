//! What one cell means: missing-value tokens, finite numbers, and cells quoted in
//! messages.
use copse_forest::STANDARD_MISSING_TOKENS;
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
    fn missing_tokens_match_whole_trimmed_cells() {
        let m = Missing::from_list(" NA , -999 ,");
        assert!(m.is_missing(""));
        assert!(m.is_missing("-999"));
        assert!(!m.is_missing("NaN"));
        assert!(!m.is_missing("NAN"));
    }
}
