//! The `change` section of summary.json and the rows of change.csv.
//!
//! The key names are a contract (issue 12): `threshold`, `dispersal_km`,
//! `area_km2.{present_range, stable, lost, gained_within_reach, gained_out_of_reach}`,
//! `future_range_km2.{no_dispersal, limited_dispersal, full_dispersal}`, the same restricted to
//! M in `future_range_in_m_km2`, `percent_change` (and `percent_change_in_m`) of each against
//! the present range, `patches` per class and `aoo_km2` of the present and each future range.

use super::pass::FutureTotals;
use crate::crs::LonLat;
use crate::{GridSpec, Result};
use serde::Serialize;

/// Areas of the change classes, km2.
#[derive(Debug, Clone, Serialize, schemars::JsonSchema)]
pub struct ChangeAreas {
    /// The present range (class 1 of the present run), all of it.
    pub present_range: f64,
    /// Present range, suitable in the future.
    pub stable: f64,
    /// Present range, unsuitable in the future.
    pub lost: f64,
    /// New suitable cells within the dispersal distance of the present range.
    pub gained_within_reach: f64,
    /// New suitable cells beyond it (every gain without a dispersal distance).
    pub gained_out_of_reach: f64,
    /// Unsuitable at both dates (or suitable now beyond M and unsuitable later).
    pub unsuitable: f64,
}

/// The future range under the three dispersal rules, km2 (or percent).
#[derive(Debug, Clone, Serialize, schemars::JsonSchema)]
pub struct DispersalRules<T> {
    /// Stable cells only.
    pub no_dispersal: T,
    /// Stable cells and gains within reach.
    pub limited_dispersal: T,
    /// Stable cells and every gain.
    pub full_dispersal: T,
}

/// Cells and patches per change class.
#[derive(Debug, Clone, Serialize, schemars::JsonSchema)]
pub struct PerClass<T> {
    /// Class 0.
    pub unsuitable: T,
    /// Class 1.
    pub stable: T,
    /// Class 2.
    pub lost: T,
    /// Class 3.
    pub gained_within_reach: T,
    /// Class 4.
    pub gained_out_of_reach: T,
}

/// Connected patches per change class.
#[derive(Debug, Clone, Serialize, schemars::JsonSchema)]
pub struct PatchCounts {
    /// Class 1.
    pub stable: usize,
    /// Class 2.
    pub lost: usize,
    /// Class 3.
    pub gained_within_reach: usize,
    /// Class 4.
    pub gained_out_of_reach: usize,
}

/// Modelled AOO of the present and future ranges.
#[derive(Debug, Clone, Serialize, schemars::JsonSchema)]
pub struct ChangeAoo {
    /// AOO grid cell width, km.
    pub cell_km: f64,
    /// AOO of the present range, km2.
    pub present_range: f64,
    /// AOO of the future range under each rule, km2.
    pub future_range: DispersalRules<f64>,
    /// Change of each against the present range, percent.
    pub percent_change: DispersalRules<Option<f64>>,
    /// How it is counted.
    pub rule: String,
}

/// The `change` section for one future raster.
#[derive(Debug, Clone, Serialize, schemars::JsonSchema)]
pub struct ChangeReport {
    /// The future raster.
    pub future: String,
    /// Its subfolder (several futures) or null.
    pub folder: Option<String>,
    /// The threshold of the present run, applied unchanged.
    pub threshold: f64,
    /// Dispersal distance, km, or null.
    pub dispersal_km: Option<f64>,
    /// Areas per class, km2.
    pub area_km2: ChangeAreas,
    /// The future range, km2.
    pub future_range_km2: DispersalRules<f64>,
    /// The future range inside M, km2.
    pub future_range_in_m_km2: DispersalRules<f64>,
    /// Change of `future_range_km2` against the present range, percent (null without a present range).
    pub percent_change: DispersalRules<Option<f64>>,
    /// Change of `future_range_in_m_km2` against the present range, percent.
    pub percent_change_in_m: DispersalRules<Option<f64>>,
    /// Cells per class.
    pub cells: PerClass<u64>,
    /// Cells with no data at either date.
    pub cells_nodata: u64,
    /// Connected patches per class (classes 1 to 4).
    pub patches: PatchCounts,
    /// Modelled AOO (null with --no-metrics, or when no record is used).
    pub aoo_km2: Option<ChangeAoo>,
    /// How the classes are made, and what to keep in mind.
    pub notes: Vec<String>,
    /// Anything that needs attention.
    pub warnings: Vec<String>,
}

/// One row of change.csv.
#[derive(Debug, Clone, Serialize)]
pub struct ChangePatchRow {
    /// 1-based id in raster scan order of the patch's first cell.
    pub patch_id: u32,
    /// Change class 1 to 4.
    pub class: u8,
    /// Cells.
    pub cells: u64,
    /// True area, km2.
    pub area_km2: f64,
    /// Area-weighted centroid of the cell centres, WGS84.
    pub centroid_lon: f64,
    /// Centroid latitude.
    pub centroid_lat: f64,
    /// Bounding box, WGS84.
    pub min_lon: f64,
    /// Bounding box.
    pub min_lat: f64,
    /// Bounding box.
    pub max_lon: f64,
    /// Bounding box.
    pub max_lat: f64,
}

