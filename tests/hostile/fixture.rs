//! Fixtures and assertions for the hostile-input catalogue.
//!
//! The base raster is 20 x 20 cells of 0.5 degrees, lon -5..5, lat 40..50, EPSG:4326,
//! float32, nodata -9999, with the value of cell (row, col) = (20·row + col) / 400, so a
//! threshold read back tells exactly which records were used.

use super::common::*;
use gdal::raster::{Buffer, GdalType, RasterCreationOptions};
use gdal::spatial_ref::SpatialRef;
use gdal::DriverManager;
use serde_json::Value;
use std::path::{Path, PathBuf};

/// Geotransform of the base raster.
pub const GT: [f64; 6] = [-5.0, 0.5, 0.0, 50.0, 0.0, -0.5];
/// Size of the base raster.
pub const N: usize = 20;

/// The stored (float32) value of base-raster cell (row, col), as areal reads it.
pub fn value(row: usize, col: usize) -> f64 {
    ((20 * row + col) as f32 / 400.0) as f64
}

/// Centre of base-raster cell (row, col) as (lon, lat).
pub fn centre(row: usize, col: usize) -> (f64, f64) {
    (
        GT[0] + 0.5 * (col as f64 + 0.5),
        GT[3] - 0.5 * (row as f64 + 0.5),
    )
}

/// A CSV line "lon,lat" for the centre of a cell.
pub fn csv_point(row: usize, col: usize) -> String {
    let (x, y) = centre(row, col);
    format!("{x},{y}")
}

/// Cells of the default records, lowest value first.
pub const RECORD_CELLS: [(usize, usize); 5] = [(5, 5), (6, 6), (7, 7), (8, 8), (10, 10)];

/// A GeoTIFF of any GDAL type; `epsg` None for no CRS.
#[allow(clippy::too_many_arguments)]
pub fn write_typed<T: GdalType + Copy>(
    path: &Path,
    w: usize,
    h: usize,
    gt: [f64; 6],
    epsg: Option<u32>,
    nodata: Option<f64>,
    values: &[T],
    options: &[&str],
) {
    let opts = RasterCreationOptions::from_iter(options.iter().copied());
    let mut ds = DriverManager::get_driver_by_name("GTiff")
        .unwrap()
        .create_with_band_type_with_options::<T, _>(path, w, h, 1, &opts)
        .unwrap();
    ds.set_geo_transform(&gt).unwrap();
    if let Some(code) = epsg {
        ds.set_spatial_ref(&SpatialRef::from_epsg(code).unwrap())
            .unwrap();
    }
    let mut band = ds.rasterband(1).unwrap();
    if let Some(nd) = nodata {
        band.set_no_data_value(Some(nd)).unwrap();
    }
    band.write((0, 0), (w, h), &mut Buffer::new((w, h), values.to_vec()))
        .unwrap();
    drop(band);
    ds.close().unwrap();
}

/// The values of the base raster.
pub fn base_values() -> Vec<f32> {
    (0..N * N).map(|i| i as f32 / 400.0).collect()
}

/// The outcome of one run of the binary.
pub struct Outcome {
    pub code: Option<i32>,
    pub stdout: String,
    pub stderr: String,
}

/// One catalogue case: a temporary folder with a raster, records and an output path.
pub struct Case {
    pub dir: tempfile::TempDir,
    pub suitability: PathBuf,
    pub records: PathBuf,
    pub out: PathBuf,
}

impl Case {
    /// The base raster and the default records (E = 0 gives T = value(5, 5)).
    pub fn new() -> Case {
        let dir = tempfile::tempdir().unwrap();
        let suitability = dir.path().join("suitability.tif");
        write_typed(
            &suitability,
            N,
            N,
            GT,
            Some(4326),
            Some(-9999.0),
            &base_values(),
            &[],
        );
        let records = dir.path().join("records.csv");
        let mut text = String::from("lon,lat\n");
        for (r, c) in RECORD_CELLS {
            text += &csv_point(r, c);
            text.push('\n');
        }
        std::fs::write(&records, text).unwrap();
        let out = dir.path().join("out");
        Case {
            dir,
            suitability,
            records,
            out,
        }
    }

    /// A path in the case folder.
    pub fn path(&self, name: &str) -> PathBuf {
        self.dir.path().join(name)
    }

    /// Replace the records with this text, in a file of this name.
    pub fn records_text(&mut self, name: &str, text: impl AsRef<[u8]>) {
        self.records = self.path(name);
        std::fs::write(&self.records, text).unwrap();
    }

    /// Run `areal range` on the case's files with extra arguments.
    pub fn run(&self, extra: &[&str]) -> Outcome {
        let mut args: Vec<String> = vec![
            "range".into(),
            "--suitability".into(),
            self.suitability.display().to_string(),
            "--records".into(),
            self.records.display().to_string(),
            "--out".into(),
            self.out.display().to_string(),
        ];
        args.extend(extra.iter().map(|s| s.to_string()));
        let o = areal().args(&args).output().unwrap();
        // Shown with --nocapture or when the case fails.
        println!(
            "areal {}\n=> exit {:?}\n{}",
            extra.join(" "),
            o.status.code(),
            String::from_utf8_lossy(&o.stderr)
        );
        Outcome {
            code: o.status.code(),
            stdout: String::from_utf8_lossy(&o.stdout).into_owned(),
            stderr: String::from_utf8_lossy(&o.stderr).into_owned(),
        }
    }

