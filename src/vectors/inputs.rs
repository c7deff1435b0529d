//! Reading a run's outputs for the vector step: `classes.tif` (whole, 1 byte a cell),
//! `patches.csv`, `records.csv` (optional) and `summary.json`, all from one folder.
//!
//! CSV columns are carried over as they are: a column whose every non-empty value is an
//! integer becomes an integer field, one whose values are all numbers a real field, anything
//! else text; empty cells are nulls. So every column of the tables reaches the vector layers,
//! whatever columns a run writes.

use crate::patches::Connectivity;
use crate::raster_io::{class, SuitabilityRaster, STRIP_ROWS};
use crate::{Error, GridSpec, Result};
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

    /// Index of a column, or an error naming the file.
    pub(crate) fn col(&self, name: &str, path: &Path) -> Result<usize> {
        self.names
            .iter()
            .position(|n| n == name)
            .ok_or_else(|| Error::Records {
                path: path.to_path_buf(),
                reason: format!("has no column {name}; give the table areal wrote for this run"),
            })
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

/// A run's outputs, read for the vector step.
pub(crate) struct RunInputs {
    pub classes_path: PathBuf,
    pub grid: GridSpec,
    pub classes: Vec<u8>,
    pub patches: Table,
    pub patches_path: PathBuf,
    pub records: Option<Table>,
    pub records_path: PathBuf,
    pub summary: SummaryFacts,
}

/// Read `classes.tif` and the tables beside it. Refuses grids above `max_cells`.
pub(crate) fn read_run(classes_path: &Path, max_cells: u64) -> Result<RunInputs> {
    let dir = classes_path.parent().unwrap_or(Path::new("."));
    let raster = SuitabilityRaster::open(classes_path)?;
    let grid = raster.grid().clone();
    if grid.n_cells() > max_cells {
        return Err(Error::UnsupportedRaster {
            path: classes_path.to_path_buf(),
            reason: format!(
                "has {} cells, more than the {max_cells} the vector step handles (it holds the grid \
                 in memory, about 5 bytes a cell); polygonize a coarser or cropped run, or leave out --vectors",
                grid.n_cells()
            ),
        });
    }
    let mut classes = Vec::with_capacity(grid.width * grid.height);
    let mut buf = Vec::new();
    for y0 in (0..grid.height).step_by(STRIP_ROWS) {
        let rows = STRIP_ROWS.min(grid.height - y0);
        raster.read_rows(y0, rows, &mut buf)?;
        for &v in &buf {
            let k = if raster.is_data(v) {
                v
            } else {
                class::NODATA as f64
            };
            if ![0.0, 1.0, 2.0, 255.0].contains(&k) {
                return Err(Error::UnsupportedRaster {
                    path: classes_path.to_path_buf(),
                    reason: format!(
                        "holds the value {k}, not a class code (0, 1, 2, 255); give the classes.tif areal wrote"
                    ),
                });
            }
            classes.push(k as u8);
        }
    }
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
    let patches = Table::read_csv(&patches_path)?;
    let records_path = dir.join("records.csv");
    let records = if records_path.exists() {
        Some(Table::read_csv(&records_path)?)
    } else {
        None
    };
    let summary = read_summary(&summary_path)?;
    Ok(RunInputs {
        classes_path: classes_path.to_path_buf(),
        grid,
        classes,
        patches,
        patches_path,
        records,
        records_path,
        summary,
    })
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