/// Percent change of `x` against `base` (null when there is no base).
pub(crate) fn percent(x: f64, base: f64) -> Option<f64> {
    (base > 0.0).then(|| 100.0 * (x - base) / base)
}

/// change.csv rows of the patches.
pub(crate) fn patch_rows(grid: &GridSpec, t: &FutureTotals) -> Result<Vec<ChangePatchRow>> {
    let ll = LonLat::new(grid)?;
    t.patches
        .iter()
        .map(|p| {
            let r = crate::report::patch_row(&ll, grid, p)?;
            Ok(ChangePatchRow {
                patch_id: r.patch_id,
                class: r.class,
                cells: r.cells,
                area_km2: r.area_km2,
                centroid_lon: r.centroid_lon,
                centroid_lat: r.centroid_lat,
                min_lon: r.min_lon,
                min_lat: r.min_lat,
                max_lon: r.max_lon,
                max_lat: r.max_lat,
            })
        })
        .collect()
}

/// The report of one future. `present_km2`: area of the present range.
pub(crate) fn build(
    future: String,
    folder: Option<String>,
    threshold: f64,
    dispersal_km: Option<f64>,
    present_km2: f64,
    t: &FutureTotals,
    aoo: Option<ChangeAoo>,
) -> ChangeReport {
    let km2 = |k: usize| t.area_m2[k].value() / 1e6;
    let (stable, lost, g3, g4) = (km2(1), km2(2), km2(3), km2(4));
    let (g3m, g4m) = (
        t.gained_in_m_m2[0].value() / 1e6,
        t.gained_in_m_m2[1].value() / 1e6,
    );
    let rules = |no: f64, lim: f64, full: f64| DispersalRules {
        no_dispersal: no,
        limited_dispersal: lim,
        full_dispersal: full,
    };
    let fut = rules(stable, stable + g3, stable + g3 + g4);
    let fut_m = rules(stable, stable + g3m, stable + g3m + g4m);
    let pc = |r: &DispersalRules<f64>| DispersalRules {
        no_dispersal: percent(r.no_dispersal, present_km2),
        limited_dispersal: percent(r.limited_dispersal, present_km2),
        full_dispersal: percent(r.full_dispersal, present_km2),
    };
    let count = |k: u8| t.patches.iter().filter(|p| p.class == k).count();
    let mut notes = vec![
        format!(
            "the threshold T = {threshold} was set from the records on the present raster and is applied unchanged to the future raster (the usual practice; the relation between suitability and presence is assumed to hold in the other climate)"
        ),
        "classes: 0 unsuitable at both dates, 1 stable, 2 lost, 3 gained within reach, 4 gained out of reach, 255 nodata at either date; the present range is class 1 of the present run (suitable inside M)".into(),
        "future ranges: no dispersal = stable; limited dispersal = stable + gained within reach; full dispersal = stable + every gain; the in-M figures count gains inside M only".into(),
        "every figure is a model-based projection: it inherits the errors of both suitability models, the records, the threshold and M".into(),
    ];
    match dispersal_km {
        Some(d) => notes.push(format!(
            "within reach: the geodesic distance on WGS84 (Karney 2013) from the cell centre to the nearest present-range cell centre is at most {d} km"
        )),
        None => notes.push(
            "no --dispersal-km: every gain is class 4 and limited dispersal equals no dispersal".into(),
        ),
    }
    let mut warnings = Vec::new();
    if t.cells[1] + t.cells[2] == 0 && present_km2 > 0.0 {
        warnings.push(
            "the whole present range is nodata in the future raster: stable and lost are empty"
                .into(),
        );
    }
    ChangeReport {
        future,
        folder,
        threshold,
        dispersal_km,
        area_km2: ChangeAreas {
            present_range: present_km2,
            stable,
            lost,
            gained_within_reach: g3,
            gained_out_of_reach: g4,
            unsuitable: km2(0),
        },
        percent_change: pc(&fut),
        percent_change_in_m: pc(&fut_m),
        future_range_km2: fut,
        future_range_in_m_km2: fut_m,
        cells: PerClass {
            unsuitable: t.cells[0],
            stable: t.cells[1],
            lost: t.cells[2],
            gained_within_reach: t.cells[3],
            gained_out_of_reach: t.cells[4],
        },
        cells_nodata: t.cells[5],
        patches: PatchCounts {
            stable: count(1),
            lost: count(2),
            gained_within_reach: count(3),
            gained_out_of_reach: count(4),
        },
        aoo_km2: aoo,
        notes,
        warnings,
    }
}
