//! areal: from a continuous suitability raster and occurrence records to a species range:
//! an omission-based threshold, the accessible area M, range classes, connected patches
//! and their true areas on the ellipsoid.
//!
//! Stages (each a module with its own contract and tests):
//! [`records`] read and reproject records; [`threshold`](omission_threshold) pick T;
//! [`access`] rasterise M; [`area`] true cell areas; [`patches`] streaming labelling;
//! the pipeline ([`compute_range`], [`run_range`]) ties them in one pass over the raster.
#![deny(missing_docs)]

pub mod access;
pub mod area;
mod error;
mod grid;
pub mod metrics;
mod output;
pub mod patches;
mod pipeline;
pub mod raster_io;
pub mod records;
mod report;
pub mod report_html;
mod review;
mod threshold;
pub mod vectors;

pub use error::{Error, Result, Stage};
pub use grid::GridSpec;
pub use output::{OutputDir, OUTPUT_NAMES};
pub use pipeline::{
    compute_range, run_range, MemorySink, Progress, ProgressHandle, RangeOptions, RangeResult,
    RowSink,
};
pub use report::{
    AccessReport, AreaReport, CellReport, ExcludedRecord, InputsReport, PatchReport, PatchRow,
    RecordRow, RecordsReport, SensitivityRow, Summary, ThresholdReport, CAUTIONS,
};
pub use threshold::{omission_threshold, Threshold, ThresholdSpec};
