//! `design`, `compare` and `zones` commands (to be built in the designers issue).
use crate::Failure;
use clap::{Args, Subcommand};

#[derive(Subcommand)]
pub enum DesignCmd {}

#[derive(Args)]
pub struct CompareArgs {}

#[derive(Args)]
pub struct ZonesArgs {}

fn unbuilt() -> Failure {
    Failure { code: 1, message: "not built yet".into() }
}
pub fn design(_c: DesignCmd) -> Result<String, Failure> {
    Err(unbuilt())
}
pub fn compare(_a: CompareArgs) -> Result<String, Failure> {
    Err(unbuilt())
}
pub fn zones(_a: ZonesArgs) -> Result<String, Failure> {
    Err(unbuilt())
}
