//! Fuzz tests for the readers of user files, with proptest: the record readers
//! (`read_records` on CSV/TSV text and GDAL point layers) and the accessible-area polygon
//! reader (`AccessMask::build` with a polygon file), fed arbitrary bytes and mutations of
//! the small seed corpus in `tests/fuzz-corpus/`.
//!
//! Property: no input panics (checked with `catch_unwind`); every result is either `Ok`
//! with sane values (finite coordinates, lon in -180..180, lat in -90..90, M rows that can
//! be filled) or an input/option error whose message names the file or an option.
//!
//! CI runs proptest's default 256 cases per property. A longer session (see
//! docs/hostile-input.md) sets `PROPTEST_CASES`. Inputs that fail are kept by proptest in
//! `tests/proptest-regressions/fuzz_readers.txt` and replayed first; each fixed one also
//! becomes a named case of the catalogue (tests/hostile/). The bytes of the case being run
//! are written to `$CARGO_TARGET_TMPDIR/fuzz-last-*` first, so a crash inside GDAL (which
//! no `catch_unwind` can catch) still leaves its input behind.

use areal::access::{AccessMask, AccessSpec};
use areal::records::{read_records, RecordOptions};
use areal::{GridSpec, Stage};
use proptest::collection::vec;
use proptest::prelude::*;
use proptest::test_runner::FileFailurePersistence;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};

/// Fragments spliced into inputs: delimiters, quotes, line ends, BOMs, odd numbers, JSON
/// structure, GeoJSON members and bytes that are not UTF-8.
const TOKENS: &[&[u8]] = &[
    b",",
    b";",
    b"\t",
    b"|",
    b"\"",
    b"\n",
    b"\r\n",
    b"\r",
    b"\xEF\xBB\xBF",
    b"\xFF\xFE",
    b"\x00",
    b"NaN",
    b"inf",
    b"-inf",
    b"1e308",
    b"-1e308",
    b"1e-320",
    b"360.5",
    b"-91",
    b"90",
    b"180",
    b"-180",
    b"99999999999999999999",
    b"12,5",
    b"0x1F",
    b" ",
    b"",
    b"lon,lat\n",
    b"decimalLongitude;decimalLatitude\n",
    b"{",
    b"}",
    b"[",
    b"]",
    b"null",
    b"\"type\":\"Polygon\"",
    b"\"type\":\"MultiPolygon\"",
    b"\"type\":\"Point\"",
    b"\"type\":\"LineString\"",
    b"\"type\":\"GeometryCollection\",\"geometries\":[]",
    b"\"coordinates\":[]",
    b"[[[0,0],[1,0],[1,1],[0,0]]]",
    b"[[[170,0],[-170,0],[-170,5],[170,0]]]",
    b"[[[0,0],[1e308,0],[1e308,1],[0,0]]]",
    b"[[[0,0],[0,0],[0,0],[0,0]]]",
    b"\"crs\":{\"type\":\"name\",\"properties\":{\"name\":\"EPSG:3857\"}},",
    b"\"crs\":{\"type\":\"name\",\"properties\":{\"name\":\"EPSG:999999\"}},",
];

/// Extensions a fuzzed file may carry (the records reader picks its parser by extension,
/// or by sniffing when there is none it knows).
const EXTS: &[&str] = &["csv", "tsv", "txt", "geojson", "json", "dat"];

#[derive(Debug, Clone)]
enum Mutation {
    /// XOR one byte.
    Flip(usize, u8),
    /// Insert a token.
    Insert(usize, usize),
    /// Delete a run of bytes.
    Delete(usize, usize),
    /// Cut the file short.
    Truncate(usize),
    /// Repeat a run of bytes.
    Repeat(usize, usize),
    /// Insert arbitrary bytes.
    Bytes(usize, Vec<u8>),
}

fn mutation() -> impl Strategy<Value = Mutation> {
    prop_oneof![
        1 => (any::<usize>(), 1u8..=255).prop_map(|(p, x)| Mutation::Flip(p, x)),
        3 => (any::<usize>(), 0..TOKENS.len()).prop_map(|(p, t)| Mutation::Insert(p, t)),
        1 => (any::<usize>(), 1usize..40).prop_map(|(p, n)| Mutation::Delete(p, n)),
        1 => (any::<usize>()).prop_map(Mutation::Truncate),
        1 => (any::<usize>(), 1usize..60).prop_map(|(p, n)| Mutation::Repeat(p, n)),
        1 => (any::<usize>(), vec(any::<u8>(), 1..8)).prop_map(|(p, b)| Mutation::Bytes(p, b)),
    ]
}

