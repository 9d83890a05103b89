//! `catoptric bench`: rays per second on the standard scenes (placeholder
//! wiring; scenes are filled in below).
use crate::Failure;
pub fn run(_rays: u64, _json: bool) -> Result<String, Failure> {
    Err(Failure { code: 1, message: "bench: not yet built".into() })
}
