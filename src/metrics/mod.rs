//! Range metrics for assessments: extent of occurrence (EOO), area of occupancy (AOO),
//! patch structure, edge-to-edge distances between patches and stepping-stone reach.
//!
//! Inputs: records as WGS84 (lon, lat) degrees, each marked used, below the threshold or
//! excluded ([`MetricRecord`]); optionally a range as its [`crate::RangeModel`] (runs of
//! patch cells with their patch ids, the patch list, any CRS, north-up).
//! Units: km and km2 at the interface; geodesics and areas on the WGS84 ellipsoid.
//!
//! - EOO ([`eoo`]): convex hull on the sphere, geodesic polygon area; for the records and for
//!   the corners of the boundary cells of the occupied modelled range (class-1 patches
//!   holding records). When EOO comes out smaller than AOO it is reported equal to AOO (the
//!   Guidelines' rule, quoted from memory: see docs/eoo-aoo.md).
//! - AOO ([`aoo`]): occupied cells of a 2 km grid (width configurable) in an LAEA centred on
//!   the records, minimum and maximum over 16 grid origins. For the modelled range a grid
//!   cell counts as occupied when the centre of any raster cell of an occupied class-1 patch
//!   falls inside it.
//! - Criterion B comparison ([`criterion_b`]), patch structure ([`structure`]), distances and
//!   reach ([`reach`]).
//!
//! Records below the threshold are left out unless `keep_dropped`; excluded records (outside
//! the raster, on nodata) are always left out.

pub(crate) mod aoo;
mod aoo_bitmap;
pub(crate) mod aoo_runs;
pub mod criterion_b;
mod eoo;
mod extent;
mod figures;
mod geodesics;
mod kdtree;
mod laea;
mod nearest;
mod range;
mod reach;
mod structure;
#[cfg(test)]
mod tests;
#[cfg(test)]
mod tests_aoo;
#[cfg(test)]
mod tests_nearest;
#[cfg(test)]
mod tests_range;

pub use aoo::ORIGIN_FRACTIONS;
pub use criterion_b::CriterionB;
pub use eoo::{geodesic_polygon_area_km2, hull_area, HullArea, EOO_METHOD};
pub use extent::{extent, ExtentReport};
pub use figures::records_metrics;
pub(crate) use range::nearest_range_km;
pub use range::{add_range_metrics, range_metrics};
pub use structure::{patch_structure, PatchStructure, StructureReport};

use crate::{Error, Result};
use serde::Serialize;

/// Options of the metrics (`--aoo-cell-km`, `--min-patch-km2`, `--gap-km`, `--keep-dropped`).
#[derive(Debug, Clone, PartialEq)]
pub struct MetricsOptions {
    /// Compute the metrics at all (`--no-metrics` turns them off in `areal range`).
    pub enabled: bool,
    /// AOO cell width, km (default 2).
    pub aoo_cell_km: f64,
    /// Patches smaller than this (km2) count as small in the patch structure.
    pub min_patch_km2: Option<f64>,
    /// Largest jump between patches for stepping-stone reach, km; no reach without it.
    pub gap_km: Option<f64>,
    /// Keep records dropped by the threshold in EOO and AOO.
    pub keep_dropped: bool,
}

impl Default for MetricsOptions {
    fn default() -> Self {
        MetricsOptions {
            enabled: true,
            aoo_cell_km: 2.0,
            min_patch_km2: None,
            gap_km: None,
            keep_dropped: false,
        }
    }
}

impl MetricsOptions {
    /// Refuse values that cannot be used, naming the option.
    pub fn check(&self) -> Result<()> {
        if !(self.aoo_cell_km.is_finite() && self.aoo_cell_km > 0.0 && self.aoo_cell_km <= 1000.0) {
            return Err(Error::InvalidOption {
                option: "--aoo-cell-km",
                reason: format!(
                    "{} is not a usable cell width; give a width in km, from 0.01 to 1000 (the reference AOO grid is 2 km)",
                    self.aoo_cell_km
                ),
            });
        }
        if let Some(m) = self.min_patch_km2 {
            if !(m.is_finite() && m >= 0.0) {
                return Err(Error::InvalidOption {
                    option: "--min-patch-km2",
                    reason: format!("{m} is not a usable area; give an area in km2, >= 0"),
                });
            }
        }
        if let Some(g) = self.gap_km {
            if !(g.is_finite() && g >= 0.0) {
                return Err(Error::InvalidOption {
                    option: "--gap-km",
                    reason: format!("{g} is not a usable distance; give a distance in km, >= 0"),
                });
            }
        }
        Ok(())
    }
}