    /// Run as [`Case::run`] with extra environment, killing the run (and failing the
    /// test) if it has not ended after `secs` seconds: for inputs that once hung.
    pub fn run_within(&self, secs: u64, env: &[(&str, &str)], extra: &[&str]) -> Outcome {
        let mut args: Vec<String> = vec![
            "range".into(),
            "--suitability".into(),
            self.suitability.display().to_string(),
            "--records".into(),
            self.records.display().to_string(),
            "--out".into(),
            self.out.display().to_string(),
        ];
        args.extend(extra.iter().map(|s| s.to_string()));
        let mut cmd = areal();
        for (k, v) in env {
            cmd.env(k, v);
        }
        let mut child = cmd
            .args(&args)
            .stdout(std::process::Stdio::piped())
            .stderr(std::process::Stdio::piped())
            .spawn()
            .unwrap();
        let deadline = std::time::Instant::now() + std::time::Duration::from_secs(secs);
        while child.try_wait().unwrap().is_none() {
            if std::time::Instant::now() > deadline {
                child.kill().unwrap();
                panic!("areal {} did not end within {secs} s", extra.join(" "));
            }
            std::thread::sleep(std::time::Duration::from_millis(20));
        }
        let o = child.wait_with_output().unwrap();
        let stderr = String::from_utf8_lossy(&o.stderr).into_owned();
        println!(
            "areal {}\n=> exit {:?}\n{stderr}",
            extra.join(" "),
            o.status.code()
        );
        Outcome {
            code: o.status.code(),
            stdout: String::from_utf8_lossy(&o.stdout).into_owned(),
            stderr,
        }
    }

    /// The run must fail with `code`, one clean message holding every needle, and leave
    /// no output and no temporary folder.
    pub fn refused(&self, o: &Outcome, code: i32, needles: &[&str]) {
        assert_clean_refusal(o, code, needles);
        assert!(
            !self.out.exists() || std::fs::read_dir(&self.out).unwrap().next().is_none(),
            "no output may be left behind"
        );
        assert_no_temporaries(self.out.parent().unwrap());
    }

    /// The run must succeed; returns summary.json.
    pub fn succeeded(&self, o: &Outcome) -> Value {
        assert_eq!(o.code, Some(0), "stderr: {}", o.stderr);
        assert_no_gdal_noise(&o.stderr);
        assert_no_temporaries(self.out.parent().unwrap());
        json(&self.out.join("summary.json"))
    }
}

/// Exit code, one `areal: error:` line holding every needle, no panic, no raw GDAL line.
pub fn assert_clean_refusal(o: &Outcome, code: i32, needles: &[&str]) {
    assert_eq!(o.code, Some(code), "stderr: {}", o.stderr);
    let errors: Vec<&str> = o
        .stderr
        .lines()
        .filter(|l| l.starts_with("areal: error:"))
        .collect();
    assert_eq!(errors.len(), 1, "one error line expected in: {}", o.stderr);
    for n in needles {
        assert!(errors[0].contains(n), "expected {n:?} in: {}", errors[0]);
    }
    assert!(!o.stderr.contains("panicked"), "{}", o.stderr);
    assert_no_gdal_noise(&o.stderr);
}

/// GDAL's own "ERROR n:" / "Warning n:" lines must not reach the user.
pub fn assert_no_gdal_noise(stderr: &str) {
    for l in stderr.lines() {
        assert!(
            !l.starts_with("ERROR ") && !l.starts_with("Warning "),
            "raw GDAL line on stderr: {l}"
        );
    }
}

/// No `.NAME.areal-tmp-*` or `.NAME.areal-old-*` folder beside the output.
pub fn assert_no_temporaries(parent: &Path) {
    let left: Vec<String> = std::fs::read_dir(parent)
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.contains(".areal-tmp-") || n.contains(".areal-old-"))
        .collect();
    assert!(left.is_empty(), "temporary folders left: {left:?}");
}

/// The warning must be in summary.json and mirrored on stderr as `areal: warning: ...`.
pub fn assert_warned(summary: &Value, o: &Outcome, needle: &str) {
    let in_summary = summary["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .any(|w| w.as_str().unwrap().contains(needle));
    assert!(
        in_summary,
        "{needle:?} not in summary warnings: {}",
        summary["warnings"]
    );
    let on_stderr = o
        .stderr
        .lines()
        .any(|l| l.starts_with("areal: warning: ") && l.contains(needle));
    assert!(on_stderr, "{needle:?} not mirrored on stderr: {}", o.stderr);
}

/// The threshold areal reported.
pub fn threshold(summary: &Value) -> f64 {
    summary["threshold"]["value"].as_f64().unwrap()
}
