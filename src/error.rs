//! Errors that reach a user: bad input, always naming the offending field.

use std::fmt;

/// "Your input is bad": a field path such as `elements[0].profile.conic` and
/// a sentence saying what is allowed. Bugs are never reported through this
/// type; they are bugs.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct InputError {
    /// Dotted path of the offending field, empty for the whole document.
    pub field: String,
    /// What is wrong and what is allowed.
    pub message: String,
}

impl InputError {
    pub fn new(field: impl Into<String>, message: impl Into<String>) -> Self {
        Self { field: field.into(), message: message.into() }
    }
}

impl fmt::Display for InputError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.field.is_empty() {
            write!(f, "{}", self.message)
        } else {
            write!(f, "{}: {}", self.field, self.message)
        }
    }
}

impl std::error::Error for InputError {}

/// Text from a file or a command line made safe to print on a terminal:
/// control characters (C0, DEL, C1) and the bidirectional overrides are
/// shown as escapes (`\x1b`, `\u{202e}`), so a name or an id cannot move
/// the cursor, recolour the screen or reorder what follows it.
pub fn printable(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for ch in s.chars() {
        let bidi = matches!(ch, '\u{200e}' | '\u{200f}' | '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}');
        if ch.is_control() && (ch as u32) < 0x100 {
            out.push_str(&format!("\\x{:02x}", ch as u32));
        } else if ch.is_control() || bidi {
            out.push_str(&format!("\\u{{{:x}}}", ch as u32));
        } else {
            out.push(ch);
        }
    }
    out
}

/// Longest run of digits a message keeps as it is; longer numbers (serde
/// echoes `1e308` as 309 digits) are rewritten as `1e308`.
const MAX_DIGITS: usize = 20;

/// Rewrites every decimal number of more than [`MAX_DIGITS`] digits in a
/// message in the short form of [`Num`].
pub fn shorten_numbers(s: &str) -> String {
    let b = s.as_bytes();
    let mut out = String::with_capacity(s.len());
    let mut i = 0;
    while i < b.len() {
        let starts = b[i].is_ascii_digit() && (i == 0 || !(b[i - 1].is_ascii_alphanumeric() || b[i - 1] == b'.'));
        if !starts {
            let ch = s[i..].chars().next().expect("i is on a char boundary");
            out.push(ch);
            i += ch.len_utf8();
            continue;
        }
        let mut j = i;
        while j < b.len() && (b[j].is_ascii_digit() || b[j] == b'.') {
            j += 1;
        }
        let run = &s[i..j];
        let digits = run.bytes().filter(u8::is_ascii_digit).count();
        match run.parse::<f64>() {
            Ok(v) if digits > MAX_DIGITS && !(j < b.len() && b[j].is_ascii_alphabetic()) => {
                out.push_str(&Num(v).to_string());
            }
            _ => out.push_str(run),
        }
        i = j;
    }
    out
}

/// A number for people: `{}` gives the shortest form that reads back
/// exactly, in exponent form when very large or small (`1e308`, `5e-324`,
/// never hundreds of digits); `{:.4}` gives fixed decimals. Width,
/// alignment and `+` work as for `f64`. Negative zero, and negative values
/// that round to zero, print without a sign (`0.0000`, never `-0.0000`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Num(pub f64);

impl fmt::Display for Num {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let v = self.0;
        let a = v.abs();
        let body = match f.precision() {
            _ if !v.is_finite() => format!("{a}"),
            Some(p) => format!("{a:.p$}"),
            None if a == 0.0 || (1e-4..1e15).contains(&a) => format!("{a}"),
            None => format!("{a:e}"),
        };
        let zero = body.bytes().all(|c| c == b'0' || c == b'.');
        let negative = v.is_sign_negative() && !zero && !v.is_nan();
        f.pad_integral(!negative, "", &body)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Common practice for command-line tools: escape what a terminal would
    // act on (ECMA-48 control functions start with C0/C1 characters).
    #[test]
    fn control_characters_are_escaped() {
        assert_eq!(printable("a\u{1b}[31mb"), "a\\x1b[31mb");
        assert_eq!(printable("tab\tnl\n\u{7f}\u{9b}"), "tab\\x09nl\\x0a\\x7f\\x9b");
        assert_eq!(printable("x\u{202e}y"), "x\\u{202e}y");
        assert_eq!(printable("µm — ok ✓"), "µm — ok ✓");
    }

    #[test]
    fn numbers_are_short_and_never_negative_zero() {
        assert_eq!(Num(1e308).to_string(), "1e308");
        assert_eq!(Num(-1e308).to_string(), "-1e308");
        assert_eq!(Num(5e-324).to_string(), "5e-324");
        assert_eq!(Num(1234.5).to_string(), "1234.5");
        assert_eq!(Num(0.1 + 0.2).to_string(), "0.30000000000000004");
        assert_eq!(Num(-0.0).to_string(), "0");
        assert_eq!(format!("{:.4}", Num(-0.0)), "0.0000");
        assert_eq!(format!("{:.4}", Num(-1e-9)), "0.0000");
        assert_eq!(format!("{:>8.2}", Num(-1.5)), "   -1.50");
        assert_eq!(format!("{:<8.2}|", Num(2.0)), "2.00    |");
        assert_eq!(format!("{:+.3}", Num(-0.0001)), "+0.000");
        assert_eq!(format!("{:+.3}", Num(0.25)), "+0.250");
        assert_eq!(format!("{:.2}", Num(f64::NEG_INFINITY)), "-inf");
        assert_eq!(format!("{}", Num(f64::NAN)), "NaN");
    }

    #[test]
    fn long_numbers_in_messages_are_shortened() {
        let long = format!("floating point `{}`, expected u64", 1e308);
        assert_eq!(shorten_numbers(&long), "floating point `1e308`, expected u64");
        let tiny = format!("got {}", 5e-324);
        assert_eq!(shorten_numbers(&tiny), "got 5e-324");
        let kept = "elements[12].size: must be at most 1e7 (got 12345678.5) at line 3 column 40";
        assert_eq!(shorten_numbers(kept), kept);
        assert_eq!(shorten_numbers("id a123456789012345678901234 µ"), "id a123456789012345678901234 µ");
    }
}