/// How a record takes part in the metrics.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RecordUse {
    /// Used by the range.
    Used,
    /// Dropped by the threshold (its cell is below T); used only with `keep_dropped`.
    BelowThreshold,
    /// Outside the raster or on nodata: never used.
    Excluded,
}

/// A record as the metrics see it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MetricRecord {
    /// WGS84 longitude, degrees.
    pub lon: f64,
    /// WGS84 latitude, degrees.
    pub lat: f64,
    /// How it takes part.
    pub usage: RecordUse,
}

/// A patch as the metrics see it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PatchInfo {
    /// Patch id (scan order of its first cell, 1-based).
    pub id: u32,
    /// 1 inside M, 2 outside.
    pub class: u8,
    /// Cells.
    pub cells: u64,
    /// Area, km2.
    pub area_km2: f64,
    /// Records in its cells.
    pub records: u64,
}

impl PatchInfo {
    /// Whether it is an occupied patch: class 1 holding at least one record.
    pub fn occupied(&self) -> bool {
        self.class == crate::raster_io::class::INSIDE && self.records > 0
    }
}

/// The per-patch columns (appended to patches.csv).
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize)]
pub struct PatchMetrics {
    /// Edge-to-edge geodesic distance to the nearest other patch (any class), km.
    pub nearest_patch_km: Option<f64>,
    /// Edge-to-edge geodesic distance to the nearest other occupied patch, km.
    pub nearest_occupied_km: Option<f64>,
    /// Edge-to-edge geodesic distance to the nearest other class-1 patch (the range inside M),
    /// km; the vector layers' `nearest_range_km` (not a patches.csv column).
    #[serde(skip)]
    pub nearest_range_km: Option<f64>,
    /// Reached from the occupied patches by jumps of at most `--gap-km` (empty without it).
    pub reachable: Option<bool>,
    /// Fewest jumps that reach it (0 for occupied patches; empty when unreached or without `--gap-km`).
    pub reach_jumps: Option<u32>,
}

/// EOO, AOO and their comparison with criterion B, for one basis (records or modelled range).
#[derive(Debug, Clone, Serialize, PartialEq, schemars::JsonSchema)]
pub struct Figures {
    /// EOO, km2: the hull area, or AOO when the hull area is smaller; null when no hull exists.
    pub eoo_km2: Option<f64>,
    /// How EOO is computed.
    pub eoo_method: String,
    /// Geodesic area of the convex hull itself, km2.
    pub eoo_hull_km2: Option<f64>,
    /// Hull vertices.
    pub eoo_hull_vertices: usize,
    /// Whether EOO was set equal to AOO because the hull area was smaller.
    pub eoo_set_to_aoo: bool,
    /// AOO, km2: the minimum over the grid origins.
    pub aoo_km2: f64,
    /// Smallest AOO over the grid origins, km2 (equal to `aoo_km2`).
    pub aoo_min_km2: f64,
    /// Largest AOO over the grid origins, km2.
    pub aoo_max_km2: f64,
    /// AOO cell width, km.
    pub aoo_cell_km: f64,
    /// Occupied cells at the origin used.
    pub aoo_cells: usize,
    /// Grid origin (x, y offsets in the AOO CRS, km) that gave `aoo_km2`.
    pub aoo_origin_km: [f64; 2],
    /// Distinct points the hull was built from.
    pub distinct_points: usize,
    /// Comparison with criterion B's thresholds.
    pub criterion_b: CriterionB,
    /// Degenerate cases, the EOO := AOO rule, and other things to know.
    pub notes: Vec<String>,
}

/// The AOO grid.
#[derive(Debug, Clone, Serialize, PartialEq, schemars::JsonSchema)]
pub struct AooGridReport {
    /// PROJ definition of the equal-area CRS.
    pub crs: String,
    /// Cell width, km.
    pub cell_km: f64,
    /// The origins evaluated, in words.
    pub origins: String,
}

