//! What `areal polygons` reads from an earlier run's folder: the range model rebuilt from
//! `classes.tif`, `patches.csv`, `records.csv` (optional) and `summary.json`; and the table
//! types every layer is written from.

use super::layers::RunTables;
use super::tables::{read_table, PATCH_FIELDS, RECORD_FIELDS};
use crate::access::{AccessMask, AccessSpec};
use crate::model::RangeModel;
use crate::patches::Connectivity;
use crate::raster_io::SuitabilityRaster;
use crate::{Error, Result};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// The type of a table column.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Kind {
    Int,
    Real,
    Text,
    /// 0/1 stored as a boolean field (only for columns this step adds).
    Bool,
}

/// One table cell.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum Value {
    Int(i64),
    Real(f64),
    Text(String),
    Bool(bool),
    Null,
}

/// A CSV table with typed columns.
#[derive(Debug, Clone, Default)]
pub(crate) struct Table {
    pub names: Vec<String>,
    pub kinds: Vec<Kind>,
    pub rows: Vec<Vec<Value>>,
}

impl Table {
    /// Read a CSV file with a header, typing each column from its values.
    pub(crate) fn read_csv(path: &Path) -> Result<Table> {
        let bad = |e: csv::Error| Error::Records {
            path: path.to_path_buf(),
            reason: format!("cannot read this areal table: {e}"),
        };
        let mut r = csv::Reader::from_path(path).map_err(bad)?;
        let names: Vec<String> = r.headers().map_err(bad)?.iter().map(String::from).collect();
        let mut raw: Vec<Vec<String>> = Vec::new();
        for rec in r.records() {
            let rec = rec.map_err(bad)?;
            raw.push(rec.iter().map(String::from).collect());
        }
        let kinds: Vec<Kind> = (0..names.len())
            .map(|c| {
                let vals = || {
                    raw.iter()
                        .map(|row| row[c].as_str())
                        .filter(|v| !v.is_empty())
                };
                if vals().count() == 0 {
                    Kind::Text
                } else if vals().all(|v| v.parse::<i64>().is_ok()) {
                    Kind::Int
                } else if vals().all(|v| v.parse::<f64>().is_ok()) {
                    Kind::Real
                } else {
                    Kind::Text
                }
            })
            .collect();
        let rows = raw
            .into_iter()
            .map(|row| {
                row.into_iter()
                    .zip(&kinds)
                    .map(|(v, k)| match (v.is_empty(), k) {
                        (true, _) => Value::Null,
                        (_, Kind::Int) => Value::Int(v.parse().unwrap()),
                        (_, Kind::Real) => Value::Real(v.parse().unwrap()),
                        _ => Value::Text(v),
                    })
                    .collect()
            })
            .collect();
        Ok(Table { names, kinds, rows })
    }

    /// A numeric cell as f64 (None when null or text).
    pub(crate) fn num(&self, row: usize, col: usize) -> Option<f64> {
        match &self.rows[row][col] {
            Value::Int(i) => Some(*i as f64),
            Value::Real(x) => Some(*x),
            _ => None,
        }
    }

    /// Add a column.
    pub(crate) fn push_column(&mut self, name: &str, kind: Kind, values: Vec<Value>) {
        assert_eq!(values.len(), self.rows.len());
        self.names.push(name.to_string());
        self.kinds.push(kind);
        for (row, v) in self.rows.iter_mut().zip(values) {
            row.push(v);
        }
    }
}

/// What summary.json tells the vector step.
#[derive(Debug, Clone)]
pub(crate) struct SummaryFacts {
    pub connectivity: Option<Connectivity>,
    pub inside_km2: f64,
    pub accessible_km2: f64,
    pub whole_raster: bool,
    pub access_description: String,
}

impl SummaryFacts {
    /// The facts of a summary in memory.
    pub(crate) fn of(s: &crate::report::Summary) -> SummaryFacts {
        SummaryFacts {
            connectivity: Some(if s.patches.connectivity == 4 {
                Connectivity::Four
            } else {
                Connectivity::Eight
            }),
            inside_km2: s.area_km2.inside_accessible,
            accessible_km2: s.area_km2.accessible,
            whole_raster: s.accessible.whole_raster,
            access_description: s.accessible.description.clone(),
        }
    }
}

