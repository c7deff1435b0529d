//! Vector pieces of a batch (`areal batch`, `areal gather`): one run's class-1 range as a WGS84
//! lon/lat multipolygon, and a table with one such range per row written as a GeoPackage layer.
//! Both reuse the vector step's reader, polygonizer, lon/lat conversion and writer.

use super::inputs::Table;
use super::lonlat::ToLonLat;
use super::write::{write_gpkg, Geom, LayerData};
use crate::crs::wgs84;
use crate::model::RangeModel;
use crate::patches::Connectivity;
use crate::raster_io::class;
use crate::Result;
use geo_types::MultiPolygon;
use std::path::Path;

/// The class-1 cells (suitable inside M) of a run's `classes.tif` as one multipolygon in
/// WGS84 lon/lat (pixel edges, with vertices along parallels on lon/lat grids, cut at the
/// antimeridian, counter-clockwise exteriors). The range model is rebuilt from the raster
/// and traced like the vector step's `range` layer; memory follows runs, not cells.
pub fn range_lonlat(classes: &Path) -> Result<MultiPolygon<f64>> {
    let model = RangeModel::from_class_raster(
        classes,
        Connectivity::Eight,
        &std::collections::BTreeMap::new(),
        None,
    )?;
    let traced = super::source::trace(&model)?;
    let grid = model.grid();
    let mut polys = Vec::new();
    for (i, ps) in traced.patches.iter().enumerate() {
        if model.patches()[i].class == class::INSIDE {
            polys.extend(super::layers::native(ps, grid, None, classes)?.0);
        }
    }
    ToLonLat::new(grid)?.polygons(&MultiPolygon(polys), 0.0, "the range", classes)
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
