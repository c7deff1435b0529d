//! `sensitivity` in summary.json against an independent recount on the demo: the threshold
//! from the record values (least training presence with E, Pearson et al. 2007:
//! k = floor(n E / 100), T = the lowest remaining value, one value per occupied cell), the
//! cells at or above T counted from the suitability raster read through GDAL, M rasterised
//! by GDAL (cell centres, GDAL's default rule), and each cell's true area from the
//! authalic-latitude closed form (Snyder 1987, USGS PP 1395, eq. 3-12) on WGS84.

mod common;
use common::*;
use gdal::vector::LayerAccess;
use gdal::Dataset;
use std::collections::BTreeMap;

const A: f64 = 6378137.0;
const F: f64 = 1.0 / 298.257223563;

/// Snyder (1987) eq. 3-12.
fn q(phi_deg: f64) -> f64 {
    let e2 = F * (2.0 - F);
    let e = e2.sqrt();
    let s = phi_deg.to_radians().sin();
    (1.0 - e2) * (s / (1.0 - e2 * s * s) - (1.0 / (2.0 * e)) * ((1.0 - e * s) / (1.0 + e * s)).ln())
}

struct Recount {
    values: Vec<f64>, // one per occupied cell
    suit: Vec<f64>,
    data: Vec<bool>,
    in_m: Vec<u8>,
    row_area_km2: Vec<f64>,
    w: usize,
}

impl Recount {
    fn demo(out: &std::path::Path) -> Self {
        Self::demo_with_m(out, &demo("accessible.geojson"))
    }

    /// The demo's raster and records with the M polygons of `m`.
    fn demo_with_m(out: &std::path::Path, m: &std::path::Path) -> Self {
        let ds = Dataset::open(demo("suitability.tif")).unwrap();
        let gt = ds.geo_transform().unwrap();
        let band = ds.rasterband(1).unwrap();
        let (w, h) = band.size();
        let nodata = band.no_data_value();
        let suit: Vec<f64> = band
            .read_as::<f64>((0, 0), (w, h), (w, h), None)
            .unwrap()
            .data()
            .to_vec();
        let data: Vec<bool> = suit
            .iter()
            .map(|&v| v.is_finite() && Some(v) != nodata)
            .collect();
        // M: GDAL rasterises the polygons (a cell is in when its centre is).
        let mut mem = gdal::DriverManager::get_driver_by_name("MEM")
            .unwrap()
            .create_with_band_type::<u8, _>("", w, h, 1)
            .unwrap();
        mem.set_geo_transform(&gt).unwrap();
        let poly = Dataset::open(m).unwrap();
        let geoms: Vec<gdal::vector::Geometry> = poly
            .layer(0)
            .unwrap()
            .features()
            .map(|f| f.geometry().unwrap().clone())
            .collect();
        let burn = vec![1.0; geoms.len()];
        gdal::raster::rasterize(&mut mem, &[1], &geoms, &burn, None).unwrap();
        let in_m = mem
            .rasterband(1)
            .unwrap()
            .read_as::<u8>((0, 0), (w, h), (w, h), None)
            .unwrap()
            .data()
            .to_vec();
        let dlon = gt[1].abs().to_radians();
        let row_area_km2 = (0..h)
            .map(|r| {
                let (top, bottom) = (gt[3] + r as f64 * gt[5], gt[3] + (r + 1) as f64 * gt[5]);
                A * A / 2.0 * dlon * (q(top) - q(bottom)).abs() / 1e6
            })
            .collect();
        // One value per occupied cell: the records' cells from records.csv, their values
        // read here from the raster through GDAL.
        let (hd, rows) = read_csv(&out.join("records.csv"));
        let (ir, ic) = (col(&hd, "row"), col(&hd, "col"));
        let mut cells = BTreeMap::new();
        for r in &rows {
            if let (Ok(row), Ok(c)) = (r[ir].parse::<usize>(), r[ic].parse::<usize>()) {
                if data[row * w + c] {
                    cells.insert((row, c), suit[row * w + c]);
                }
            }
        }
        Recount {
            values: cells.into_values().collect(),
            suit,
            data,
            in_m,
            row_area_km2,
            w,
        }
    }

