//! `areal batch`, `areal gather`, `areal rerun`, `areal verify`: syntax and printing. The work
//! is in `areal::batch`.

use areal::batch::{self, BatchOptions, BatchProgress, Outcome, Shard};
use clap::Args;
use indicatif::{ProgressBar, ProgressStyle};
use std::io::IsTerminal;
use std::path::PathBuf;
use std::sync::Mutex;

/// Exit code of a batch (or gather) that finished but left species failed or not run.
pub(crate) const EXIT_SPECIES_FAILED: u8 = 6;

#[derive(Args, Debug)]
pub(crate) struct BatchArgs {
    /// CSV manifest: columns species, suitability, records, and any `areal range` option
    /// with `-` written `_` (omission, buffer_km, ...).
    #[arg(value_name = "MANIFEST")]
    pub manifest: PathBuf,
    /// Output folder: one folder per species, batch.csv, batch.gpkg, richness.tif.
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
    /// Species run at once (default: the number of cores).
    #[arg(long, value_name = "N")]
    pub jobs: Option<usize>,
    /// Run only the rows whose 0-based index modulo N is I (default inside a Slurm array:
    /// from SLURM_ARRAY_TASK_ID and SLURM_ARRAY_TASK_COUNT or MIN/MAX).
    #[arg(long, value_name = "I/N")]
    pub shard: Option<String>,
    /// Redo every species, even those complete from an earlier run.
    #[arg(long)]
    pub force: bool,
    /// No progress bar, no line per species.
    #[arg(long)]
    pub quiet: bool,
    #[command(flatten)]
    pub defaults: DefaultArgs,
}

/// `areal range` options as defaults for empty manifest cells.
#[derive(Args, Debug)]
pub(crate) struct DefaultArgs {
    /// Default tolerated omission E in percent.
    #[arg(long, value_name = "E", allow_negative_numbers = true)]
    omission: Option<String>,
    /// Default fixed threshold.
    #[arg(long, value_name = "V", allow_negative_numbers = true)]
    threshold: Option<String>,
    /// Default M polygon file.
    #[arg(long, value_name = "FILE")]
    accessible: Option<String>,
    /// Default record buffer for M, km.
    #[arg(long, value_name = "D", allow_negative_numbers = true)]
    buffer_km: Option<String>,
    /// Default hull buffer for M, km.
    #[arg(long, value_name = "D", allow_negative_numbers = true)]
    hull_buffer_km: Option<String>,
    /// Default patch connectivity (8 or 4).
    #[arg(long, value_name = "8|4")]
    connectivity: Option<String>,
    /// Count every record in the threshold rule.
    #[arg(long)]
    keep_duplicates: bool,
    /// Default longitude column.
    #[arg(long, value_name = "NAME")]
    lon_col: Option<String>,
    /// Default latitude column.
    #[arg(long, value_name = "NAME")]
    lat_col: Option<String>,
    /// Default CRS of CSV records.
    #[arg(long, value_name = "CRS")]
    records_crs: Option<String>,
    /// Default records layer.
    #[arg(long, value_name = "NAME")]
    records_layer: Option<String>,
    /// Write the vector outputs for every species.
    #[arg(long)]
    vectors: bool,
    /// Default equal-area CRS of the vector outputs.
    #[arg(long, value_name = "CRS")]
    vector_crs: Option<String>,
    /// Default simplification tolerance, metres.
    #[arg(long, value_name = "M", allow_negative_numbers = true)]
    simplify_m: Option<String>,
    /// Default AOO cell width, km.
    #[arg(long, value_name = "KM", allow_negative_numbers = true)]
    aoo_cell_km: Option<String>,
    /// Default small-patch area, km2.
    #[arg(long, value_name = "KM2", allow_negative_numbers = true)]
    min_patch_km2: Option<String>,
    /// Default stepping-stone reach, km.
    #[arg(long, value_name = "KM", allow_negative_numbers = true)]
    gap_km: Option<String>,
    /// Keep records dropped by the threshold in EOO and AOO.
    #[arg(long)]
    keep_dropped: bool,
    /// Skip the range metrics.
    #[arg(long)]
    no_metrics: bool,
}

impl DefaultArgs {
    fn settings(&self) -> batch::settings::Settings {
        let flag = |b: bool| b.then(|| "true".to_string());
        [
            ("omission", self.omission.clone()),
            ("threshold", self.threshold.clone()),
            ("accessible", self.accessible.clone()),
            ("buffer_km", self.buffer_km.clone()),
            ("hull_buffer_km", self.hull_buffer_km.clone()),
            ("connectivity", self.connectivity.clone()),
            ("keep_duplicates", flag(self.keep_duplicates)),
            ("lon_col", self.lon_col.clone()),
            ("lat_col", self.lat_col.clone()),
            ("records_crs", self.records_crs.clone()),
            ("records_layer", self.records_layer.clone()),
            ("vectors", flag(self.vectors)),
            ("vector_crs", self.vector_crs.clone()),
            ("simplify_m", self.simplify_m.clone()),
            ("aoo_cell_km", self.aoo_cell_km.clone()),
            ("min_patch_km2", self.min_patch_km2.clone()),
            ("gap_km", self.gap_km.clone()),
            ("keep_dropped", flag(self.keep_dropped)),
            ("no_metrics", flag(self.no_metrics)),
        ]
        .into_iter()
        .filter_map(|(k, v)| v.map(|v| (k.to_string(), v)))
        .collect()
    }
}

#[derive(Args, Debug)]
pub(crate) struct GatherArgs {
    /// The --out folder of a batch (or of its shards).
    #[arg(value_name = "DIR")]
    pub dir: PathBuf,
    /// Print nothing but errors.
    #[arg(long)]
    pub quiet: bool,
}