fn apply(mut b: Vec<u8>, ms: &[Mutation]) -> Vec<u8> {
    for m in ms {
        let at = |p: usize, len: usize| if len == 0 { 0 } else { p % (len + 1) };
        match m {
            Mutation::Flip(p, x) if !b.is_empty() => {
                let i = p % b.len();
                b[i] ^= x;
            }
            Mutation::Flip(..) => {}
            Mutation::Insert(p, t) => {
                let i = at(*p, b.len());
                b.splice(i..i, TOKENS[*t].iter().copied());
            }
            Mutation::Delete(p, n) => {
                let i = at(*p, b.len());
                let j = (i + n).min(b.len());
                b.drain(i..j);
            }
            Mutation::Truncate(p) => {
                let i = at(*p, b.len());
                b.truncate(i);
            }
            Mutation::Repeat(p, n) => {
                let i = at(*p, b.len());
                let j = (i + n).min(b.len());
                let run: Vec<u8> = b[i..j].to_vec();
                b.splice(j..j, run);
            }
            Mutation::Bytes(p, bytes) => {
                let i = at(*p, b.len());
                b.splice(i..i, bytes.iter().copied());
            }
        }
    }
    b
}

/// The seed files of one corpus folder: (extension, bytes), sorted by name.
fn corpus(folder: &str) -> Vec<(String, Vec<u8>)> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fuzz-corpus")
        .join(folder);
    let mut files: Vec<PathBuf> = std::fs::read_dir(&dir)
        .unwrap()
        .flatten()
        .map(|e| e.path())
        .collect();
    files.sort();
    files
        .into_iter()
        .map(|p| {
            let ext = p.extension().unwrap().to_string_lossy().into_owned();
            (ext, std::fs::read(&p).unwrap())
        })
        .collect()
}

/// A file to feed a reader: arbitrary bytes, or a mutated seed (sometimes renamed).
fn input(folder: &str) -> impl Strategy<Value = (String, Vec<u8>)> {
    let seeds = corpus(folder);
    let n = seeds.len();
    prop_oneof![
        1 => (0..EXTS.len(), vec(any::<u8>(), 0..600))
            .prop_map(|(e, b)| (EXTS[e].to_string(), b)),
        5 => (0..n, vec(mutation(), 0..8), proptest::option::weighted(0.15, 0..EXTS.len()))
            .prop_map(move |(i, ms, ext)| {
                let (seed_ext, bytes) = &seeds[i];
                let ext = ext.map_or(seed_ext.clone(), |e| EXTS[e].to_string());
                (ext, apply(bytes.clone(), &ms))
            }),
    ]
}

/// Keep GDAL's own error lines off the test output (the errors come back as values).
fn quiet_gdal() {
    static ONCE: std::sync::Once = std::sync::Once::new();
    ONCE.call_once(|| gdal::config::set_error_handler(|_, _, _| {}));
}

/// Write the case's bytes where they survive a crash, and into a fresh folder to read.
fn stage(target: &str, ext: &str, bytes: &[u8]) -> (tempfile::TempDir, PathBuf) {
    quiet_gdal();
    let last = Path::new(env!("CARGO_TARGET_TMPDIR")).join(format!("fuzz-last-{target}.{ext}"));
    let _ = std::fs::write(last, bytes);
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join(format!("fuzzed.{ext}"));
    std::fs::write(&path, bytes).unwrap();
    (dir, path)
}

/// An error from reading a user file must be an input or option error naming the file or
/// an option, in one line.
fn check_error(e: &areal::Error, file: &Path) -> Result<(), TestCaseError> {
    let msg = e.to_string();
    let name = file.file_name().unwrap().to_string_lossy().into_owned();
    prop_assert!(
        matches!(e.stage(), Stage::Input | Stage::Usage),
        "stage {:?}: {msg}",
        e.stage()
    );
    prop_assert!(
        msg.contains(&name) || msg.contains("--"),
        "names neither the file nor an option: {msg}"
    );
    Ok(())
}