    /// (T, k, suitable km2, inside M km2) for E percent.
    fn at(&self, e: f64) -> (f64, usize, f64, f64) {
        let mut v = self.values.clone();
        v.sort_by(f64::total_cmp);
        let k = (v.len() as f64 * e / 100.0).floor() as usize;
        let t = v[k];
        let (mut all, mut inside) = (0.0, 0.0);
        for (i, &s) in self.suit.iter().enumerate() {
            if self.data[i] && s >= t {
                let a = self.row_area_km2[i / self.w];
                all += a;
                if self.in_m[i] == 1 {
                    inside += a;
                }
            }
        }
        (t, k, all, inside)
    }
}

fn run_demo(out: &std::path::Path) -> serde_json::Value {
    run_demo_at(out, 5.0)
}

fn run_demo_at(out: &std::path::Path, e: f64) -> serde_json::Value {
    run_demo_with(out, e, &demo("accessible.geojson"))
}

fn run_demo_with(out: &std::path::Path, e: f64, m: &std::path::Path) -> serde_json::Value {
    run_demo_with_args(out, e, m, &[])
}

fn run_demo_with_args(
    out: &std::path::Path,
    e: f64,
    m: &std::path::Path,
    extra: &[&str],
) -> serde_json::Value {
    let e = e.to_string();
    let (suit, recs) = (demo("suitability.tif"), demo("records.csv"));
    let mut args = vec![
        "range",
        "--suitability",
        suit.to_str().unwrap(),
        "--records",
        recs.to_str().unwrap(),
        "--omission",
        &e,
        "--accessible",
        m.to_str().unwrap(),
        "--no-metrics",
        "--no-report",
        "--out",
        out.to_str().unwrap(),
        "--quiet",
    ];
    args.extend_from_slice(extra);
    let o = run(&args);
    assert!(o.status.success(), "{}", stderr(&o));
    json(&out.join("summary.json"))
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / a.abs().max(b.abs()).max(1e-300)
}

#[test]
fn the_recount_at_the_runs_own_e_gives_the_runs_areas() {
    // Validates the recount itself against the run's figures at E = 5%.
    let t = tempfile::tempdir().unwrap();
    let out = t.path().join("out");
    let s = run_demo(&out);
    let r = Recount::demo(&out);
    let (th, k, all, inside) = r.at(5.0);
    assert_eq!(th, s["threshold"]["value"].as_f64().unwrap());
    assert_eq!(
        k as u64,
        s["threshold"]["records_dropped"].as_u64().unwrap()
    );
    assert!(
        rel(all, s["area_km2"]["suitable"].as_f64().unwrap()) <= 1e-9,
        "suitable {all}"
    );
    assert!(
        rel(inside, s["area_km2"]["inside_accessible"].as_f64().unwrap()) <= 1e-9,
        "inside {inside}"
    );
}

#[test]
fn sensitivity_rows_equal_an_independent_recount() {
    let t = tempfile::tempdir().unwrap();
    let out = t.path().join("out");
    let s = run_demo(&out);
    let r = Recount::demo(&out);
    let rows = s["sensitivity"].as_array().expect("sensitivity is a list");
    let es: Vec<f64> = rows
        .iter()
        .map(|x| x["omission_percent"].as_f64().unwrap())
        .collect();
    for e in [0.0, 1.0, 2.0, 5.0, 10.0] {
        assert!(es.contains(&e), "no row for E = {e}%: {es:?}");
    }
    for row in rows {
        let e = row["omission_percent"].as_f64().unwrap();
        let (th, k, all, inside) = r.at(e);
        assert_eq!(row["threshold"].as_f64().unwrap(), th, "T at E = {e}");
        assert_eq!(
            row["records_dropped"].as_u64().unwrap(),
            k as u64,
            "k at E = {e}"
        );
        assert!(
            rel(row["area_km2_suitable"].as_f64().unwrap(), all) <= 1e-9,
            "suitable at E = {e}"
        );
        // Inside M: a run of its own at this E (one pass must give what a run at each E
        // gives). GDAL's rasterised M above agrees with areal's cell-centre M on the cells
        // suitable at E = 5 % (the check above) but not on every boundary cell of the demo's
        // M, so it is not the reference here.
        let _ = inside;
        let each = run_demo_at(&t.path().join(format!("e{e}")), e);
        assert!(
            rel(
                row["area_km2_inside_accessible"].as_f64().unwrap(),
                each["area_km2"]["inside_accessible"].as_f64().unwrap()
            ) <= 1e-12,
            "inside at E = {e}"
        );
        assert!(
            rel(
                row["area_km2_suitable"].as_f64().unwrap(),
                each["area_km2"]["suitable"].as_f64().unwrap()
            ) <= 1e-12,
            "suitable at E = {e} against its own run"
        );
    }
    // The run's own E: its row equals the run's areas.
    let own = rows
        .iter()
        .find(|x| x["omission_percent"].as_f64() == Some(5.0))
        .unwrap();
    let f = |v: &serde_json::Value| v.as_f64().unwrap();
    assert!(rel(f(&own["area_km2_suitable"]), f(&s["area_km2"]["suitable"])) <= 1e-12);
    assert!(
        rel(
            f(&own["area_km2_inside_accessible"]),
            f(&s["area_km2"]["inside_accessible"])
        ) <= 1e-12
    );
}

