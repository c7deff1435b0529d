//! The batch manifest: CSV, one row per species.
//!
//! Required columns `species` (the folder name), `suitability`, `records`; any other column
//! is an option of `areal range` with `-` written `_` ([`settings::OPTION_KEYS`]). An empty cell
//! takes the batch's default for that option. Relative paths are relative to the manifest's
//! folder. The whole manifest is checked before anything runs; every bad row is reported with
//! its line.

use super::settings::{self, Settings};
use crate::{Error, ProgressHandle, RangeOptions, Result};
use std::collections::HashMap;
use std::path::{Path, PathBuf};

/// Names a species may not take: the files a batch writes beside the species folders.
const RESERVED: [&str; 4] = [
    "batch.csv",
    "batch.gpkg",
    "richness.tif",
    "richness.tif.aux.xml",
];

/// One species of the manifest.
#[derive(Debug, Clone)]
pub struct Species {
    /// Row index, 0-based (shards take rows by this index).
    pub index: usize,
    /// Line of the manifest (1 = header).
    pub line: usize,
    /// Species name = folder name.
    pub name: String,
    /// Suitability raster (made absolute against the manifest's folder).
    pub suitability: PathBuf,
    /// Records file (likewise).
    pub records: PathBuf,
    /// The option values, defaults filled in.
    pub settings: Settings,
    /// The checked options.
    pub options: RangeOptions,
}

/// A checked manifest.
#[derive(Debug, Clone)]
pub struct Manifest {
    /// The manifest file.
    pub path: PathBuf,
    /// Rows in order.
    pub species: Vec<Species>,
}

/// Why `name` is not a safe folder name, if it is not.
fn unsafe_name(name: &str) -> Option<&'static str> {
    if name.is_empty() {
        return Some("is empty");
    }
    if name.len() > 120 {
        return Some("is longer than 120 characters");
    }
    if name.starts_with('.') || name.starts_with('-') {
        return Some("starts with '.' or '-'");
    }
    if !name
        .chars()
        .all(|c| c.is_ascii_alphanumeric() || "._-".contains(c))
    {
        return Some(
            "holds characters other than letters, digits, '.', '_' and '-' (write spaces as '_')",
        );
    }
    if RESERVED.contains(&name.to_ascii_lowercase().as_str()) {
        return Some("is the name of a file the batch writes");
    }
    None
}

fn manifest_err(path: &Path, reason: String) -> Error {
    Error::Manifest {
        path: path.to_path_buf(),
        reason,
    }
}