/// Fill every row of M, catching panics.
fn fill_all(m: &mut AccessMask, grid: &GridSpec) -> Result<(), TestCaseError> {
    let mut row = vec![false; grid.width];
    for r in 0..grid.height {
        let res = catch_unwind(AssertUnwindSafe(|| m.fill_row(r, &mut row)));
        prop_assert!(res.is_ok(), "fill_row({r}) panicked");
        prop_assert!(res.unwrap().is_ok(), "fill_row({r}) failed");
    }
    Ok(())
}

fn regional() -> GridSpec {
    GridSpec::lonlat(20, 20, -5.0, 50.0, 0.5)
}

fn global() -> GridSpec {
    GridSpec::lonlat(36, 18, -180.0, 90.0, 10.0)
}

/// proptest's defaults (PROPTEST_CASES is honoured), with failures kept in one known file.
fn config() -> ProptestConfig {
    ProptestConfig {
        failure_persistence: Some(Box::new(FileFailurePersistence::Direct(
            "tests/proptest-regressions/fuzz_readers.txt",
        ))),
        ..ProptestConfig::default()
    }
}

proptest! {
    #![proptest_config(config())]

    #[test]
    fn records_reader_never_panics_and_returns_sane_records_or_a_named_error(
        (ext, bytes) in input("records"),
        raster_crs in prop::sample::select(vec!["", "EPSG:3857", "EPSG:32631"]),
        records_crs in prop::sample::select(vec!["EPSG:4326", "EPSG:4326", "EPSG:3857"]),
        columns in prop::sample::select(vec![None, None, Some(("x", "lat")), Some(("lat", "lon"))]),
        buffer_km in prop::sample::select(vec![0.5, 300.0, 5000.0]),
    ) {
        let (_dir, path) = stage("records", &ext, &bytes);
        let opts = RecordOptions {
            lon_col: columns.map(|c| c.0.to_string()),
            lat_col: columns.map(|c| c.1.to_string()),
            crs: records_crs.to_string(),
            layer: None,
        };
        let res = catch_unwind(AssertUnwindSafe(|| read_records(&path, &opts, raster_crs)));
        prop_assert!(res.is_ok(), "read_records panicked");
        match res.unwrap() {
            Err(e) => check_error(&e, &path)?,
            Ok(set) => {
                prop_assert!(!set.records.is_empty());
                for r in &set.records {
                    prop_assert!(r.x.is_finite() && r.y.is_finite(), "{r:?}");
                    prop_assert!((-180.0..=180.0).contains(&r.lon), "{r:?}");
                    prop_assert!((-90.0..=90.0).contains(&r.lat), "{r:?}");
                }
                // The geodesic parts of M on these records.
                let lonlat: Vec<(f64, f64)> = set.records.iter().map(|r| (r.lon, r.lat)).collect();
                let grid = global();
                for spec in [
                    AccessSpec { buffer_km: Some(buffer_km), ..Default::default() },
                    AccessSpec { hull_buffer_km: Some(buffer_km), ..Default::default() },
                ] {
                    let res = catch_unwind(AssertUnwindSafe(|| AccessMask::build(&grid, &spec, &lonlat)));
                    prop_assert!(res.is_ok(), "AccessMask::build panicked on {lonlat:?}");
                    if let Ok(mut m) = res.unwrap() {
                        fill_all(&mut m, &grid)?;
                    }
                }
            }
        }
    }

    #[test]
    fn polygon_reader_never_panics_and_gives_fillable_m_or_a_named_error(
        (ext, bytes) in input("polygons"),
        global_grid in any::<bool>(),
    ) {
        let (_dir, path) = stage("polygons", &ext, &bytes);
        let grid = if global_grid { global() } else { regional() };
        let spec = AccessSpec { polygon: Some(path.clone()), ..Default::default() };
        let res = catch_unwind(AssertUnwindSafe(|| AccessMask::build(&grid, &spec, &[])));
        prop_assert!(res.is_ok(), "AccessMask::build panicked");
        match res.unwrap() {
            Err(e) => check_error(&e, &path)?,
            Ok(mut m) => {
                prop_assert!(m.polygons().is_some_and(|p| !p.0.is_empty()));
                fill_all(&mut m, &grid)?;
            }
        }
    }
}
