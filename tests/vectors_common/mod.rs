//! Fixtures and independent checks for tests/vectors.rs: runs on a regional and a global grid,
//! a GeoPackage reader, geodesic areas (GeographicLib) and RFC 7946 ring checks.
#![allow(dead_code)]

use super::common::*;
use gdal::vector::LayerAccess;
use geographiclib_rs::{Geodesic, InverseGeodesic, PolygonArea, Winding};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// Rings of polygons: polygon -> ring (exterior first) -> (x, y).
pub type Polys = Vec<Vec<Vec<(f64, f64)>>>;

pub struct Feat {
    pub attrs: BTreeMap<String, String>,
    pub polygons: Polys,
    pub point: Option<(f64, f64)>,
    pub valid: bool,
}

pub struct GpkgLayer {
    pub name: String,
    pub fields: Vec<String>,
    pub features: Vec<Feat>,
}

pub fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

fn ring_of(ls: &geo_types::LineString<f64>) -> Vec<(f64, f64)> {
    ls.0.iter().map(|c| (c.x, c.y)).collect()
}

fn polys_of(g: geo_types::Geometry<f64>) -> Polys {
    let poly = |p: geo_types::Polygon<f64>| {
        let mut v = vec![ring_of(p.exterior())];
        v.extend(p.interiors().iter().map(ring_of));
        v
    };
    match g {
        geo_types::Geometry::Polygon(p) => vec![poly(p)],
        geo_types::Geometry::MultiPolygon(mp) => mp.0.into_iter().map(poly).collect(),
        _ => Vec::new(),
    }
}

/// Every layer, feature, field (as text) and geometry of a GeoPackage, read through GDAL.
pub fn read_gpkg(path: &Path) -> Vec<GpkgLayer> {
    let ds = gdal::Dataset::open(path).unwrap();
    let mut out = Vec::new();
    for mut layer in ds.layers() {
        let fields: Vec<String> = layer.defn().fields().map(|f| f.name()).collect();
        let mut features = Vec::new();
        for f in layer.features() {
            let mut attrs = BTreeMap::new();
            for (i, n) in fields.iter().enumerate() {
                attrs.insert(n.clone(), f.field_as_string(i).unwrap().unwrap_or_default());
            }
            let (mut polygons, mut point, mut valid) = (Vec::new(), None, true);
            if let Some(g) = f
                .geometry()
                .filter(|g| unsafe { !g.c_geometry().is_null() })
            {
                valid = g.is_valid();
                match g.to_geo().unwrap() {
                    geo_types::Geometry::Point(p) => point = Some((p.x(), p.y())),
                    other => polygons = polys_of(other),
                }
            }
            features.push(Feat {
                attrs,
                polygons,
                point,
                valid,
            });
        }
        out.push(GpkgLayer {
            name: layer.name(),
            fields,
            features,
        });
    }
    out
}

/// Polygons of a GeoJSON geometry value.
pub fn polygons_of_geojson(g: &serde_json::Value) -> Polys {
    let ring = |r: &serde_json::Value| -> Vec<(f64, f64)> {
        r.as_array()
            .unwrap()
            .iter()
            .map(|p| (p[0].as_f64().unwrap(), p[1].as_f64().unwrap()))
            .collect()
    };
    let poly = |p: &serde_json::Value| -> Vec<Vec<(f64, f64)>> {
        p.as_array().unwrap().iter().map(ring).collect()
    };
    match g["type"].as_str() {
        Some("Polygon") => vec![poly(&g["coordinates"])],
        Some("MultiPolygon") => g["coordinates"]
            .as_array()
            .unwrap()
            .iter()
            .map(poly)
            .collect(),
        _ => Vec::new(),
    }
}

/// Twice the signed planar area of a ring (positive = counter-clockwise).
pub fn shoelace2(r: &[(f64, f64)]) -> f64 {
    r.windows(2)
        .map(|w| w[0].0 * w[1].1 - w[1].0 * w[0].1)
        .sum()
}

/// RFC 7946 section 3.1.6: exterior rings counter-clockwise, holes clockwise; rings closed.
pub fn check_winding(poly: &[Vec<(f64, f64)>], what: &str) {
    for (i, r) in poly.iter().enumerate() {
        assert_eq!(r.first(), r.last(), "{what}: ring not closed");
        let a = shoelace2(r);
        if i == 0 {
            assert!(a > 0.0, "{what}: exterior ring is not counter-clockwise");
        } else {
            assert!(a < 0.0, "{what}: hole is not clockwise");
        }
    }
}

