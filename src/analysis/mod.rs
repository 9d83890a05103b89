//! Analyses of a finished trace: spot statistics and the report.

mod report;
mod spot;

pub use report::{trace_report, ScreenReport, SourceReport, TraceReport};
pub use spot::{spot_stats, SpotStats};
