//! Command-line mistakes as one line, `<flag>: <what is wrong>`, like every
//! other bad input (docs/FORMATS.md §3): clap's own report spans several lines.

use clap::error::{ContextKind, ContextValue, ErrorKind};
use std::num::{IntErrorKind, ParseFloatError, ParseIntError};

/// Longest value echoed back, characters.
const MAX_ECHO: usize = 40;

/// `--rays <RAYS>` → `--rays`, `<LAYOUT>` → `LAYOUT`.
fn flag_name(arg: &str) -> String {
    let name = arg.split([' ', '=']).next().unwrap_or(arg);
    name.trim_start_matches('<').trim_end_matches('>').trim_end_matches("...").to_string()
}

fn context(e: &clap::Error, kind: ContextKind) -> Vec<String> {
    match e.get(kind) {
        Some(ContextValue::String(s)) => vec![s.clone()],
        Some(ContextValue::Strings(v)) => v.clone(),
        Some(other) => vec![other.to_string()],
        None => Vec::new(),
    }
}

fn echo(value: &str) -> String {
    if value.chars().count() > MAX_ECHO {
        format!("{}…", value.chars().take(MAX_ECHO).collect::<String>())
    } else {
        value.to_string()
    }
}

/// What is wrong with a value the parser refused.
fn bad_value(e: &clap::Error, value: &str) -> String {
    let source = std::error::Error::source(e);
    if let Some(p) = source.and_then(|s| s.downcast_ref::<ParseIntError>()) {
        return match p.kind() {
            IntErrorKind::Empty => "must be a whole number (got an empty value)".into(),
            IntErrorKind::PosOverflow => format!("is too large (got {})", echo(value)),
            IntErrorKind::NegOverflow => format!("is too far below zero (got {})", echo(value)),
            _ if value.parse::<f64>().is_ok_and(|v| v < 0.0) => format!("must not be negative (got {})", echo(value)),
            _ => format!("must be a whole number in digits (got {})", echo(value)),
        };
    }
    if source.and_then(|s| s.downcast_ref::<ParseFloatError>()).is_some() {
        return format!("must be a number (got {})", echo(value));
    }
    let valid = context(e, ContextKind::ValidValue);
    if !valid.is_empty() {
        return format!("must be one of {} (got {})", valid.join(", "), echo(value));
    }
    match source.map(|s| s.to_string()) {
        Some(s) if s.contains(value) => s,
        Some(s) => format!("{s} (got {})", echo(value)),
        None => format!("invalid value {}", echo(value)),
    }
}

/// The subcommands typed so far (`design`, empty at the top) and the
/// subcommands the last one offers.
fn typed_path(cmd: &clap::Command) -> (String, Vec<String>) {
    let mut here = cmd;
    let mut path = Vec::new();
    for a in std::env::args().skip(1) {
        match here.find_subcommand(&a) {
            Some(sub) => {
                path.push(a);
                here = sub;
            }
            None => break,
        }
    }
    let subs = here.get_subcommands().map(|s| s.get_name().to_string()).filter(|n| n != "help").collect();
    (path.join(" "), subs)
}

/// One line for a usage error, without the `catoptric: ` prefix.
pub fn line(e: &clap::Error, cmd: &clap::Command) -> String {
    let args: Vec<String> = context(e, ContextKind::InvalidArg).iter().map(|a| flag_name(a)).collect();
    let arg = if args.is_empty() { "command line".to_string() } else { args.join(", ") };
    let value = context(e, ContextKind::InvalidValue).into_iter().next().unwrap_or_default();
    match e.kind() {
        ErrorKind::InvalidValue | ErrorKind::ValueValidation => format!("{arg}: {}", bad_value(e, &value)),
        ErrorKind::UnknownArgument => {
            let hint = context(e, ContextKind::SuggestedArg);
            match hint.first() {
                Some(h) => format!("{arg}: unknown flag; did you mean {h}?"),
                None => format!("{arg}: unknown flag or extra value; see --help"),
            }
        }
        ErrorKind::InvalidSubcommand => {
            let name = context(e, ContextKind::InvalidSubcommand).join(" ");
            let (path, subs) = typed_path(cmd);
            let of = if path.is_empty() { String::new() } else { format!(" of {path}") };
            format!("{}: unknown command{of}; one of {}", echo(&name), subs.join(", "))
        }
        ErrorKind::MissingRequiredArgument => format!("{arg}: missing (required); see --help"),
        ErrorKind::MissingSubcommand | ErrorKind::DisplayHelpOnMissingArgumentOrSubcommand => {
            let (path, subs) = typed_path(cmd);
            let help = format!("{} {path} --help", cmd.get_name());
            let (name, what) = if path.is_empty() { ("COMMAND".to_string(), "missing; give") } else { (path, "needs") };
            format!("{name}: {what} one of {} (see {})", subs.join(", "), help.replace("  ", " "))
        }
        _ => {
            // Clap's first line without its "error: " label.
            let text = e.render().to_string();
            let first = text.lines().next().unwrap_or("").trim_start_matches("error: ");
            format!("{arg}: {first}")
        }
    }
}
