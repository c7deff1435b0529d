//! clap definitions: syntax only. Values are checked by the library's constructors.

use areal::access::AccessSpec;
use areal::metrics::MetricsOptions;
use areal::patches::Connectivity;
use areal::records::RecordOptions;
use areal::RangeOptions;
use clap::{ArgGroup, Parser, Subcommand};
use std::path::PathBuf;

/// areal: turn a suitability raster and occurrence records into a species range.
#[derive(Parser, Debug)]
#[command(name = "areal", version, about, long_about = None, after_help = crate::cli::extras::EXAMPLES)]
pub(crate) struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Subcommand, Debug)]
pub(crate) enum Command {
    /// Threshold the suitability raster, restrict it to the accessible area M, label
    /// patches and measure them in true area.
    #[command(after_help = crate::cli::extras::RANGE_EXAMPLES)]
    Range(RangeArgs),
    /// Write the vector outputs (range.gpkg, GeoJSON) of an earlier `areal range` run.
    #[command(after_help = crate::cli::extras::POLYGONS_EXAMPLES)]
    Polygons(PolygonsArgs),
    /// Extent of occurrence (EOO) and area of occupancy (AOO) of records, optionally with a
    /// range raster (classes.tif) for the modelled-range figures, patch distances and reach.
    #[command(after_help = crate::cli::extras::EXTENT_EXAMPLES)]
    Extent(ExtentArgs),
    /// Write report.html and map.png again from an earlier `areal range` run's folder.
    Report(ReportArgs),
    /// Range change from the present to future rasters (same threshold): stable, lost and
    /// gained cells, within or beyond a dispersal distance.
    Change(super::change::ChangeArgs),
    /// Run many species from a CSV manifest, resumable and shardable (Slurm job arrays);
    /// writes one run folder per species, batch.csv, batch.gpkg and richness.tif.
    Batch(crate::cli::batch::BatchArgs),
    /// Write batch.csv, batch.gpkg and richness.tif from the species folders of a batch.
    Gather(crate::cli::batch::GatherArgs),
    /// Run a run file (areal-run.toml) again into a new folder, byte for byte.
    Rerun(crate::cli::batch::RerunArgs),
    /// Check a run folder's outputs against its run file.
    Verify(crate::cli::batch::VerifyArgs),
    /// Print the JSON Schema of summary.json (the copy in docs/summary.schema.json).
    Schema,
    /// Print a shell completion script (e.g. `areal completions bash > /etc/bash_completion.d/areal`).
    Completions {
        /// The shell: bash, zsh, fish, elvish or powershell.
        #[arg(value_enum)]
        shell: clap_complete::Shell,
    },
    /// Print the man page, roff (e.g. `areal man > areal.1; man ./areal.1`).
    Man,
}

#[derive(clap::Args, Debug)]
pub(crate) struct ReportArgs {
    /// The output folder of an earlier `areal range` run (--out).
    #[arg(value_name = "DIR")]
    pub dir: PathBuf,
}

/// Options of the range metrics, shared by `range` and `extent`.
#[derive(clap::Args, Debug)]
pub(crate) struct MetricsArgs {
    /// AOO grid cell width in km (the reference grid is 2 km).
    #[arg(
        long,
        value_name = "KM",
        default_value_t = 2.0,
        allow_negative_numbers = true
    )]
    pub aoo_cell_km: f64,
    /// Patches smaller than this area (km2) count as small in the patch structure.
    #[arg(long, value_name = "KM2", allow_negative_numbers = true)]
    pub min_patch_km2: Option<f64>,
    /// Stepping-stone reach: largest jump between patches, km (edge to edge).
    #[arg(long, value_name = "KM", allow_negative_numbers = true)]
    pub gap_km: Option<f64>,
    /// Keep records dropped by the threshold in EOO and AOO.
    #[arg(long)]
    pub keep_dropped: bool,
}

impl MetricsArgs {
    pub(crate) fn to_options(&self, enabled: bool) -> areal::Result<MetricsOptions> {
        let m = MetricsOptions {
            enabled,
            aoo_cell_km: self.aoo_cell_km,
            min_patch_km2: self.min_patch_km2,
            gap_km: self.gap_km,
            keep_dropped: self.keep_dropped,
        };
        m.check()?;
        Ok(m)
    }
}

