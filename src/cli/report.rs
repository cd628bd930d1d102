//! `gemmule report`: writes report.html, summary.json and candidates.csv for
//! a run directory or a comparison directory.

use crate::report::write_report;
use anyhow::Result;
use clap::Args;
use std::path::PathBuf;

/// Options of `gemmule report`.
#[derive(Debug, Args)]
pub struct ReportArgs {
    /// A run directory (from `gemmule search`) or a comparison directory (from `gemmule compare`).
    #[arg(value_name = "DIR")]
    pub dir: PathBuf,
    /// Folder to write the report files in (default: DIR itself).
    #[arg(long, value_name = "FOLDER")]
    pub out: Option<PathBuf>,
}

/// Runs `gemmule report`.
pub fn report_command(a: ReportArgs) -> Result<i32> {
    let files = write_report(&a.dir, a.out.as_deref())?;
    println!("report written: {}", files.html.display());
    println!("facts: {}", files.summary.display());
    println!("every evaluation: {}", files.candidates.display());
    Ok(0)
}
