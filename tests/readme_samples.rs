//! README.md's sample outputs are the program's own: each block marked
//! `<!-- sample: catoptric ARGS -->` must equal what `catoptric ARGS`
//! prints (run from the repository's top folder), byte for byte, and the
//! command shown just above it in a `sh` block must be the same command.
//!
//! After an intended change to the output: `CATOPTRIC_BLESS=1 cargo test
//! --test readme_samples` rewrites the blocks; review the diff.
//!
//! Beside the exact comparison, the numbers the README shows are checked
//! against outside formulas, so a regenerated sample that drifts from the
//! physics is refused too.

use std::path::PathBuf;
use std::process::Command;

const EXE: &str = env!("CARGO_BIN_EXE_catoptric");
const MARK: &str = "<!-- sample: catoptric ";
const FENCE: &str = "```";

fn repo() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// One marked sample: its arguments and the line range of its block body.
struct Sample {
    args: Vec<String>,
    /// Index of the first body line and one past the last.
    body: (usize, usize),
}

/// Finds every marked sample; panics with the line number on a malformed one.
fn samples(lines: &[&str]) -> Vec<Sample> {
    let mut out = Vec::new();
    for (i, line) in lines.iter().enumerate() {
        let Some(rest) = line.strip_prefix(MARK) else { continue };
        let args = rest.strip_suffix("-->").unwrap_or_else(|| panic!("README.md:{}: marker not closed", i + 1));
        let open = i + 1;
        assert!(
            lines.get(open).is_some_and(|l| l.starts_with(FENCE)),
            "README.md:{}: a ``` block must follow the sample marker",
            i + 1
        );
        let close = (open + 1..lines.len())
            .find(|&j| lines[j] == FENCE)
            .unwrap_or_else(|| panic!("README.md:{}: sample block not closed", open + 1));
        out.push(Sample { args: args.split_whitespace().map(String::from).collect(), body: (open + 1, close) });
        // The command the reader sees: the last line of the sh block that
        // ends just above the marker.
        let shown = (0..i).rev().find(|&j| lines[j].starts_with("cargo run"));
        let want = format!("cargo run --release -- {}", args.trim());
        assert_eq!(shown.map(|j| lines[j]), Some(want.as_str()), "README.md:{}: the command above the sample", i + 1);
    }
    out
}

fn run(args: &[String]) -> String {
    let out = Command::new(EXE).args(args).current_dir(repo()).output().expect("run catoptric");
    assert!(out.status.success(), "catoptric {}: {}", args.join(" "), String::from_utf8_lossy(&out.stderr));
    String::from_utf8(out.stdout).expect("UTF-8 output")
}

#[test]
fn readme_samples_are_the_programs_output() {
    let path = repo().join("README.md");
    let text = std::fs::read_to_string(&path).expect("README.md");
    let lines: Vec<&str> = text.lines().collect();
    let found = samples(&lines);
    assert!(found.len() >= 2, "README.md has its trace and zones samples marked ({} found)", found.len());
    let bless = std::env::var_os("CATOPTRIC_BLESS").is_some();
    let mut rewritten: Vec<String> = lines.iter().map(|l| l.to_string()).collect();
    let mut differ = Vec::new();
    // From the last sample back, so earlier line numbers stay valid.
    for s in found.iter().rev() {
        let got = run(&s.args);
        let shown = lines[s.body.0..s.body.1].join("\n") + "\n";
        if got != shown {
            differ.push(format!("catoptric {}:\n--- README\n{shown}--- program\n{got}", s.args.join(" ")));
            rewritten.splice(s.body.0..s.body.1, got.lines().map(String::from));
        }
    }
    if bless && !differ.is_empty() {
        std::fs::write(&path, rewritten.join("\n") + "\n").expect("write README.md");
        return;
    }
    assert!(differ.is_empty(), "README.md samples differ from the program (CATOPTRIC_BLESS=1 rewrites them):\n{}", differ.join("\n"));
}

/// The number after `key` in `text` (first occurrence).
fn number_after(text: &str, key: &str) -> f64 {
    let at = text.find(key).unwrap_or_else(|| panic!("{key:?} in the sample")) + key.len();
    let s: String = text[at..].trim_start().chars().take_while(|c| c.is_ascii_digit() || *c == '.' || *c == '-' || *c == '+').collect();
    s.parse().unwrap_or_else(|_| panic!("a number after {key:?}: {s:?}"))
}

fn sample_text(args: &str) -> String {
    let text = std::fs::read_to_string(repo().join("README.md")).expect("README.md");
    let lines: Vec<&str> = text.lines().collect();
    let s = samples(&lines).into_iter().find(|s| s.args.join(" ") == args).unwrap_or_else(|| panic!("sample {args}"));
    lines[s.body.0..s.body.1].join("\n")
}

#[test]
fn the_trace_sample_agrees_with_the_airy_formula() {
    // Airy radius = 1.22 λ N (Born & Wolf, Principles of Optics, 7th ed.,
    // §8.5.2; first zero 1.2197 λN), λ = 550 nm from the preset; N and the
    // radius are printed to 4 significant figures, so they agree to ~2e-4.
    let t = sample_text("trace www/presets/sphere-f5.json");
    let n = number_after(&t, "working f/");
    let airy = number_after(&t, "Airy radius");
    let want = 1.2197 * 0.550 * n;
    assert!((airy - want).abs() / want < 5e-4, "Airy {airy} µm vs 1.22 λN = {want} µm");
    // A 200 mm mirror of radius 2000: f/5 at the paraxial focus (f = R/2);
    // the marginal cone is only slightly faster (value from memory: working
    // N = 1/(2 sin θ) ≈ 5.0 for so slow a mirror).
    assert!((n - 5.0).abs() < 0.02, "working f/{n}");
}

#[test]
fn the_zones_sample_agrees_with_the_zonal_mask_formulas() {
    // Equal-area zone edges a√(X/N) (Berry, Build Your Own Telescope, 2nd
    // ed. 1994) and the moving-source knife-edge reading of a paraboloid,
    // r²/(2R) for the zone's representative radius r (Texereau, How to Make
    // a Telescope, 2nd Eng. ed. 1984), with R = 2000, a = 100, N = 5.
    let t = sample_text("zones --radius 2000 --conic -1 --diameter 200 --zones 5");
    let rows: Vec<Vec<f64>> = t
        .lines()
        .filter(|l| l.split_whitespace().next().is_some_and(|w| w.parse::<u32>().is_ok()))
        .map(|l| l.split_whitespace().map(|w| w.parse().unwrap()).collect())
        .collect();
    assert_eq!(rows.len(), 5, "five zones");
    for (x, row) in rows.iter().enumerate() {
        let outer = 100.0 * ((x + 1) as f64 / 5.0).sqrt();
        assert!((row[2] - outer).abs() < 6e-4, "zone {}: outer edge {} vs {outer}", x + 1, row[2]);
        let r = row[3];
        assert!((row[4] - r * r / 4000.0).abs() < 2e-4, "zone {}: reading {} vs r²/2R", x + 1, row[4]);
    }
}
