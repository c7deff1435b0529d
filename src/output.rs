//! Atomic output folders.
//!
//! Everything is written into a temporary folder beside the destination
//! (`.NAME.areal-tmp-PID`), and renamed into place only when the run is complete. A
//! run that fails or is killed leaves the previous outputs (or none) and, at worst, a
//! hidden temporary folder that the next run removes. An existing destination is
//! replaced only with `overwrite`, only when it holds nothing but files areal writes,
//! and never when an input lives inside it.

use crate::{Error, Result};
use std::fs;
use std::path::{Path, PathBuf};

/// File names areal writes into an output folder.
pub const OUTPUT_NAMES: &[&str] = &[
    "classes.tif",
    "classes.tif.aux.xml",
    "patches.csv",
    "records.csv",
    "summary.json",
    // Vector outputs (crate::vectors::VECTOR_NAMES).
    "range.gpkg",
    "range.geojson",
    "patches.geojson",
    "unreachable.geojson",
    "accessible.geojson",
    "records.geojson",
    "range-equal-area.gpkg",
];

/// A temporary output folder that becomes `dest` on [`OutputDir::commit`].
pub struct OutputDir {
    dest: PathBuf,
    tmp: PathBuf,
    committed: bool,
}

impl OutputDir {
    /// Check the destination and create the temporary folder beside it.
    pub fn prepare(dest: &Path, overwrite: bool, inputs: &[&Path]) -> Result<Self> {
        let out_err = |reason: String| Error::Output {
            path: dest.to_path_buf(),
            reason,
        };
        let name = dest
            .file_name()
            .ok_or_else(|| {
                out_err("is not a folder name; give --out a folder such as out/".into())
            })?
            .to_string_lossy()
            .into_owned();
        let parent = match dest.parent() {
            Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
            _ => PathBuf::from("."),
        };
        if !parent.is_dir() {
            fs::create_dir_all(&parent).map_err(|e| {
                out_err(format!(
                    "cannot create the parent folder {}: {e}",
                    parent.display()
                ))
            })?;
        }
        if dest.exists() {
            if !dest.is_dir() {
                return Err(out_err(
                    "exists and is not a folder; choose another --out".into(),
                ));
            }
            let dest_abs = fs::canonicalize(dest).map_err(Error::io(dest))?;
            for input in inputs {
                if let Ok(abs) = fs::canonicalize(input) {
                    if abs.starts_with(&dest_abs) {
                        return Err(out_err(format!(
                            "holds the input {}; choose an --out folder that holds no inputs",
                            input.display()
                        )));
                    }
                }
            }
            let entries: Vec<String> = fs::read_dir(dest)
                .map_err(Error::io(dest))?
                .filter_map(|e| e.ok())
                .map(|e| e.file_name().to_string_lossy().into_owned())
                .collect();
            if !entries.is_empty() {
                if !overwrite {
                    return Err(out_err(
                        "exists and is not empty; pass --overwrite to replace it, or choose another --out".into(),
                    ));
                }
                let foreign: Vec<&String> = entries
                    .iter()
                    .filter(|n| !OUTPUT_NAMES.contains(&n.as_str()) && !n.starts_with('.'))
                    .collect();
                if !foreign.is_empty() {
                    return Err(out_err(format!(
                        "holds files areal did not write ({}); --overwrite replaces only areal output folders",
                        foreign.iter().map(|s| s.as_str()).collect::<Vec<_>>().join(", ")
                    )));
                }
            }
        }
        // Remove leftovers of killed runs of this destination.
        let prefix = format!(".{name}.areal-tmp-");
        if let Ok(rd) = fs::read_dir(&parent) {
            for e in rd.flatten() {
                if e.file_name().to_string_lossy().starts_with(&prefix) {
                    let _ = fs::remove_dir_all(e.path());
                }
            }
        }
        let tmp = parent.join(format!("{prefix}{}", std::process::id()));
        fs::create_dir(&tmp).map_err(|e| {
            out_err(format!(
                "cannot create a temporary folder in {}: {e}; is it writable?",
                parent.display()
            ))
        })?;
        Ok(OutputDir {
            dest: dest.to_path_buf(),
            tmp,
            committed: false,
        })
    }

