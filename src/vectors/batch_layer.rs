//! Vector pieces of a batch (`areal batch`, `areal gather`): one run's class-1 range as a WGS84
//! lon/lat multipolygon, and a table with one such range per row written as a GeoPackage layer.
//! Both reuse the vector step's reader, polygonizer, lon/lat conversion and writer.

use super::inputs::{read_run, Table};
use super::lonlat::{wgs84, ToLonLat};
use super::polygonize::polygonize_labels;
use super::write::{write_gpkg, Geom, LayerData};
use crate::patches::Connectivity;
use crate::raster_io::class;
use crate::Result;
use geo_types::MultiPolygon;
use std::path::Path;

/// The class-1 cells (suitable inside M) of a run's `classes.tif` as one multipolygon in
/// WGS84 lon/lat (pixel edges, cut at the antimeridian, counter-clockwise exteriors). Grids
/// above `max_cells` are refused (the grid is held whole, 5 bytes a cell).
pub fn range_lonlat(classes: &Path, max_cells: u64) -> Result<MultiPolygon<f64>> {
    let run = read_run(classes, max_cells)?;
    let mut ids: Vec<u32> = run
        .classes
        .iter()
        .map(|&k| u32::from(k == class::INSIDE))
        .collect();
    drop(run.classes);
    let native = polygonize_labels(&mut ids, &run.grid, Connectivity::Four, 1, classes)?
        .pop()
        .unwrap_or_else(|| MultiPolygon(Vec::new()));
    drop(ids);
    ToLonLat::new(&run.grid)?.polygons(&native, 0.0, "the range", classes)
}

/// Write the CSV table `csv` (columns typed from their values) as layer `layer` of a new
/// GeoPackage `path` in WGS84, with `geoms[i]` as the geometry of row i (None: no geometry).
pub fn write_table_gpkg(
    path: &Path,
    csv: &Path,
    layer: &'static str,
    geoms: Vec<Option<MultiPolygon<f64>>>,
) -> Result<()> {
    let table = Table::read_csv(csv)?;
    let geoms = geoms.into_iter().map(|g| g.map(Geom::Area)).collect();
    write_gpkg(
        path,
        &wgs84()?,
        &[LayerData {
            name: layer,
            points: false,
            table: &table,
            geoms,
        }],
    )
}