/// An earlier run's folder, read for `areal polygons`: the range model rebuilt from
/// `classes.tif` through the pass's labeller (with the run's connectivity, and M rebuilt from
/// `access` and the run's records, checked against the classes by the model), and the tables
/// beside it.
pub(crate) fn read_run(
    classes_path: &Path,
    access: &AccessSpec,
    connectivity: Option<Connectivity>,
) -> Result<(RangeModel, RunTables)> {
    let dir = crate::output::parent_folder(classes_path);
    let need = |name: &str| -> Result<PathBuf> {
        let p = dir.join(name);
        if p.exists() {
            Ok(p)
        } else {
            Err(Error::MissingInput {
                path: p,
                what: if name == "patches.csv" {
                    "patches.csv (written beside classes.tif by areal range)"
                } else {
                    "summary.json (written beside classes.tif by areal range)"
                },
            })
        }
    };
    let patches_path = need("patches.csv")?;
    let summary_path = need("summary.json")?;
    let facts = read_summary(&summary_path)?;
    let conn = super::connectivity_of(facts.connectivity, connectivity, &summary_path)?;
    let patches = read_table(&patches_path, &PATCH_FIELDS)?;
    let records_path = dir.join("records.csv");
    let records = if records_path.exists() {
        Some(read_table(&records_path, &RECORD_FIELDS)?)
    } else {
        None
    };
    let grid = SuitabilityRaster::open(classes_path)?.grid().clone();

    // M as used: rebuilt row by row as the run built it, from the run's records.
    let no_m_options = access == &AccessSpec::default();
    if no_m_options && !facts.whole_raster {
        return Err(Error::InvalidOption {
            option: "--accessible",
            reason: format!(
                "the run's M was \"{}\"; give the same --accessible / --buffer-km / --hull-buffer-km to rebuild it",
                facts.access_description
            ),
        });
    }
    let lonlat: Vec<(f64, f64)> = match &records {
        Some(r) => {
            let at = |n: &str| RECORD_FIELDS.iter().position(|f| f.1 == n).expect("field");
            let (lon, lat) = (at("lon"), at("lat"));
            (0..r.rows.len())
                .map(|i| {
                    (
                        r.num(i, lon).unwrap_or(f64::NAN),
                        r.num(i, lat).unwrap_or(f64::NAN),
                    )
                })
                .collect()
        }
        None => Vec::new(),
    };
    let mut mask = AccessMask::build(&grid, access, &lonlat)?;
    if mask.description() != facts.access_description {
        return Err(Error::InvalidOption {
            option: "--accessible",
            reason: format!(
                "these M options give \"{}\", but the run's M was \"{}\"; give the run's own M options",
                mask.description(),
                facts.access_description
            ),
        });
    }
    let model =
        RangeModel::from_class_raster(classes_path, conn, &BTreeMap::new(), Some(&mut mask))?;
    // patches.csv must describe these patches (the same run's table).
    let found = model.patches();
    let mismatch = |what: String| {
        Error::Records {
        path: patches_path.clone(),
        reason: format!(
            "does not match {}: {what}; give the patches.csv, summary.json and classes.tif of one run",
            classes_path.display()
        ),
    }
    };
    if patches.rows.len() != found.len() {
        return Err(mismatch(format!(
            "{} rows for {} patches",
            patches.rows.len(),
            found.len()
        )));
    }
    for (i, p) in found.iter().enumerate() {
        let (id, k, n) = (patches.num(i, 0), patches.num(i, 1), patches.num(i, 2));
        if id != Some(p.id as f64) || k != Some(p.class as f64) || n != Some(p.cells as f64) {
            return Err(mismatch(format!(
                "line {} is patch {id:?} (class {k:?}, {n:?} cells), the raster's patch {} has class {} and {} cells",
                i + 2,
                p.id,
                p.class,
                p.cells
            )));
        }
    }
    // The distance to the nearest class-1 patch is not a patches.csv column: a run with
    // metrics (nearest_patch_km filled) gets it from the metrics' one distance, as
    // `areal range --vectors` does.
    let mut patches = patches;
    let col = PATCH_FIELDS
        .iter()
        .position(|f| f.0 == "nearest_range_km")
        .expect("a patch field");
    let near = PATCH_FIELDS
        .iter()
        .position(|f| f.0 == "nearest_patch_km")
        .expect("a patch field");
    if (0..patches.rows.len()).any(|i| patches.num(i, near).is_some()) {
        let to_range = crate::metrics::nearest_range_km(&model)?;
        for (row, d) in patches.rows.iter_mut().zip(to_range) {
            row[col] = d.map_or(Value::Null, Value::Real);
        }
    }
    Ok((
        model,
        RunTables {
            patches,
            records,
            facts,
        },
    ))
}

fn read_summary(path: &Path) -> Result<SummaryFacts> {
    let bad = |reason: String| Error::Records {
        path: path.to_path_buf(),
        reason,
    };
    let text = std::fs::read_to_string(path).map_err(Error::io(path))?;
    let v: serde_json::Value =
        serde_json::from_str(&text).map_err(|e| bad(format!("is not valid JSON: {e}")))?;
    let num = |a: &str, b: &str| {
        v[a][b].as_f64().ok_or_else(|| {
            bad(format!(
                "has no number {a}.{b}; give the summary.json areal wrote"
            ))
        })
    };
    let connectivity = match v["patches"]["connectivity"].as_u64() {
        Some(8) => Some(Connectivity::Eight),
        Some(4) => Some(Connectivity::Four),
        Some(n) => return Err(bad(format!("patches.connectivity is {n}, not 8 or 4"))),
        None => None,
    };
    Ok(SummaryFacts {
        connectivity,
        inside_km2: num("area_km2", "inside_accessible")?,
        accessible_km2: num("area_km2", "accessible")?,
        whole_raster: v["accessible"]["whole_raster"].as_bool().unwrap_or(false),
        access_description: v["accessible"]["description"]
            .as_str()
            .unwrap_or("")
            .to_string(),
    })
}
