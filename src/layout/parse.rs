//! JSON → [`Layout`] with the path of the offending field in every error.
//!
//! `elements` and `sources` are tagged by `kind`. Serde's internally tagged
//! enums buffer their content and lose the path inside the element, so the
//! two enums deserialize through a `serde_json::Value` and carry the inner
//! path out in the error text, which [`parse_layout`] splices back in.

use super::{Beam, Element, Layout, Mirror, PointLamp, Screen, Source, FORMAT_TAG, FORMAT_VERSION};
use crate::error::{shorten_numbers, InputError, Num};
use serde::de::{DeserializeOwned, Error as _, Unexpected, Visitor};
use serde::{Deserialize, Deserializer};
use serde_json::Value;

/// serde's wording in plain words: "invalid type: string \"x\", expected
/// f64" reads "must be a number, not the text \"x\"".
pub fn plain_words(msg: &str) -> String {
    const WANTS: [(&str, &str); 10] = [
        ("f64", "a number"),
        ("f32", "a number"),
        ("u64", "a whole number of at least 0"),
        ("u32", "a whole number of at least 0"),
        ("usize", "a whole number of at least 0"),
        ("i64", "a whole number"),
        ("a string", "text in quotes"),
        ("a sequence", "a list [ … ]"),
        ("a boolean", "true or false"),
        ("an array of length 2", "a pair [y, z]"),
    ];
    if let Some(rest) = msg.strip_prefix("invalid length ")
        && let Some((n, want)) = rest.split_once(", expected ") {
            let want = WANTS.iter().find(|(k, _)| *k == want).map_or(want, |(_, v)| v);
            return format!("must be {want}, not {n} item{}", if n == "1" { "" } else { "s" });
        }
    let Some(rest) = msg.strip_prefix("invalid type: ").or_else(|| msg.strip_prefix("invalid value: ")) else {
        return msg.to_string();
    };
    let Some((got, want)) = rest.rsplit_once(", expected ") else {
        return msg.to_string();
    };
    let want = WANTS.iter().find(|(k, _)| *k == want).map_or(want, |(_, v)| v);
    let want = if want.starts_with("struct ") || want.starts_with("a map") { "an object { … }" } else { want };
    let got = match got.split_once(' ') {
        Some(("string", text)) => format!("the text {text}"),
        Some(("floating", n)) => format!("the number {}", n.trim_start_matches("point ").trim_matches('`')),
        Some(("integer", n)) => format!("the number {}", n.trim_matches('`')),
        _ => match got {
            "sequence" => "a list".to_string(),
            "map" => "an object".to_string(),
            "null" => "null".to_string(),
            g => g.replace("boolean", "").replace('`', "").trim().to_string(),
        },
    };
    format!("must be {want}, not {got}")
}

/// Marks an error message that carries a nested path: `\u{1}path\u{1}message`.
const NEST: char = '\u{1}';

fn nested<T: DeserializeOwned, E: serde::de::Error>(mut v: Value) -> Result<T, E> {
    if let Value::Object(map) = &mut v {
        map.remove("kind");
    }
    serde_path_to_error::deserialize::<_, T>(v).map_err(|e| {
        let path = e.path().to_string();
        let inner = e.into_inner().to_string();
        let (path, msg) = split_nested(&path, &inner);
        E::custom(format!("{NEST}{path}{NEST}{msg}"))
    })
}

/// Joins an outer path with a possibly nested message.
fn split_nested(outer: &str, msg: &str) -> (String, String) {
    let outer = if outer == "." { "" } else { outer };
    if let Some(rest) = msg.strip_prefix(NEST)
        && let Some((inner, m)) = rest.split_once(NEST) {
            let path = match (outer.is_empty(), inner.is_empty()) {
                (true, _) => inner.to_string(),
                (false, true) => outer.to_string(),
                (false, false) => format!("{outer}.{inner}"),
            };
            return (path, m.to_string());
        }
    (outer.to_string(), msg.to_string())
}

fn kind_of<E: serde::de::Error>(v: &Value, allowed: &str) -> Result<String, E> {
    match v {
        Value::Object(map) => match map.get("kind") {
            Some(Value::String(k)) => Ok(k.clone()),
            Some(_) => Err(E::custom(format!("{NEST}kind{NEST}must be a string: {allowed}"))),
            None => Err(E::custom(format!("missing field `kind` ({allowed})"))),
        },
        _ => Err(E::custom("must be an object")),
    }
}

impl<'de> Deserialize<'de> for Element {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let v = Value::deserialize(d)?;
        match kind_of::<D::Error>(&v, "\"mirror\" or \"screen\"")?.as_str() {
            "mirror" => nested::<Mirror, _>(v).map(Element::Mirror),
            "screen" => nested::<Screen, _>(v).map(Element::Screen),
            other => Err(D::Error::custom(format!(
                "{NEST}kind{NEST}unknown element kind \"{other}\"; allowed: \"mirror\", \"screen\""
            ))),
        }
    }
}

