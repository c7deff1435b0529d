//! Range geometries of batch species, made by the worker that ran the species (so the
//! polygonizing runs in parallel, and on each shard's own task) and kept in
//! `DIR/.areal-batch/ranges/<species>.wkb` for `areal gather`. Each file starts with the
//! SHA-256 of the classes.tif it was made from (as the run file records it) and a newline,
//! then the WKB of the WGS84 multipolygon; gather uses it only when that checksum is the
//! run file's, and polygonizes the folder's classes.tif otherwise.

use super::runfile;
use crate::{Error, Result};
use gdal::vector::{Geometry, ToGdal};
use geo_types::MultiPolygon;
use std::path::{Path, PathBuf};

fn cache_path(out: &Path, name: &str) -> PathBuf {
    out.join(".areal-batch")
        .join("ranges")
        .join(format!("{name}.wkb"))
}

/// The classes.tif checksum recorded in a run folder's run file.
fn classes_sha(run_dir: &Path) -> Option<String> {
    runfile::read(&run_dir.join(runfile::RUN_FILE))
        .ok()?
        .outputs
        .get("classes.tif")
        .cloned()
}

/// Polygonize the range of `out/name` and keep it for gather.
pub(crate) fn store(out: &Path, name: &str) -> Result<()> {
    let dir = out.join(name);
    let Some(sha) = classes_sha(&dir) else {
        return Ok(());
    };
    let mp = crate::vectors::range_lonlat(&dir.join("classes.tif"))?;
    let p = cache_path(out, name);
    let wkb = mp
        .to_gdal()
        .and_then(|g| g.wkb())
        .map_err(Error::gdal(&p, "encoding the range"))?;
    std::fs::create_dir_all(p.parent().expect("inside DIR")).map_err(Error::io(&p))?;
    let mut bytes = format!("{sha}\n").into_bytes();
    bytes.extend(wkb);
    super::write_durable_bytes(&p, &bytes)
}

/// The range of `out/name`: from the worker's file when it matches the folder, else made now.
pub(crate) fn load(out: &Path, name: &str) -> Result<MultiPolygon<f64>> {
    let dir = out.join(name);
    if let (Some(sha), Ok(bytes)) = (classes_sha(&dir), std::fs::read(cache_path(out, name))) {
        if bytes.len() > 65 && bytes[..64] == *sha.as_bytes() && bytes[64] == b'\n' {
            if let Ok(geo_types::Geometry::MultiPolygon(mp)) =
                Geometry::from_wkb(&bytes[65..]).and_then(|g| g.to_geo())
            {
                return Ok(mp);
            }
        }
    }
    crate::vectors::range_lonlat(&dir.join("classes.tif"))
}
