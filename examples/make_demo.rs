//! Recipe for `demo-data/`: an invented scenario, fully deterministic.
//!
//! The fen lantern-beetle (*Lampyrella palustris*, a made-up species) lives in the
//! made-up Varn basin. A suitability model (invented here as a sum of smooth bumps and
//! hashed noise) covers 5 x 4 degrees at 1 arc-minute (300 x 240 cells) in EPSG:4326,
//! with a nodata lake. Sixty records sit in high suitability in the west; three
//! deliberately erroneous records sit in low suitability; one lies outside the raster.
//! The accessible area M is a hand-drawn polygon around the western basin; a second
//! suitable massif in the east lies beyond it.
//!
//! Run: `cargo run --example make_demo` (writes demo-data/ in place).

use gdal::raster::{Buffer, RasterCreationOptions};
use gdal::spatial_ref::SpatialRef;
use gdal::DriverManager;
use std::fmt::Write as _;

const W: usize = 300;
const H: usize = 240;
const WEST: f64 = 10.0;
const NORTH: f64 = 44.0;
const CELL: f64 = 1.0 / 60.0;
const NODATA: f32 = -9999.0;

/// A small deterministic hash to [0, 1).
fn hash01(a: u64, b: u64) -> f64 {
    let mut x = a.wrapping_mul(0x9E37_79B9_7F4A_7C15) ^ b.wrapping_mul(0xC2B2_AE3D_27D4_EB4F);
    x ^= x >> 31;
    x = x.wrapping_mul(0xBF58_476D_1CE4_E5B9);
    x ^= x >> 29;
    (x >> 11) as f64 / (1u64 << 53) as f64
}

fn bump(lon: f64, lat: f64, clon: f64, clat: f64, r: f64) -> f64 {
    let d2 = ((lon - clon) / r).powi(2) + ((lat - clat) / r).powi(2);
    (-d2).exp()
}

fn suitability(row: usize, col: usize) -> f32 {
    let lon = WEST + (col as f64 + 0.5) * CELL;
    let lat = NORTH - (row as f64 + 0.5) * CELL;
    // The lake: nodata.
    if ((lon - 13.2) / 0.35).powi(2) + ((lat - 42.9) / 0.2).powi(2) < 1.0 {
        return NODATA;
    }
    let s = 0.85 * bump(lon, lat, 11.4, 42.3, 0.9)
        + 0.55 * bump(lon, lat, 12.3, 41.3, 0.45)
        + 0.7 * bump(lon, lat, 14.2, 41.0, 0.55)
        + 0.35 * bump(lon, lat, 14.4, 43.4, 0.3);
    let noise = 0.12 * (hash01(row as u64 / 3, col as u64 / 3) - 0.5)
        + 0.03 * (hash01(row as u64, col as u64) - 0.5);
    (s + noise).clamp(0.0, 1.0) as f32
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data");
    std::fs::create_dir_all(&dir)?;

    let values: Vec<f32> = (0..H * W).map(|i| suitability(i / W, i % W)).collect();
    let opts = RasterCreationOptions::from_iter(["TILED=YES", "COMPRESS=DEFLATE", "PREDICTOR=3"]);
    let path = dir.join("suitability.tif");
    let _ = std::fs::remove_file(&path);
    let mut ds = DriverManager::get_driver_by_name("GTiff")?
        .create_with_band_type_with_options::<f32, _>(&path, W, H, 1, &opts)?;
    ds.set_geo_transform(&[WEST, CELL, 0.0, NORTH, 0.0, -CELL])?;
    ds.set_spatial_ref(&SpatialRef::from_epsg(4326)?)?;
    let mut band = ds.rasterband(1)?;
    band.set_no_data_value(Some(NODATA as f64))?;
    band.write((0, 0), (W, H), &mut Buffer::new((W, H), values.clone()))?;
    ds.close()?;

    // Records: weighted draws from high suitability in the western basin.
    let mut csv =
        String::from("occurrenceID,decimalLongitude,decimalLatitude,basisOfRecord,recordedBy\n");
    let mut n = 0;
    let mut k = 0u64;
    while n < 60 {
        k += 1;
        let row = (hash01(k, 1) * H as f64) as usize;
        let col = (hash01(k, 2) * W as f64 * 0.55) as usize;
        let v = values[row * W + col];
        if v >= 0.55 && hash01(k, 3) < v as f64 {
            let lon = WEST + (col as f64 + hash01(k, 4)) * CELL;
            let lat = NORTH - (row as f64 + hash01(k, 5)) * CELL;
            n += 1;
            writeln!(
                csv,
                "VARN-{n:03},{lon:.5},{lat:.5},HumanObservation,survey team A"
            )?;
        }
    }
    // Three erroneous records on low suitability (misidentifications), inside M.
    for (i, (lon, lat)) in [(10.55, 43.62), (11.05, 40.35), (12.35, 43.05)]
        .iter()
        .enumerate()
    {
        writeln!(
            csv,
            "VARN-E{:02},{lon:.5},{lat:.5},HumanObservation,volunteer upload",
            i + 1
        )?;
    }
    // A duplicate of the first record, and one record outside the raster.
    let first = csv
        .lines()
        .nth(1)
        .unwrap()
        .split(',')
        .skip(1)
        .take(2)
        .collect::<Vec<_>>()
        .join(",");
    writeln!(csv, "VARN-D01,{first},PreservedSpecimen,museum collection")?;
    writeln!(
        csv,
        "VARN-X01,9.62000,42.10000,HumanObservation,volunteer upload"
    )?;
    std::fs::write(dir.join("records.csv"), csv)?;

    // M: the western basin, hand-drawn (counter-clockwise, RFC 7946).
    let ring = [
        (10.10, 40.15),
        (11.60, 40.05),
        (12.90, 40.35),
        (13.05, 41.40),
        (12.70, 42.60),
        (12.95, 43.55),
        (11.80, 43.90),
        (10.40, 43.85),
        (10.05, 42.70),
        (10.10, 40.15),
    ];
    let coords: Vec<String> = ring
        .iter()
        .map(|(x, y)| format!("[{x:.2}, {y:.2}]"))
        .collect();
    let gj = format!(
        "{{\"type\": \"FeatureCollection\", \"name\": \"varn_basin_m\", \"features\": [{{\"type\": \"Feature\", \
         \"properties\": {{\"name\": \"Varn basin accessible area\"}}, \"geometry\": {{\"type\": \"Polygon\", \
         \"coordinates\": [[{}]]}}}}]}}\n",
        coords.join(", ")
    );
    std::fs::write(dir.join("accessible.geojson"), gj)?;
    println!("wrote {}", dir.display());
    Ok(())
}
