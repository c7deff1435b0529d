//! `areal change`: options and printing. The work is `areal::change::run_change`.

use super::args::{MetricsArgs, RecordArgs};
use areal::access::AccessSpec;
use areal::change::{ChangeOptions, ChangeResult};
use areal::patches::Connectivity;
use areal::{RangeOptions, ThresholdSpec};
use clap::ArgGroup;
use std::io::Write;
use std::path::PathBuf;

#[derive(clap::Args, Debug)]
#[command(group(ArgGroup::new("rule").required(true).args(["omission", "threshold"])))]
pub(crate) struct ChangeArgs {
    /// Suitability raster of the present (the records are sampled on it; T comes from it).
    #[arg(long, value_name = "FILE")]
    pub present: PathBuf,
    /// Suitability raster of a future (or past) climate, on the grid of --present; repeat
    /// for several (each gets a folder named after its file).
    #[arg(long, value_name = "FILE", required = true)]
    pub future: Vec<PathBuf>,
    /// Occurrence records: CSV (Darwin Core or lon/lat columns) or a GDAL point layer.
    #[arg(long, value_name = "FILE")]
    pub records: PathBuf,
    /// Tolerated omission E in percent (0 <= E < 100), applied on the present raster.
    #[arg(long, value_name = "E", allow_negative_numbers = true)]
    pub omission: Option<f64>,
    /// A fixed suitability threshold instead of the omission rule.
    #[arg(long, value_name = "V", allow_negative_numbers = true)]
    pub threshold: Option<f64>,
    /// Accessible area M as a polygon file (any GDAL vector format).
    #[arg(long, value_name = "FILE")]
    pub accessible: Option<PathBuf>,
    /// M as the cells within D km (geodesic) of any record.
    #[arg(long, value_name = "D", allow_negative_numbers = true)]
    pub buffer_km: Option<f64>,
    /// M as the convex hull of the records buffered by D km (geodesic).
    #[arg(long, value_name = "D", allow_negative_numbers = true)]
    pub hull_buffer_km: Option<f64>,
    /// Gains within D km (geodesic, WGS84) of the present range are within reach (class 3).
    #[arg(long, value_name = "D", allow_negative_numbers = true)]
    pub dispersal_km: Option<f64>,
    /// Patch connectivity: 8 (queen, default) or 4 (rook).
    #[arg(long, value_name = "8|4", default_value = "8", value_parser = ["8", "4"])]
    pub connectivity: String,
    /// Output folder (created; replaced only with --overwrite).
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
    /// Replace an existing output folder written by areal.
    #[arg(long)]
    pub overwrite: bool,
    /// Count every record in the threshold rule (default: one value per occupied cell).
    #[arg(long)]
    pub keep_duplicates: bool,
    #[command(flatten)]
    pub record_columns: RecordArgs,
    /// Print summary.json on stdout instead of the readable summary.
    #[arg(long)]
    pub json: bool,
    /// No progress bars and no warnings on stderr.
    #[arg(long)]
    pub quiet: bool,
    #[command(flatten)]
    pub metrics: MetricsArgs,
    /// Skip the range metrics (EOO, AOO, patch distances, reach, modelled AOO of the ranges).
    #[arg(long)]
    pub no_metrics: bool,
    /// Do not write report.html, map.png and change-map.png.
    #[arg(long)]
    pub no_report: bool,
}

impl ChangeArgs {
    fn to_options(&self) -> areal::Result<ChangeOptions> {
        let threshold = match (self.omission, self.threshold) {
            (Some(e), None) => ThresholdSpec::omission(e)?,
            (None, Some(v)) => ThresholdSpec::fixed(v)?,
            _ => unreachable!("clap requires exactly one of --omission and --threshold"),
        };
        areal::change::check_dispersal(self.dispersal_km)?;
        Ok(ChangeOptions {
            range: RangeOptions {
                threshold,
                access: AccessSpec {
                    polygon: self.accessible.clone(),
                    buffer_km: self.buffer_km,
                    hull_buffer_km: self.hull_buffer_km,
                },
                connectivity: if self.connectivity == "4" {
                    Connectivity::Four
                } else {
                    Connectivity::Eight
                },
                keep_duplicates: self.keep_duplicates,
                records: self.record_columns.to_options(),
                progress: super::progress::bar(self.quiet),
                vectors: None,
                metrics: self.metrics.to_options(!self.no_metrics)?,
                model: Default::default(),
                report: !self.no_report,
            },
            dispersal_km: self.dispersal_km,
        })
    }
}

fn text(r: &ChangeResult, out: &std::path::Path) -> String {
    let mut s = r.summary.present.to_text();
    let reports: Vec<_> = r
        .summary
        .change
        .iter()
        .chain(r.summary.changes.iter())
        .collect();
    for c in reports {
        let a = &c.area_km2;
        let f = &c.future_range_km2;
        let pct = |p: Option<f64>| p.map_or("n/a".into(), |v| format!("{v:+.1} %"));
        s += &format!("  change to       {}\n", c.future);
        s += &format!(
            "    areas km2     stable {:.3}, lost {:.3}, gained within reach {:.3}, gained out of reach {:.3}\n",
            a.stable, a.lost, a.gained_within_reach, a.gained_out_of_reach
        );
        s += &format!(
            "    future range  no dispersal {:.3} ({}), limited {:.3} ({}), full {:.3} ({}) vs present {:.3}\n",
            f.no_dispersal,
            pct(c.percent_change.no_dispersal),
            f.limited_dispersal,
            pct(c.percent_change.limited_dispersal),
            f.full_dispersal,
            pct(c.percent_change.full_dispersal),
            a.present_range
        );
    }
    s += "  change cautions the present T is applied unchanged to every future (the usual practice);\n";
    s += "                  future ranges are model-based projections, with the errors of both models\n";
    s += &format!("  outputs         {}\n", out.display());
    s
}

pub(crate) fn run(a: ChangeArgs) -> areal::Result<()> {
    let opts = a.to_options()?;
    let r = areal::change::run_change(
        &a.present,
        &a.future,
        &a.records,
        &opts,
        &a.out,
        a.overwrite,
    )?;
    if !a.quiet {
        for w in &r.summary.present.warnings {
            eprintln!("areal: warning: {}", w.replace('\n', " "));
        }
    }
    let mut out = std::io::stdout().lock();
    let _ = if a.json {
        match serde_json::to_string_pretty(&r.summary) {
            Ok(j) => writeln!(out, "{j}"),
            Err(e) => writeln!(out, "{{\"error\": \"{e}\"}}"),
        }
    } else {
        write!(out, "{}", text(&r, &a.out))
    };
    Ok(())
}
