//! A range model rebuilt from a class raster (`classes.tif` of an earlier run), through the
//! same labeller and cell areas as the pass. Used by `areal polygons` and
//! `areal extent --range`, never by `areal range` itself.

use super::{ModelBuilder, ModelOptions, RangeModel, RowM, Totals};
use crate::access::AccessMask;
use crate::area::CellAreas;
use crate::patches::{Connectivity, Neumaier};
use crate::raster_io::{class, SuitabilityRaster, STRIP_ROWS};
use crate::{Error, GridSpec, Result};
use std::collections::BTreeMap;
use std::path::Path;

/// Read a class raster's rows `y0..y0 + rows` as class codes (0, 1, 2, 255), refusing any
/// other value.
pub(crate) fn read_class_rows(
    raster: &SuitabilityRaster,
    y0: usize,
    rows: usize,
    vals: &mut Vec<f64>,
    out: &mut Vec<u8>,
) -> Result<()> {
    raster.read_rows(y0, rows, vals)?;
    let w = raster.grid().width;
    out.clear();
    for (i, &v) in vals.iter().enumerate() {
        if !raster.is_data(v) || v == 255.0 {
            out.push(class::NODATA);
        } else if v == 0.0 || v == 1.0 || v == 2.0 {
            out.push(v as u8);
        } else {
            return Err(Error::UnsupportedRaster {
                path: raster.path().to_path_buf(),
                reason: format!(
                    "cell at row {}, column {} holds {v}; a range raster holds only the classes 0, 1, 2 and nodata 255 (give the classes.tif written by areal range)",
                    y0 + i / w,
                    i % w
                ),
            });
        }
    }
    Ok(())
}

impl RangeModel {
    /// Rebuild the model of a class raster: patches labelled with `connectivity` (ids as the
    /// pass gives them), true cell areas, the record counts of `records` (row -> columns of
    /// the records on it), and M from `access` when given. With M, every class-1 cell must lie
    /// in M and every class-2 cell outside it, or the raster and the M options do not belong
    /// together (an error naming `--accessible`).
    pub fn from_class_raster(
        path: &Path,
        connectivity: Connectivity,
        records: &BTreeMap<usize, Vec<(usize, u64)>>,
        access: Option<&mut AccessMask>,
    ) -> Result<RangeModel> {
        let raster = SuitabilityRaster::open(path)?;
        let grid = raster.grid().clone();
        let mut vals = Vec::new();
        let mut read = |y0: usize, n: usize, strip: &mut Vec<u8>| {
            read_class_rows(&raster, y0, n, &mut vals, strip)
        };
        build(path, &grid, connectivity, &mut read, records, access)
    }

    /// The model of an in-memory class grid (row-major, `grid.width` columns; classes 0, 1,
    /// 2, 255), with true cell areas and the record counts of `records` (row -> (col, count)).
    pub fn from_class_grid(
        grid: &GridSpec,
        connectivity: Connectivity,
        classes: &[u8],
        records: &BTreeMap<usize, Vec<(usize, u64)>>,
    ) -> Result<RangeModel> {
        let w = grid.width;
        let mut read = |y0: usize, n: usize, strip: &mut Vec<u8>| {
            strip.clear();
            strip.extend_from_slice(&classes[y0 * w..(y0 + n) * w]);
            Ok(())
        };
        build(
            Path::new("class grid"),
            grid,
            connectivity,
            &mut read,
            records,
            None,
        )
    }
}

type ReadRows<'a> = dyn FnMut(usize, usize, &mut Vec<u8>) -> Result<()> + 'a;

/// The model from class rows read strip by strip.
fn build(
    path: &Path,
    grid: &GridSpec,
    connectivity: Connectivity,
    read: &mut ReadRows<'_>,
    records: &BTreeMap<usize, Vec<(usize, u64)>>,
    mut access: Option<&mut AccessMask>,
) -> Result<RangeModel> {
    {
        let grid = grid.clone();
        let mut areas = CellAreas::new(&grid)?;
        let mut builder = ModelBuilder::new(&grid, connectivity, &ModelOptions::default());
        let mut strip = Vec::new();
        let mut in_m = vec![false; grid.width];
        let mut cells = [0u64; 4];
        let mut area: [Neumaier; 4] = Default::default(); // 0, 1, 2, M
        let empty = Vec::new();
        for y0 in (0..grid.height).step_by(STRIP_ROWS) {
            let n = STRIP_ROWS.min(grid.height - y0);
            read(y0, n, &mut strip)?;
            for r in 0..n {
                let row = y0 + r;
                let cls = &strip[r * grid.width..(r + 1) * grid.width];
                let row_areas = areas.row_allow_outside(row)?;
                let m = match access.as_deref_mut() {
                    None => RowM::Unknown,
                    Some(a) if a.is_whole_raster() => RowM::Whole,
                    Some(a) => {
                        a.fill_row(row, &mut in_m)?;
                        if let Some(c) = (0..grid.width).find(|&c| {
                            (cls[c] == class::INSIDE && !in_m[c])
                                || (cls[c] == class::OUTSIDE && in_m[c])
                        }) {
                            return Err(Error::InvalidOption {
                                option: "--accessible",
                                reason: format!(
                                    "the rebuilt M disagrees with {} at row {row}, column {c} (class {}); give the run's own M options and inputs",
                                    path.display(),
                                    cls[c]
                                ),
                            });
                        }
                        RowM::Cells(&in_m)
                    }
                };
                for (c, &k) in cls.iter().enumerate() {
                    let i = if k == class::NODATA { 3 } else { k as usize };
                    cells[i] += 1;
                    if i < 3 {
                        let a = row_areas.get(c);
                        area[i].add(a);
                        if m.contains(c) {
                            area[3].add(a);
                        }
                    }
                }
                let rr = records.get(&row).unwrap_or(&empty);
                builder.push_row(row, cls, &row_areas, rr, m)?;
            }
        }
        let totals = Totals {
            cells_unsuitable: cells[0],
            cells_inside: cells[1],
            cells_outside: cells[2],
            cells_nodata: cells[3],
            area_m2_unsuitable: area[0].value(),
            area_m2_inside: area[1].value(),
            area_m2_outside: area[2].value(),
            area_m2_accessible: area[3].value(),
        };
        let model = builder.finish(&grid, connectivity, totals)?;
        if let Some(p) = model.patches().iter().find(|p| !p.area_m2.is_finite()) {
            return Err(Error::UnsupportedRaster {
                path: path.to_path_buf(),
                reason: format!(
                    "patch {} has cells outside the valid area of the raster's projection, so its true area cannot be measured; set them to nodata or reproject the raster",
                    p.id
                ),
            });
        }
        Ok(model)
    }
}