impl<'de> Deserialize<'de> for Source {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let v = Value::deserialize(d)?;
        match kind_of::<D::Error>(&v, "\"beam\" or \"point\"")?.as_str() {
            "beam" => nested::<Beam, _>(v).map(Source::Beam),
            "point" => nested::<PointLamp, _>(v).map(Source::Point),
            other => Err(D::Error::custom(format!(
                "{NEST}kind{NEST}unknown source kind \"{other}\"; allowed: \"beam\", \"point\""
            ))),
        }
    }
}

/// A count read as a whole number: an integer (`2000`) or a number with no
/// fraction (`2000.0`, `2e3`) — JSON does not tell them apart, and other
/// writers emit either. Fractions, negatives and values past `max` are
/// refused.
struct Whole {
    max: u64,
}

impl Visitor<'_> for Whole {
    type Value = u64;

    fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
        if self.max == u64::MAX { write!(f, "a whole number, 0 or more") } else { write!(f, "a whole number from 0 to {}", self.max) }
    }
    fn visit_u64<E: serde::de::Error>(self, v: u64) -> Result<u64, E> {
        if v <= self.max { Ok(v) } else { Err(E::invalid_value(Unexpected::Unsigned(v), &self)) }
    }
    fn visit_i64<E: serde::de::Error>(self, v: i64) -> Result<u64, E> {
        match u64::try_from(v) {
            Ok(u) => self.visit_u64(u),
            Err(_) => Err(E::invalid_value(Unexpected::Signed(v), &self)),
        }
    }
    fn visit_f64<E: serde::de::Error>(self, v: f64) -> Result<u64, E> {
        // 2^64 is the first float past u64::MAX.
        if v >= 0.0 && v.fract() == 0.0 && v < 18_446_744_073_709_551_616.0 && (v as u64) <= self.max {
            Ok(v as u64)
        } else {
            Err(E::invalid_value(Unexpected::Other(&Num(v).to_string()), &self))
        }
    }
}

/// `deserialize_with` for `u64` counts (see [`Whole`]).
pub(super) fn whole_u64<'de, D: Deserializer<'de>>(d: D) -> Result<u64, D::Error> {
    d.deserialize_any(Whole { max: u64::MAX })
}

/// `deserialize_with` for `u32` counts (see [`Whole`]).
pub(super) fn whole_u32<'de, D: Deserializer<'de>>(d: D) -> Result<u32, D::Error> {
    let v = d.deserialize_any(Whole { max: u32::MAX.into() })?;
    Ok(u32::try_from(v).expect("Whole keeps to its max"))
}

/// Parses and validates a layout document.
///
/// Errors name the field (`elements[0].profile.conic`) and say what is
/// allowed. Never panics, whatever the input.
pub fn parse_layout(text: &str) -> Result<Layout, InputError> {
    // Check the header first so an unknown version is reported as such and
    // not as a stray field.
    let value: Value = serde_json::from_str(text)
        .map_err(|e| InputError::new("", format!("not valid JSON: {e}")))?;
    let Value::Object(map) = &value else {
        return Err(InputError::new("", "a layout must be a JSON object"));
    };
    match map.get("format") {
        Some(Value::String(f)) if f == FORMAT_TAG => {}
        Some(_) => {
            return Err(InputError::new("format", format!("must be \"{FORMAT_TAG}\"")));
        }
        None => return Err(InputError::new("format", format!("missing; must be \"{FORMAT_TAG}\""))),
    }
    match map.get("version") {
        // 1 and 1.0 are the same number.
        Some(v) if v.as_f64() == Some(f64::from(FORMAT_VERSION)) => {}
        Some(v) => {
            return Err(InputError::new(
                "version",
                format!("unsupported version {v}; this build reads version {FORMAT_VERSION}"),
            ));
        }
        None => return Err(InputError::new("version", "missing; must be 1")),
    }
    let layout: Layout = serde_path_to_error::deserialize(value).map_err(|e| {
        let path = e.path().to_string();
        let msg = e.into_inner().to_string();
        let (path, msg) = split_nested(&path, &msg);
        InputError::new(path, shorten_numbers(&plain_words(&msg)))
    })?;
    super::validate(&layout)?;
    Ok(layout)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nested_paths_are_joined() {
        assert_eq!(split_nested("elements[0]", "\u{1}profile.conic\u{1}bad"), ("elements[0].profile.conic".into(), "bad".into()));
        assert_eq!(split_nested(".", "plain"), ("".into(), "plain".into()));
    }
}
