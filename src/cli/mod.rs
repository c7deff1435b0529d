//! Command-line front end. Parsing lives in `args`; this file dispatches and prints.
//!
//! Exit codes: 0 success; 2 usage or option error; 3 bad input (files, records, CRS);
//! 4 output error (folder exists, not writable); 101 would be a panic (a bug).

mod args;
pub(crate) mod progress;

use args::{Cli, Command};
use clap::Parser;
use std::process::ExitCode;

pub(crate) fn main() -> ExitCode {
    let cli = Cli::parse();
    // areal reads each block once, in strips; a large block cache only costs memory.
    if std::env::var_os("GDAL_CACHEMAX").is_none() {
        let _ = gdal::config::set_config_option("GDAL_CACHEMAX", "32");
    }
    match run(cli) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("areal: error: {e}");
            ExitCode::from(e.exit_code())
        }
    }
}

fn run(cli: Cli) -> areal::Result<()> {
    match cli.command {
        Command::Range(a) => {
            let opts = a.to_options()?;
            let result = areal::run_range(&a.suitability, &a.records, &opts, &a.out, a.overwrite)?;
            if a.json {
                println!(
                    "{}",
                    serde_json::to_string_pretty(&result.summary).expect("summary serialises")
                );
            } else {
                print!("{}", result.summary.to_text());
                println!("  outputs         {}", a.out.display());
            }
            Ok(())
        }
        Command::Polygons(a) => {
            let r = areal::vectors::run_polygons(
                &a.classes,
                &a.access(),
                a.connectivity(),
                &a.vector_options(),
                &a.out,
                a.overwrite,
            )?;
            println!(
                "areal polygons: {} patch(es), {} unreachable, {} record(s)",
                r.patches, r.unreachable, r.records
            );
            if let Some(c) = &r.equal_area_crs {
                println!("  equal-area CRS  {c}");
            }
            println!("  files           {}", r.files.join(", "));
            println!("  outputs         {}", a.out.display());
            Ok(())
        }
        Command::Extent(a) => {
            let opts = a.metrics.to_options(true)?;
            let report = areal::metrics::extent(
                &a.records,
                &a.record_options(),
                a.range.as_deref(),
                a.connectivity(),
                &opts,
            )?;
            if a.json {
                println!(
                    "{}",
                    serde_json::to_string_pretty(&report).expect("report serialises")
                );
            } else {
                println!(
                    "areal {}: extent of {}",
                    report.areal_version, report.records_file
                );
                for l in report.metrics.text_lines() {
                    println!("{l}");
                }
                for w in &report.warnings {
                    println!("  warning: {w}");
                }
            }
            Ok(())
        }
    }
}
