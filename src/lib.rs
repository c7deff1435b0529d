//! areal: from a continuous suitability raster and occurrence records to a species range:
//! an omission-based threshold, the accessible area M, range classes, connected patches
//! and their true areas on the ellipsoid, assessment metrics and GIS-ready vectors.
//!
//! Data flows one way: inputs ([`records`], the raster) -> the threshold
//! ([`omission_threshold`]) and M ([`access`]) -> one streaming pass over the raster
//! ([`compute_range`]) that yields a [`RangeModel`] (runs of patch cells with their final
//! patch ids, M as runs, the patches and totals; cell areas from [`area`], labels from
//! [`patches`]) -> products that read the model: the summary and tables, the [`metrics`]
//! and the [`vectors`] -> the run folder, written atomically ([`run_range`]).
#![deny(missing_docs)]

// The stages with an API of their own.
pub mod access;
pub mod area;
pub mod batch;
pub mod change;
pub mod metrics;
pub mod patches;
pub mod records;
pub mod report_html;
pub mod styles;
pub mod vectors;

// Internals: the pass, the model's storage, I/O and the orchestration.
mod class_overviews;
mod crs;
mod error;
mod grid;
mod model;
mod output;
mod pass;
mod progress;
mod raster_io;
mod report;
mod review;
mod run;
mod scan;
mod threshold;

pub use error::{Error, Result, Stage};
pub use grid::{normalise_lon, GridSpec};
pub use model::{BoundaryCorners, ModelOptions, RangeModel, Run, Totals};
pub use output::{OutputDir, OUTPUT_NAMES};
pub use pass::{MemorySink, RowSink};
pub use progress::{Progress, ProgressHandle};
pub use raster_io::class;
pub use report::summary_schema;
pub use report::{
    AccessReport, AreaReport, CellReport, ExcludedRecord, InputsReport, PatchReport, PatchRow,
    RecordRow, RecordStatus, RecordsReport, SensitivityRow, Summary, ThresholdReport, CAUTIONS,
};
pub use run::{compute_range, run_range, RangeOptions, RangeResult};
pub use threshold::{omission_threshold, Threshold, ThresholdSpec};
