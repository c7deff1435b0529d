//! Command-line front end. Parsing lives in `args`; this file dispatches and prints.
//!
//! Exit codes: 0 success; 2 usage or option error; 3 bad input (files, records, CRS);
//! 4 output error (folder exists, not writable); 5 processing error (a computation that
//! could not be completed on accepted inputs); 101 an internal error (a panic: a bug).
//!
//! stderr carries one `areal: error: ...` line on failure, and on success one
//! `areal: warning: ...` line per warning of summary.json (unless `--quiet`, which also
//! turns off the progress bars). GDAL's own
//! messages are routed through a handler: its failures are kept and, when a run fails,
//! the last one is added to the error line if our message does not already hold it; its warnings are
//! printed once each as `areal: GDAL warning: ...` (unless `--quiet`).

mod args;
mod batch;
mod change;
mod extras;
pub(crate) mod progress;

use args::{Cli, Command};
use clap::Parser;
use gdal::errors::CplErrType;
use std::io::Write;
use std::process::ExitCode;
use std::sync::Mutex;

/// GDAL messages met during the run: (is_failure, text), in order, deduplicated.
static GDAL_MESSAGES: Mutex<Vec<(bool, String)>> = Mutex::new(Vec::new());
/// At most this many GDAL messages are kept.
const GDAL_MESSAGES_KEPT: usize = 20;

fn gdal_messages() -> Vec<(bool, String)> {
    GDAL_MESSAGES.lock().map(|m| m.clone()).unwrap_or_default()
}

/// Keep GDAL's messages instead of letting it print `ERROR 1: ...` lines.
fn route_gdal_messages() {
    gdal::config::set_error_handler(|class, _no, msg| {
        let failure = match class {
            CplErrType::Failure | CplErrType::Fatal => true,
            CplErrType::Warning => false,
            CplErrType::None | CplErrType::Debug => return,
        };
        let msg = msg.trim().replace('\n', " ");
        if let Ok(mut m) = GDAL_MESSAGES.lock() {
            if m.len() < GDAL_MESSAGES_KEPT && !m.iter().any(|(_, t)| *t == msg) {
                m.push((failure, msg));
            }
        }
    });
}

/// A panic is a bug: say so in one line instead of Rust's default report.
fn report_panics_as_bugs() {
    std::panic::set_hook(Box::new(|info| {
        eprintln!(
            "areal: internal error (a bug in areal, not a problem with your data; please report \
             it with the command line): {info}"
        );
    }));
}

pub(crate) fn main() -> ExitCode {
    report_panics_as_bugs();
    route_gdal_messages();
    let cli = Cli::parse();
    // areal reads each block once, in strips; a large block cache only costs memory.
    if std::env::var_os("GDAL_CACHEMAX").is_none() {
        let _ = gdal::config::set_config_option("GDAL_CACHEMAX", "32");
    }
    // GeoPackages carry a "last change" timestamp; a fixed one keeps every output a function
    // of the inputs and options only, so `areal rerun` reproduces range.gpkg byte for byte.
    if std::env::var_os("OGR_CURRENT_DATE").is_none() {
        let _ = gdal::config::set_config_option("OGR_CURRENT_DATE", "2000-01-01T00:00:00.000Z");
    }
    let quiet = match &cli.command {
        Command::Range(a) => a.quiet,
        Command::Change(a) => a.quiet,
        Command::Batch(a) => a.quiet,
        Command::Gather(a) => a.quiet,
        Command::Rerun(a) => a.quiet,
        _ => false,
    };
    let result = run(cli);
    let gdal = gdal_messages();
    if !quiet {
        for (_, w) in gdal.iter().filter(|(failure, _)| !failure) {
            eprintln!("areal: GDAL warning: {w}");
        }
    }
    match result {
        Ok(code) => ExitCode::from(code),
        Err(e) => {
            let mut line = e.to_string().replace('\n', " ");
            // GDAL's last failure is usually the one behind the error.
            if let Some((_, t)) = gdal.iter().rev().find(|(failure, _)| *failure) {
                if !line.contains(t.as_str()) {
                    line = format!("{line} (GDAL: {t})");
                }
            }
            eprintln!("areal: error: {line}");
            ExitCode::from(e.exit_code())
        }
    }
}

fn run(cli: Cli) -> areal::Result<u8> {
    match cli.command {
        Command::Batch(a) => batch::batch(&a),
        Command::Gather(a) => batch::gather(&a),
        Command::Rerun(a) => batch::rerun(&a),
        Command::Verify(a) => batch::verify(&a),
        Command::Schema => {
            let _ = std::io::stdout().write_all(areal::summary_schema().as_bytes());
            Ok(0)
        }
        Command::Completions { shell } => {
            extras::completions(shell);
            Ok(0)
        }
        Command::Man => {
            let _ = extras::man_page();
            Ok(0)
        }
        Command::Range(a) => {
            let opts = a.to_options()?;
            let result = areal::run_range(&a.suitability, &a.records, &opts, &a.out, a.overwrite)?;
            if !a.quiet {
                for w in &result.summary.warnings {
                    eprintln!("areal: warning: {}", w.replace('\n', " "));
                }
            }
            // The outputs are in place; a closed stdout (e.g. `| head`) is not an error.
            let mut out = std::io::stdout().lock();
            let _ = if a.json {
                match serde_json::to_string_pretty(&result.summary) {
                    Ok(j) => writeln!(out, "{j}"),
                    Err(e) => writeln!(out, "{{\"error\": \"{e}\"}}"),
                }
            } else {
                write!(out, "{}", result.summary.to_text())
                    .and_then(|_| writeln!(out, "  outputs         {}", a.out.display()))
            };
            Ok(0)
        }
        Command::Change(a) => change::run(a).map(|()| 0),
        Command::Polygons(a) => {
            let r = areal::vectors::run_polygons(
                &a.classes,
                &a.access(),
                a.connectivity(),
                &a.vector_options(),
                &a.out,
                a.overwrite,
            )?;
            let mut out = std::io::stdout().lock();
            let mut text = format!(
                "areal polygons: {} patch(es), {} unreachable, {} record(s)\n",
                r.patches, r.unreachable, r.records
            );
            if let Some(c) = &r.equal_area_crs {
                text += &format!("  equal-area CRS  {c}\n");
            }
            text += &format!("  files           {}\n", r.files.join(", "));
            text += &format!("  outputs         {}\n", a.out.display());
            let _ = out.write_all(text.as_bytes());
            Ok(0)
        }
        Command::Report(a) => {
            let written = areal::report_html::folder::run_report(&a.dir)?;
            let mut out = std::io::stdout().lock();
            for p in written {
                let _ = writeln!(out, "areal report: wrote {}", p.display());
            }
            Ok(0)
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
            // A closed stdout (e.g. `| head`) is not an error.
            let mut out = std::io::stdout().lock();
            let text = if a.json {
                serde_json::to_string_pretty(&report).expect("report serialises") + "\n"
            } else {
                let mut t = format!(
                    "areal {}: extent of {}\n",
                    report.areal_version, report.records_file
                );
                for l in report.metrics.text_lines() {
                    t += &format!("{l}\n");
                }
                for w in &report.warnings {
                    t += &format!("  warning: {w}\n");
                }
                t
            };
            let _ = out.write_all(text.as_bytes());
            Ok(0)
        }
    }
}