#[derive(clap::Args, Debug)]
pub(crate) struct ExtentArgs {
    /// Occurrence records: CSV (Darwin Core or lon/lat columns) or a GDAL point layer.
    #[arg(long, value_name = "FILE")]
    pub records: PathBuf,
    /// A range raster written by `areal range` (classes.tif) for the modelled-range figures.
    #[arg(long, value_name = "FILE")]
    pub range: Option<PathBuf>,
    /// Patch connectivity of the range: 8 (queen, default) or 4 (rook).
    #[arg(long, value_name = "8|4", default_value = "8", value_parser = ["8", "4"])]
    pub connectivity: String,
    #[command(flatten)]
    pub metrics: MetricsArgs,
    #[command(flatten)]
    pub record_columns: RecordArgs,
    /// Print the figures as JSON.
    #[arg(long)]
    pub json: bool,
}

/// How the records file is read, shared by `range` and `extent`.
#[derive(clap::Args, Debug)]
pub(crate) struct RecordArgs {
    /// Column holding record longitudes (or x).
    #[arg(long, value_name = "NAME")]
    pub lon_col: Option<String>,
    /// Column holding record latitudes (or y).
    #[arg(long, value_name = "NAME")]
    pub lat_col: Option<String>,
    /// CRS of CSV record coordinates.
    #[arg(long, value_name = "CRS", default_value = "EPSG:4326")]
    pub records_crs: String,
    /// Layer of a multi-layer records file.
    #[arg(long, value_name = "NAME")]
    pub records_layer: Option<String>,
}

impl RecordArgs {
    pub(crate) fn to_options(&self) -> RecordOptions {
        RecordOptions {
            lon_col: self.lon_col.clone(),
            lat_col: self.lat_col.clone(),
            crs: self.records_crs.clone(),
            layer: self.records_layer.clone(),
        }
    }
}

impl ExtentArgs {
    pub(crate) fn record_options(&self) -> RecordOptions {
        self.record_columns.to_options()
    }

    pub(crate) fn connectivity(&self) -> Connectivity {
        if self.connectivity == "4" {
            Connectivity::Four
        } else {
            Connectivity::Eight
        }
    }
}

#[derive(clap::Args, Debug)]
#[command(group(ArgGroup::new("rule").required(true).args(["omission", "threshold"])))]
pub(crate) struct RangeArgs {
    /// Continuous (or 0/1) suitability raster, any single-band GDAL raster with a CRS.
    #[arg(long, value_name = "FILE")]
    pub suitability: PathBuf,
    /// Occurrence records: CSV (Darwin Core or lon/lat columns) or a GDAL point layer.
    #[arg(long, value_name = "FILE")]
    pub records: PathBuf,
    /// Tolerated omission E in percent (0 <= E < 100): drop the floor(n*E/100) lowest record values.
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
    /// No progress bars and no warnings on stderr (warnings stay in summary.json; progress
    /// bars are off anyway when stderr is not a terminal).
    #[arg(long)]
    pub quiet: bool,
    #[command(flatten)]
    pub vectors: VectorArgs,
    #[command(flatten)]
    pub metrics: MetricsArgs,
    /// Skip the range metrics (EOO, AOO, patch distances, reach).
    #[arg(long)]
    pub no_metrics: bool,
    /// Do not write report.html and map.png.
    #[arg(long)]
    pub no_report: bool,
}

/// Options of the vector outputs, shared by `range` and `polygons`.
#[derive(clap::Args, Debug)]
pub(crate) struct VectorArgs {
    /// Also write range.gpkg (raster CRS) and RFC 7946 GeoJSON files of the range, its patches,
    /// the unreachable patches, M and the records.
    #[arg(long)]
    pub vectors: bool,
    /// Also write range-equal-area.gpkg in an equal-area CRS: without a value EPSG:6933 for
    /// global extents, else a Lambert azimuthal equal-area centred on the data.
    #[arg(long, value_name = "CRS", num_args = 0..=1, default_missing_value = "auto")]
    pub vector_crs: Option<String>,
    /// Simplify polygon boundaries by up to M metres (topology-preserving; off by default).
    #[arg(long, value_name = "M", allow_negative_numbers = true)]
    pub simplify_m: Option<f64>,
}

impl VectorArgs {
    pub(crate) fn to_options(&self) -> areal::vectors::VectorOptions {
        areal::vectors::VectorOptions {
            equal_area: self.vector_crs.as_ref().map(|c| {
                if c.eq_ignore_ascii_case("auto") {
                    areal::vectors::VectorCrs::Auto
                } else {
                    areal::vectors::VectorCrs::Given(c.clone())
                }
            }),
            simplify_m: self.simplify_m,
        }
    }
}