    /// Path of an output file inside the temporary folder.
    pub fn file(&self, name: &str) -> PathBuf {
        self.tmp.join(name)
    }

    /// The final destination.
    pub fn dest(&self) -> &Path {
        &self.dest
    }

    /// Move the finished folder into place.
    pub fn commit(mut self) -> Result<()> {
        let old = if self.dest.exists() {
            let old = self.tmp.with_file_name(
                self.tmp
                    .file_name()
                    .unwrap()
                    .to_string_lossy()
                    .replace("areal-tmp", "areal-old"),
            );
            fs::rename(&self.dest, &old).map_err(Error::io(&self.dest))?;
            Some(old)
        } else {
            None
        };
        fs::rename(&self.tmp, &self.dest).map_err(Error::io(&self.dest))?;
        self.committed = true;
        if let Some(old) = old {
            let _ = fs::remove_dir_all(old);
        }
        Ok(())
    }
}

impl Drop for OutputDir {
    fn drop(&mut self) {
        if !self.committed {
            let _ = fs::remove_dir_all(&self.tmp);
        }
    }
}

/// Write a small text file in one go (the folder rename provides atomicity).
pub(crate) fn write_text(path: &Path, text: &str) -> Result<()> {
    fs::write(path, text).map_err(Error::io(path))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn refuses_non_empty_folder_without_overwrite_and_keeps_it() {
        let t = tempfile::tempdir().unwrap();
        let dest = t.path().join("out");
        fs::create_dir(&dest).unwrap();
        fs::write(dest.join("summary.json"), "old").unwrap();
        let e = OutputDir::prepare(&dest, false, &[])
            .err()
            .unwrap()
            .to_string();
        assert!(e.contains("--overwrite"), "{e}");
        assert_eq!(
            fs::read_to_string(dest.join("summary.json")).unwrap(),
            "old"
        );
    }

    #[test]
    fn overwrite_swaps_the_whole_folder() {
        let t = tempfile::tempdir().unwrap();
        let dest = t.path().join("out");
        fs::create_dir(&dest).unwrap();
        fs::write(dest.join("summary.json"), "old").unwrap();
        fs::write(dest.join("patches.csv"), "old").unwrap();
        let o = OutputDir::prepare(&dest, true, &[]).unwrap();
        fs::write(o.file("summary.json"), "new").unwrap();
        o.commit().unwrap();
        assert_eq!(
            fs::read_to_string(dest.join("summary.json")).unwrap(),
            "new"
        );
        assert!(!dest.join("patches.csv").exists());
        assert_eq!(
            fs::read_dir(t.path()).unwrap().count(),
            1,
            "no temporary folders left"
        );
    }

    #[test]
    fn dropped_without_commit_leaves_nothing() {
        let t = tempfile::tempdir().unwrap();
        let dest = t.path().join("out");
        {
            let o = OutputDir::prepare(&dest, false, &[]).unwrap();
            fs::write(o.file("summary.json"), "partial").unwrap();
        }
        assert_eq!(fs::read_dir(t.path()).unwrap().count(), 0);
    }

    #[test]
    fn refuses_foreign_files_and_inputs_inside() {
        let t = tempfile::tempdir().unwrap();
        let dest = t.path().join("out");
        fs::create_dir(&dest).unwrap();
        fs::write(dest.join("suitability.tif"), "x").unwrap();
        let e = OutputDir::prepare(&dest, true, &[&dest.join("suitability.tif")])
            .err()
            .unwrap()
            .to_string();
        assert!(e.contains("holds the input"), "{e}");
        let e = OutputDir::prepare(&dest, true, &[])
            .err()
            .unwrap()
            .to_string();
        assert!(e.contains("did not write"), "{e}");
    }
}
