//! `catoptric serve` (to be built in the browser issue).
use crate::Failure;
use clap::Args;

#[derive(Args)]
pub struct ServeArgs {}

pub fn run(_a: ServeArgs) -> Result<String, Failure> {
    Err(Failure { code: 1, message: "serve: not built yet".into() })
}