/// An M polygon whose vertices sit at odd coordinates, so that no cell centre of the demo
/// grid lies on an edge (written into `dir`).
fn m_off_centres(dir: &std::path::Path) -> std::path::PathBuf {
    let m = dir.join("m.geojson");
    std::fs::write(
        &m,
        r#"{"type":"FeatureCollection","features":[{"type":"Feature","properties":{},
        "geometry":{"type":"Polygon","coordinates":[[[10.1234,40.2171],[11.7013,40.0937],
        [12.9321,40.4119],[13.0617,41.3873],[12.6943,42.6129],[12.9411,43.5387],
        [11.8089,43.8791],[10.4133,43.8437],[10.0719,42.7093],[10.1234,40.2171]]]}}]}"#,
    )
    .unwrap();
    m
}

#[test]
fn with_m_edges_off_the_cell_centres_every_row_equals_the_recount_inside_m_too() {
    // An M polygon (made here) whose vertices sit at odd coordinates, so no cell centre lies
    // on an edge and GDAL's rasteriser (cell centres) and areal must agree on every cell: the
    // recount is then independent for the areas inside M as well.
    let t = tempfile::tempdir().unwrap();
    let m = m_off_centres(t.path());
    let out = t.path().join("out");
    let s = run_demo_with(&out, 5.0, &m);
    let r = Recount::demo_with_m(&out, &m);
    let rows = s["sensitivity"].as_array().expect("sensitivity is a list");
    assert!(rows.len() >= 5);
    for row in rows {
        let e = row["omission_percent"].as_f64().unwrap();
        let (th, k, all, inside) = r.at(e);
        assert_eq!(row["threshold"].as_f64().unwrap(), th, "T at E = {e}");
        assert_eq!(row["records_dropped"].as_u64().unwrap(), k as u64);
        let got = |key: &str| row[key].as_f64().unwrap();
        assert!(
            rel(got("area_km2_suitable"), all) <= 1e-9,
            "suitable at E = {e}"
        );
        assert!(
            rel(got("area_km2_inside_accessible"), inside) <= 1e-9,
            "inside M at E = {e}: {} vs recount {inside}",
            got("area_km2_inside_accessible")
        );
    }
}

#[test]
fn counted_per_cell_or_per_row_the_sensitivity_is_the_same_to_the_bit() {
    // The decode workers count the candidates per row when they can apply M themselves (a
    // polygon alone); M made of two parts is applied by the consumer, and the candidates
    // are then counted per cell. A 5,000 km record buffer covers the whole demo grid (about
    // 3 x 4 degrees), so polygon and polygon-with-buffer are the same M: every figure must
    // agree exactly, and both with the independent recount.
    let t = tempfile::tempdir().unwrap();
    let m = m_off_centres(t.path());
    let per_row = run_demo_with(&t.path().join("rows"), 5.0, &m);
    let per_cell = run_demo_with_args(&t.path().join("cells"), 5.0, &m, &["--buffer-km", "5000"]);
    let r = Recount::demo_with_m(&t.path().join("rows"), &m);
    let (a, b) = (&per_row["sensitivity"], &per_cell["sensitivity"]);
    assert!(a.as_array().is_some_and(|v| v.len() >= 5), "{a}");
    assert_eq!(a, b, "per-row and per-cell sensitivity");
    for row in a.as_array().unwrap() {
        let e = row["omission_percent"].as_f64().unwrap();
        let (_, _, all, inside) = r.at(e);
        assert!(rel(row["area_km2_suitable"].as_f64().unwrap(), all) <= 1e-9);
        assert!(rel(row["area_km2_inside_accessible"].as_f64().unwrap(), inside) <= 1e-9);
    }
    assert_eq!(
        per_row["area_km2"], per_cell["area_km2"],
        "the same M gives the same areas"
    );
}