#[derive(clap::Args, Debug)]
pub(crate) struct PolygonsArgs {
    /// classes.tif of an earlier run (its patches.csv, summary.json and records.csv beside it).
    #[arg(long, value_name = "FILE")]
    pub classes: PathBuf,
    /// The run's M polygon file, to rebuild M as the run used it.
    #[arg(long, value_name = "FILE")]
    pub accessible: Option<PathBuf>,
    /// The run's --buffer-km.
    #[arg(long, value_name = "D", allow_negative_numbers = true)]
    pub buffer_km: Option<f64>,
    /// The run's --hull-buffer-km.
    #[arg(long, value_name = "D", allow_negative_numbers = true)]
    pub hull_buffer_km: Option<f64>,
    /// Patch connectivity, only for a summary.json that does not record it.
    #[arg(long, value_name = "8|4", value_parser = ["8", "4"])]
    pub connectivity: Option<String>,
    /// Output folder (created; replaced only with --overwrite).
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
    /// Replace an existing output folder written by areal.
    #[arg(long)]
    pub overwrite: bool,
    /// Also write range-equal-area.gpkg (see `areal range --vector-crs`).
    #[arg(long, value_name = "CRS", num_args = 0..=1, default_missing_value = "auto")]
    pub vector_crs: Option<String>,
    /// Simplify polygon boundaries by up to M metres (topology-preserving; off by default).
    #[arg(long, value_name = "M", allow_negative_numbers = true)]
    pub simplify_m: Option<f64>,
}

impl PolygonsArgs {
    pub(crate) fn access(&self) -> AccessSpec {
        AccessSpec {
            polygon: self.accessible.clone(),
            buffer_km: self.buffer_km,
            hull_buffer_km: self.hull_buffer_km,
        }
    }

    pub(crate) fn connectivity(&self) -> Option<Connectivity> {
        self.connectivity.as_deref().map(|c| {
            if c == "4" {
                Connectivity::Four
            } else {
                Connectivity::Eight
            }
        })
    }

    pub(crate) fn vector_options(&self) -> areal::vectors::VectorOptions {
        VectorArgs {
            vectors: true,
            vector_crs: self.vector_crs.clone(),
            simplify_m: self.simplify_m,
        }
        .to_options()
    }
}

impl RangeArgs {
    /// The run's options, built by the library from the same named values a batch manifest
    /// and a run file use (`areal::batch::settings`).
    pub(crate) fn to_options(&self) -> areal::Result<RangeOptions> {
        let num = |v: Option<f64>| v.map(|v| v.to_string());
        let flag = |b: bool| Some(b.to_string());
        let pairs = [
            ("omission", num(self.omission)),
            ("threshold", num(self.threshold)),
            (
                "accessible",
                self.accessible.as_ref().map(|p| p.display().to_string()),
            ),
            ("buffer_km", num(self.buffer_km)),
            ("hull_buffer_km", num(self.hull_buffer_km)),
            ("connectivity", Some(self.connectivity.clone())),
            ("keep_duplicates", flag(self.keep_duplicates)),
            ("lon_col", self.record_columns.lon_col.clone()),
            ("lat_col", self.record_columns.lat_col.clone()),
            ("records_crs", Some(self.record_columns.records_crs.clone())),
            ("records_layer", self.record_columns.records_layer.clone()),
            ("vectors", flag(self.vectors.vectors)),
            ("vector_crs", self.vectors.vector_crs.clone()),
            ("simplify_m", num(self.vectors.simplify_m)),
            ("aoo_cell_km", num(Some(self.metrics.aoo_cell_km))),
            ("min_patch_km2", num(self.metrics.min_patch_km2)),
            ("gap_km", num(self.metrics.gap_km)),
            ("keep_dropped", flag(self.metrics.keep_dropped)),
            ("no_metrics", flag(self.no_metrics)),
            ("no_report", flag(self.no_report)),
        ];
        let settings = pairs
            .into_iter()
            .filter_map(|(k, v)| v.map(|v| (k.to_string(), v)))
            .collect();
        areal::batch::settings::to_range_options(
            &settings,
            std::path::Path::new(""),
            crate::cli::progress::bar(self.quiet),
        )
    }
}