/// Read and check the manifest; `defaults` are the batch's own options for empty cells.
pub fn read(path: &Path, defaults: &Settings) -> Result<Manifest> {
    settings::check_keys(defaults.keys())?;
    let abs = std::path::absolute(path).map_err(Error::input_io(path))?;
    let base = abs.parent().unwrap_or(Path::new("/")).to_path_buf();
    let text = std::fs::read(path).map_err(|e| match e.kind() {
        std::io::ErrorKind::NotFound => Error::MissingInput {
            path: path.to_path_buf(),
            what: "batch manifest",
        },
        _ => Error::input_io(path)(e),
    })?;
    let text = text.strip_prefix(b"\xef\xbb\xbf").unwrap_or(&text);
    let mut rdr = csv::ReaderBuilder::new()
        .flexible(false)
        .trim(csv::Trim::All)
        .from_reader(text);
    let header: Vec<String> = rdr
        .headers()
        .map_err(|e| {
            manifest_err(
                path,
                format!("header: {e}; the first line must name the columns"),
            )
        })?
        .iter()
        .map(|h| h.to_string())
        .collect();
    let col = |name: &str| header.iter().position(|h| h == name);
    let (Some(c_sp), Some(c_suit), Some(c_rec)) =
        (col("species"), col("suitability"), col("records"))
    else {
        return Err(manifest_err(
            path,
            format!(
                "line 1: the columns species, suitability and records are required (found: {})",
                header.join(", ")
            ),
        ));
    };
    let mut problems = Vec::new();
    for (i, h) in header.iter().enumerate() {
        if ![c_sp, c_suit, c_rec].contains(&i) && settings::check_keys([h]).is_err() {
            problems.push(format!(
                "line 1: column \"{h}\" is not an option of areal range (options: {})",
                settings::OPTION_KEYS.join(", ")
            ));
        }
        if header[..i].contains(h) {
            problems.push(format!("line 1: column \"{h}\" appears twice"));
        }
    }
    if !problems.is_empty() {
        return Err(manifest_err(path, problems.join("; ")));
    }
    let mut species = Vec::new();
    let mut seen: HashMap<String, usize> = HashMap::new();
    for (index, row) in rdr.records().enumerate() {
        let line = index + 2;
        let row = match row {
            Ok(r) => r,
            Err(e) => {
                problems.push(format!("line {line}: {e}"));
                continue;
            }
        };
        let name = row[c_sp].to_string();
        if let Some(why) = unsafe_name(&name) {
            problems.push(format!(
                "line {line}: species \"{name}\" {why}; it is used as a folder name"
            ));
        } else if let Some(first) = seen.insert(name.to_ascii_lowercase(), line) {
            problems.push(format!(
                "line {line}: species \"{name}\" is already on line {first} (names must differ, also in letter case)"
            ));
        }
        for (c, what) in [(c_suit, "suitability"), (c_rec, "records")] {
            if row[c].is_empty() {
                problems.push(format!("line {line}: the {what} cell is empty"));
            }
        }
        let mut s = defaults.clone();
        for (i, h) in header.iter().enumerate() {
            if ![c_sp, c_suit, c_rec].contains(&i) && !row[i].is_empty() {
                s.insert(h.clone(), row[i].to_string());
            }
        }
        // A cell giving one threshold rule replaces the default of the other.
        for (a, b) in [("omission", "threshold"), ("threshold", "omission")] {
            let cell = col(a).is_some_and(|i| !row[i].is_empty());
            if cell && col(b).is_none_or(|i| row[i].is_empty()) {
                s.remove(b);
            }
        }
        match settings::to_range_options(&s, &base, ProgressHandle::default()) {
            Ok(options) => species.push(Species {
                index,
                line,
                name,
                suitability: base.join(&row[c_suit]),
                records: base.join(&row[c_rec]),
                settings: s,
                options,
            }),
            Err(e) => problems.push(format!("line {line} ({name}): {e}")),
        }
    }
    if species.is_empty() && problems.is_empty() {
        problems.push("has no species rows".into());
    }
    if !problems.is_empty() {
        return Err(manifest_err(
            path,
            format!(
                "{}; fix these rows and run again (nothing has run)",
                problems.join("; ")
            ),
        ));
    }
    Ok(Manifest { path: abs, species })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn write(text: &str) -> (tempfile::TempDir, PathBuf) {
        let t = tempfile::tempdir().unwrap();
        let p = t.path().join("m.csv");
        std::fs::write(&p, text).unwrap();
        (t, p)
    }

    #[test]
    fn every_bad_row_is_reported_with_its_line() {
        let (_t, p) = write(
            "species,suitability,records,omission\n\
             a_one,s.tif,r.csv,5\n\
             ../up,s.tif,r.csv,5\n\
             A_ONE,s.tif,r.csv,5\n\
             b,s.tif,r.csv,150\n",
        );
        let e = read(&p, &Settings::new()).unwrap_err().to_string();
        assert!(e.contains("line 3: species \"../up\""), "{e}");
        assert!(
            e.contains("line 4: species \"A_ONE\" is already on line 2"),
            "{e}"
        );
        assert!(e.contains("line 5 (b): --omission"), "{e}");
        assert!(
            !e.contains("line 2".to_string().as_str()) || e.contains("on line 2"),
            "{e}"
        );
    }

    #[test]
    fn defaults_fill_empty_cells_and_paths_are_relative_to_the_manifest() {
        let (t, p) = write("species,suitability,records,threshold,buffer_km\nx,d/s.tif,r.csv,,10\ny,s.tif,r.csv,0.4,\n");
        let mut d = Settings::new();
        d.insert("omission".into(), "5".into());
        let m = read(&p, &d).unwrap();
        assert_eq!(m.species[0].suitability, t.path().join("d/s.tif"));
        assert_eq!(
            m.species[0].options.threshold,
            crate::ThresholdSpec::Omission(5.0)
        );
        assert_eq!(m.species[0].options.access.buffer_km, Some(10.0));
        assert_eq!(
            m.species[1].options.threshold,
            crate::ThresholdSpec::Fixed(0.4)
        );
        assert_eq!(m.species[1].options.access.buffer_km, None);
    }
}