/// Planar area (km2) of projected polygons in metres: exteriors minus holes.
pub fn planar_km2(polys: &Polys) -> f64 {
    polys
        .iter()
        .map(|p| {
            let e = shoelace2(&p[0]).abs() / 2.0;
            e - p[1..].iter().map(|h| shoelace2(h).abs() / 2.0).sum::<f64>()
        })
        .sum::<f64>()
        / 1e6
}

/// Geodesic area (km2, WGS84, GeographicLib PolygonArea) of lon/lat polygons whose
/// east-west edges are parallels: those edges are cut every 0.002 degree first. A geodesic
/// chord of length L departs from its parallel by a lens of area ~ L^3 tan(phi) / (12 R), so
/// at 0.002 degree (222 m) the error is below 1e-7 relative for the cells of these tests.
pub fn area_km2_geodesic(polys: &Polys) -> f64 {
    let g = Geodesic::wgs84();
    let ring_area = |r: &[(f64, f64)]| -> f64 {
        let mut pa = PolygonArea::new(&g, Winding::CounterClockwise);
        for w in r.windows(2) {
            let (a, b) = (w[0], w[1]);
            let n = if a.1 == b.1 {
                ((b.0 - a.0).abs() / 0.002).ceil().max(1.0) as usize
            } else {
                1
            };
            for i in 0..n {
                let t = i as f64 / n as f64;
                pa.add_point(a.1, a.0 + t * (b.0 - a.0));
            }
        }
        // Signed (positive counter-clockwise), so a clockwise hole gives -A, not earth - A.
        let (_, area, _) = pa.compute(true);
        area.abs()
    };
    polys
        .iter()
        .map(|p| ring_area(&p[0]) - p[1..].iter().map(|h| ring_area(h)).sum::<f64>())
        .sum::<f64>()
        / 1e6
}

/// Geodesic area (km2, WGS84, GeographicLib PolygonArea) of lon/lat polygons as written:
/// every edge a geodesic, nothing added.
pub fn area_km2_geodesic_as_written(polys: &Polys) -> f64 {
    let g = Geodesic::wgs84();
    let ring_area = |r: &[(f64, f64)]| -> f64 {
        let mut pa = PolygonArea::new(&g, Winding::CounterClockwise);
        for &(lon, lat) in &r[..r.len() - 1] {
            pa.add_point(lat, lon);
        }
        let (_, area, _) = pa.compute(true);
        area.abs()
    };
    polys
        .iter()
        .map(|p| ring_area(&p[0]) - p[1..].iter().map(|h| ring_area(h)).sum::<f64>())
        .sum::<f64>()
        / 1e6
}

/// Geodesic distance in metres between (lon, lat) points (GeographicLib).
pub fn geodesic_m(a: (f64, f64), b: (f64, f64)) -> f64 {
    Geodesic::wgs84().inverse(a.1, a.0, b.1, b.0)
}

/// Every number in a "coordinates" array of `text` has at most `n` decimals.
pub fn assert_decimals_at_most(text: &str, n: usize, what: &str) {
    for chunk in text.split("\"coordinates\":").skip(1) {
        let end = chunk.find('}').unwrap_or(chunk.len());
        for tok in
            chunk[..end].split(|c: char| !(c.is_ascii_digit() || c == '.' || c == '-' || c == 'e'))
        {
            if let Some((_, frac)) = tok.split_once('.') {
                assert!(
                    frac.len() <= n,
                    "{what}: coordinate {tok} has more than {n} decimals"
                );
            }
        }
    }
}

/// 8-connected labels of classes 1 and 2 in scan order (an independent flood fill).
pub fn label_cells(classes: &[u8], w: usize) -> Vec<u32> {
    let h = classes.len() / w;
    let mut lab = vec![0u32; classes.len()];
    let mut next = 0;
    for s in 0..classes.len() {
        if !(classes[s] == 1 || classes[s] == 2) || lab[s] != 0 {
            continue;
        }
        next += 1;
        lab[s] = next;
        let mut stack = vec![s];
        while let Some(i) = stack.pop() {
            let (r, c) = ((i / w) as i64, (i % w) as i64);
            for dr in -1..=1 {
                for dc in -1..=1 {
                    let (nr, nc) = (r + dr, c + dc);
                    if nr < 0 || nc < 0 || nr >= h as i64 || nc >= w as i64 {
                        continue;
                    }
                    let j = nr as usize * w + nc as usize;
                    if classes[j] == classes[s] && lab[j] == 0 {
                        lab[j] = next;
                        stack.push(j);
                    }
                }
            }
        }
    }
    lab
}

