//! Helpers every integration-test family shares: compile-and-trace, the
//! relative error, and a small deterministic random generator.
#![allow(dead_code)]

use catoptric::{parse_layout, trace, Scene, TraceOptions, TraceResult};

/// Parses, validates and compiles a layout text.
pub fn scene(text: &str) -> Scene {
    let l = parse_layout(text).unwrap_or_else(|e| panic!("test layout rejected: {e}"));
    Scene::compile(&l)
}

/// Compiles and traces with each source's own ray count.
pub fn run(text: &str) -> (Scene, TraceResult) {
    let s = scene(text);
    let r = trace(&s, TraceOptions::default());
    (s, r)
}

/// Relative error |a − b| / |b|.
pub fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(1e-300)
}

/// SplitMix64 (Steele, Lea & Flood 2014): a small deterministic generator
/// for property tests and fuzzing, so every run repeats exactly.
pub struct Rng(pub u64);
impl Rng {
    /// The next raw 64-bit value.
    pub fn u(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^ (z >> 31)
    }
    /// Uniform in [0, 1).
    pub fn next(&mut self) -> f64 {
        (self.u() >> 11) as f64 / (1u64 << 53) as f64
    }
    /// Uniform in [a, b).
    pub fn range(&mut self, a: f64, b: f64) -> f64 {
        a + (b - a) * self.next()
    }
    /// Uniform integer in [0, n).
    pub fn int(&mut self, n: u64) -> u64 {
        ((self.next() * n as f64) as u64).min(n - 1)
    }
    /// One of `xs`.
    pub fn pick<T: Clone>(&mut self, xs: &[T]) -> T {
        xs[(self.u() % xs.len() as u64) as usize].clone()
    }
}

/// How many times the usual number of cases the property tests run: 1 in
/// the test command; `CATOPTRIC_FUZZ_SCALE=100` (say) for the longer run
/// before a release (DEVELOPERS.md). Same seeds, so a run repeats exactly.
pub fn fuzz_scale() -> usize {
    std::env::var("CATOPTRIC_FUZZ_SCALE").ok().and_then(|v| v.parse().ok()).filter(|&n: &usize| n >= 1).unwrap_or(1)
}