/// Metrics of the occupied modelled range.
#[derive(Debug, Clone, Serialize, PartialEq, schemars::JsonSchema)]
pub struct ModelledFigures {
    /// Occupied patches (class 1 holding records).
    pub occupied_patches: usize,
    /// The rule for modelled AOO.
    pub aoo_rule: String,
    /// What the modelled EOO hull is built from.
    pub eoo_points: String,
    /// EOO, AOO and criterion B.
    #[serde(flatten)]
    pub figures: Figures,
}

/// Stepping-stone reach from the occupied patches.
#[derive(Debug, Clone, Serialize, PartialEq, schemars::JsonSchema)]
pub struct ReachReport {
    /// Largest jump, km.
    pub gap_km: f64,
    /// Patches reached (the occupied ones included).
    pub reachable_patches: usize,
    /// Their area, km2.
    pub reachable_km2: f64,
    /// Area of reached class-2 patches (suitable beyond M), km2.
    pub reachable_outside_accessible_km2: f64,
    /// Patches not reached.
    pub unreachable_patches: usize,
    /// Their area, km2.
    pub unreachable_km2: f64,
    /// How reach is defined.
    pub rule: String,
}

/// The `metrics` section of summary.json, and the output of `areal extent`.
#[derive(Debug, Clone, Serialize, PartialEq, schemars::JsonSchema)]
pub struct Metrics {
    /// Records the record figures are built from.
    pub records_used: usize,
    /// Records below the threshold (left out unless `keep_dropped`).
    pub records_below_threshold: usize,
    /// Whether records below the threshold were kept.
    pub keep_dropped: bool,
    /// Figures of the records.
    #[serde(flatten)]
    pub records: Figures,
    /// The AOO grid.
    pub aoo_grid: AooGridReport,
    /// Figures of the occupied modelled range; null without a range or without occupied patches.
    pub modelled: Option<ModelledFigures>,
    /// Patch structure; null without a range.
    pub structure: Option<StructureReport>,
    /// Stepping-stone reach; null without a range or without `--gap-km`.
    pub reach: Option<ReachReport>,
    /// General notes (`general_notes` in JSON: the flattened record figures already have
    /// a `notes` key, and a second one would be a duplicate key).
    #[serde(rename = "general_notes")]
    pub notes: Vec<String>,
}

impl Metrics {
    /// Readable lines for the text summary.
    pub fn text_lines(&self) -> Vec<String> {
        let f = |x: Option<f64>| x.map_or("n/a".to_string(), |v| format!("{v:.3}"));
        let mut out = vec![format!(
            "  EOO (records)   {:>14} km2 from {} record(s){}",
            f(self.records.eoo_km2),
            self.records_used,
            if self.records.eoo_set_to_aoo {
                " (set equal to AOO)"
            } else {
                ""
            }
        )];
        out.push(format!(
            "  AOO (records)   {:>14.3} km2 ({} cells of {} km; {:.3} to {:.3} km2 over 16 grid origins)",
            self.records.aoo_km2,
            self.records.aoo_cells,
            self.records.aoo_cell_km,
            self.records.aoo_min_km2,
            self.records.aoo_max_km2
        ));
        if let Some(m) = &self.modelled {
            out.push(format!(
                "  EOO (modelled)  {:>14} km2, AOO (modelled) {:.3} km2, {} occupied patch(es)",
                f(m.figures.eoo_km2),
                m.figures.aoo_km2,
                m.occupied_patches
            ));
        }
        if let Some(r) = &self.reach {
            out.push(format!(
                "  reach           {} patch(es), {:.3} km2 within jumps of {} km ({:.3} km2 beyond M)",
                r.reachable_patches, r.reachable_km2, r.gap_km, r.reachable_outside_accessible_km2
            ));
        }
        let cb = &self.records.criterion_b;
        for s in &cb.statements {
            out.push(format!("  criterion B     {s}"));
        }
        if let Some(m) = &self.modelled {
            for s in &m.figures.criterion_b.statements {
                out.push(format!("  criterion B     {s}"));
            }
        }
        out.push(format!("  caution         {}", cb.caution));
        for n in self.records.notes.iter().chain(&self.notes) {
            out.push(format!("  note: {n}"));
        }
        if let Some(m) = &self.modelled {
            for n in &m.figures.notes {
                out.push(format!("  note (modelled): {n}"));
            }
        }
        out
    }
}