#[derive(Args, Debug)]
pub(crate) struct RerunArgs {
    /// A run file (areal-run.toml of a run folder).
    #[arg(value_name = "FILE")]
    pub file: PathBuf,
    /// New output folder.
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
    /// No progress bars and no warnings.
    #[arg(long)]
    pub quiet: bool,
}

#[derive(Args, Debug)]
pub(crate) struct VerifyArgs {
    /// A run folder (holding areal-run.toml).
    #[arg(value_name = "DIR")]
    pub dir: PathBuf,
}

/// One line per species, or a bar with an ETA on a terminal.
struct Report {
    bar: Option<ProgressBar>,
    done: Mutex<usize>,
    total: Mutex<usize>,
}

impl BatchProgress for Report {
    fn start(&self, total: usize) {
        *self.total.lock().unwrap() = total;
        if let Some(b) = &self.bar {
            b.set_length(total as u64);
        }
    }
    fn species_done(&self, name: &str, outcome: &Outcome, seconds: f64) {
        let what = match outcome {
            Outcome::Ran => "ok".to_string(),
            Outcome::Kept => "kept (complete from an earlier run)".to_string(),
            Outcome::Failed(m) => format!("failed: {m}"),
        };
        match &self.bar {
            Some(b) => {
                b.inc(1);
                if let Outcome::Failed(_) = outcome {
                    b.println(format!("areal batch: {name} {what}"));
                }
            }
            None => {
                let mut d = self.done.lock().unwrap();
                *d += 1;
                eprintln!(
                    "areal batch: [{}/{}] {name} {what} ({seconds:.1} s)",
                    *d,
                    self.total.lock().unwrap()
                );
            }
        }
    }
}

pub(crate) fn batch(a: &BatchArgs) -> areal::Result<u8> {
    let (shard, from) = match &a.shard {
        Some(s) => (Some(Shard::parse(s)?), "--shard"),
        None => (
            Shard::from_slurm(|k| std::env::var(k).ok())?,
            "the Slurm array variables",
        ),
    };
    let manifest = batch::manifest::read(&a.manifest, &a.defaults.settings())?;
    let cores = std::thread::available_parallelism().map_or(1, |n| n.get());
    if a.jobs == Some(0) {
        return Err(areal::Error::InvalidOption {
            option: "--jobs",
            reason: "0 species at once; give 1 or more".into(),
        });
    }
    let jobs = a.jobs.unwrap_or(cores);
    // Decode workers per species: the cores shared out, at least one.
    if std::env::var_os("AREAL_THREADS").is_none() {
        std::env::set_var("AREAL_THREADS", (cores / jobs).max(1).to_string());
    }
    if !a.quiet {
        if let Some(s) = shard {
            eprintln!(
                "areal batch: shard {}/{} (from {from}), species rows with index % {} == {}",
                s.index, s.count, s.count, s.index
            );
        }
    }
    let bar = (!a.quiet && std::io::stderr().is_terminal()).then(|| {
        let b = ProgressBar::new(0);
        b.set_style(
            ProgressStyle::with_template("species [{bar:30}] {pos}/{len}, {eta} left")
                .expect("valid template")
                .progress_chars("=> "),
        );
        b
    });
    let report = Report {
        bar,
        done: Mutex::new(0),
        total: Mutex::new(0),
    };
    let opts = BatchOptions {
        jobs,
        shard,
        force: a.force,
    };
    let r = batch::run_batch(
        &manifest,
        &a.out,
        &opts,
        (!a.quiet).then_some(&report as &dyn BatchProgress),
    )?;
    if let Some(b) = &report.bar {
        b.finish_and_clear();
    }
    if !a.quiet {
        println!(
            "areal batch: {} species: {} run, {} kept from an earlier run, {} failed",
            r.species, r.ran, r.kept, r.failed
        );
        match &r.gathered {
            Some(g) => print_gathered(g, &a.out),
            None => println!(
                "  shard done; run `areal gather {}` when every shard is done",
                a.out.display()
            ),
        }
    }
    Ok(if r.failed > 0 && shard.is_none() {
        EXIT_SPECIES_FAILED
    } else {
        0
    })
}

fn print_gathered(g: &batch::GatherReport, out: &std::path::Path) {
    println!(
        "  batch.csv: {} ok, {} failed, {} not run yet",
        g.ok, g.failed, g.skipped
    );
    if g.richness_species > 0 {
        println!("  richness.tif: {} species on one grid", g.richness_species);
    }
    println!("  outputs         {}", out.display());
}

pub(crate) fn gather(a: &GatherArgs) -> areal::Result<u8> {
    let g = batch::gather(&a.dir)?;
    if !a.quiet {
        print_gathered(&g, &a.dir);
    }
    Ok(if g.failed + g.skipped > 0 {
        EXIT_SPECIES_FAILED
    } else {
        0
    })
}

pub(crate) fn rerun(a: &RerunArgs) -> areal::Result<u8> {
    let r = batch::runfile::rerun(&a.file, &a.out, crate::cli::progress::bar(a.quiet))?;
    if !a.quiet {
        println!(
            "areal rerun: {} reproduced byte for byte in {} (threshold {})",
            a.file.display(),
            a.out.display(),
            r.summary.threshold.value
        );
    }
    Ok(0)
}

pub(crate) fn verify(a: &VerifyArgs) -> areal::Result<u8> {
    let v = batch::runfile::verify(&a.dir)?;
    println!(
        "areal verify: {}: all {} outputs match the run file",
        a.dir.display(),
        v.outputs
    );
    Ok(0)
}