/// Regional fixture: 48 x 40 cells of 0.25 degree, 10..22 E, 40..50 N, suitable (0.9) cells in
/// shapes with a hole and an island, a corner-touching chain, a patch cut by M's edge, a patch
/// beyond M, scattered cells; M a quadrilateral with a slanted east edge; records in patches,
/// one on an unsuitable cell, one outside the raster.
pub fn regional_args(dir: &Path, out: &Path, extra: &[&str]) -> Vec<String> {
    let (w, h) = (48usize, 40usize);
    let mut v = vec![0.1f32; w * h];
    let mut set = |r: usize, c: usize| v[r * w + c] = 0.9;
    for r in 5..15 {
        for c in 3..13 {
            if !((8..11).contains(&r) && (6..10).contains(&c)) {
                set(r, c);
            }
        }
    }
    set(9, 7); // island in the hole
    for k in 0..4 {
        set(20 + k, 5 + k); // corner-touching chain
    }
    for r in 3..6 {
        for c in 20..30 {
            set(r, c); // cut by M's east edge
        }
    }
    for r in 25..32 {
        for c in 30..40 {
            if !(r == 28 && c < 35) {
                set(r, c); // beyond M, with a notch
            }
        }
    }
    let mut s = 12345u64;
    for _ in 0..60 {
        s = s
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        let i = (s >> 33) as usize % (w * h);
        v[i] = 0.9;
    }
    let tif = dir.join("s.tif");
    write_raster(
        &tif,
        w,
        h,
        [10.0, 0.25, 0.0, 50.0, 0.0, -0.25],
        Some(4326),
        None,
        &v,
    );
    let m = dir.join("m.geojson");
    std::fs::write(
        &m,
        r#"{"type":"FeatureCollection","features":[{"type":"Feature","properties":{},"geometry":{"type":"Polygon","coordinates":[[[10,40],[16.05,40],[17.2,50],[10,50],[10,40]]]}}]}"#,
    )
    .unwrap();
    let rec = dir.join("r.csv");
    std::fs::write(
        &rec,
        "lon,lat\n11.1,48.1\n12.9,46.3\n11.6,44.6\n10.1,40.1\n30,45\n",
    )
    .unwrap();
    let mut a: Vec<String> = [
        "range",
        "--suitability",
        tif.to_str().unwrap(),
        "--records",
        rec.to_str().unwrap(),
        "--threshold",
        "0.5",
        "--accessible",
        m.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    a.extend(extra.iter().map(|s| s.to_string()));
    a
}

/// Run the regional fixture with `extra` options into dir/out; returns the folder.
pub fn regional_run(dir: &Path, extra: &[&str]) -> PathBuf {
    std::fs::create_dir_all(dir).unwrap();
    let out = dir.join("out");
    let args = regional_args(dir, &out, extra);
    let o = areal().args(&args).output().unwrap();
    assert!(o.status.success(), "{}", stderr(&o));
    out
}

/// Global fixture: 360 x 180 cells of 1 degree starting at `west`; a 6 x 5 patch with a hole
/// across the antimeridian, a 4 x 3 patch across the Greenwich meridian, both with the grid's
/// own seam where `west` puts it; M a 1500 km buffer around a record in the first patch.
pub fn global_run(dir: &Path, west: f64) -> PathBuf {
    let (w, h) = (360usize, 180usize);
    let mut v = vec![0.1f32; w * h];
    let col = |lon: f64| ((lon - west).rem_euclid(360.0)) as usize;
    for r in 76..81 {
        for lon in [177.0, 178.0, 179.0, 180.0, 181.0, 182.0] {
            if !(r == 78 && lon == 181.0) {
                v[r * w + col(lon)] = 0.9;
            }
        }
        if r < 79 {
            for lon in [-2.0, -1.0, 0.0, 1.0] {
                v[r * w + col(lon)] = 0.9;
            }
        }
    }
    let tif = dir.join("g.tif");
    write_raster(
        &tif,
        w,
        h,
        [west, 1.0, 0.0, 90.0, 0.0, -1.0],
        Some(4326),
        None,
        &v,
    );
    let rec = dir.join("r.csv");
    std::fs::write(&rec, "lon,lat\n179.5,11.5\n").unwrap();
    let out = dir.join("out");
    let o = run(&[
        "range",
        "--suitability",
        tif.to_str().unwrap(),
        "--records",
        rec.to_str().unwrap(),
        "--threshold",
        "0.5",
        "--buffer-km",
        "1500",
        "--out",
        out.to_str().unwrap(),
        "--vectors",
        "--vector-crs",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    out
}
