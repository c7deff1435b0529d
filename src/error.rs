//! One error type for the library. Every variant names what the user must look at
//! (a file, a record, an option) and, where possible, how to fix it.
//!
//! Each variant belongs to exactly one [`Stage`], which sets the exit code of the CLI:
//!
//! | stage | exit | variants |
//! |---|---|---|
//! | [`Stage::Usage`] | 2 | `InvalidOption` (and clap's own usage errors) |
//! | [`Stage::Input`] | 3 | `MissingInput`, `InputIo`, `Gdal`, `MissingCrs`, `UnsupportedRaster`, `Records`, `Accessible`, `Crs`, `NoUsableRecords` |
//! | [`Stage::Processing`] | 5 | `Processing` |
//! | [`Stage::Output`] | 4 | `Output`, `Io` |
//!
//! `Gdal` wraps GDAL failures on input files only; GDAL failures on outputs are `Output`.

use std::path::PathBuf;

/// Result alias used throughout the library.
pub type Result<T, E = Error> = std::result::Result<T, E>;

/// Everything that can go wrong in a range run.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum Error {
    /// An input file does not exist or cannot be read.
    #[error("{path}: {what} not found or not readable; check the path")]
    MissingInput {
        /// The file asked for.
        path: PathBuf,
        /// What the file was meant to be ("suitability raster", "records", ...).
        what: &'static str,
    },
    /// GDAL failed on a file; the operation and the path give the context.
    #[error("{path}: {operation} failed: {}", gdal_text(source))]
    Gdal {
        /// The file GDAL was working on.
        path: PathBuf,
        /// What we asked GDAL to do.
        operation: String,
        /// GDAL's own error.
        #[source]
        source: gdal::errors::GdalError,
    },
    /// The raster has no coordinate reference system.
    #[error("{path}: raster has no CRS; assign one (e.g. gdal_edit.py -a_srs EPSG:4326 FILE) and run again")]
    MissingCrs {
        /// The raster.
        path: PathBuf,
    },
    /// The raster's layout is not supported (rotation, several bands, ...).
    #[error("{path}: {reason}")]
    UnsupportedRaster {
        /// The raster.
        path: PathBuf,
        /// What is wrong and what to do.
        reason: String,
    },
    /// A bad record or a bad records file.
    #[error("{path}: {reason}")]
    Records {
        /// The records file.
        path: PathBuf,
        /// What is wrong, naming the line or column, and how to fix it.
        reason: String,
    },
    /// A bad accessible-area polygon file.
    #[error("{path}: {reason}")]
    Accessible {
        /// The polygon file.
        path: PathBuf,
        /// What is wrong and how to fix it.
        reason: String,
    },
    /// An option value that cannot be used.
    #[error("{option}: {reason}")]
    InvalidOption {
        /// The option as the user typed it, e.g. `--omission`.
        option: &'static str,
        /// Why the value is refused.
        reason: String,
    },
    /// A CRS string that GDAL/PROJ does not understand, or a failed transform.
    #[error("{what}: {reason}")]
    Crs {
        /// Which CRS (the option or the file).
        what: String,
        /// What went wrong.
        reason: String,
    },
    /// The records leave nothing to compute a threshold from.
    #[error("{path}: {reason}")]
    NoUsableRecords {
        /// The records file.
        path: PathBuf,
        /// Counts of what was excluded and why.
        reason: String,
    },
    /// An output cannot be written.
    #[error("{path}: {reason}")]
    Output {
        /// The output file or folder.
        path: PathBuf,
        /// What is wrong and how to fix it.
        reason: String,
    },
    /// An input file that exists but cannot be read (permissions, a folder, I/O failure).
    #[error("{path}: cannot be read: {source}")]
    InputIo {
        /// The input file.
        path: PathBuf,
        /// The operating system's error.
        #[source]
        source: std::io::Error,
    },
    /// The inputs were accepted but the computation could not be completed (for example
    /// a transformation of the raster grid that PROJ cannot do). Not the user's fault in
    /// the usual case; the message says what failed.
    #[error("{what}: {reason}")]
    Processing {
        /// What was being computed.
        what: String,
        /// What went wrong and what can be done.
        reason: String,
    },
    /// A run file that cannot be used, or a run folder or input that no longer matches its
    /// run file (`areal rerun`, `areal verify`).
    #[error("{path}: {reason}")]
    RunFile {
        /// The run file.
        path: PathBuf,
        /// What does not match and what to do.
        reason: String,
    },
    /// A batch manifest with bad rows (each named by its line).
    #[error("{path}: {reason}")]
    Manifest {
        /// The manifest.
        path: PathBuf,
        /// The bad rows and how to fix them.
        reason: String,
    },
    /// An I/O error on a named output file or folder.
    #[error("{path}: {source}")]
    Io {
        /// The file or folder.
        path: PathBuf,
        /// The operating system's error.
        #[source]
        source: std::io::Error,
    },
}

impl Error {
    /// Wrap a GDAL error with the file and the operation.
    pub fn gdal(
        path: impl Into<PathBuf>,
        operation: impl Into<String>,
    ) -> impl FnOnce(gdal::errors::GdalError) -> Error {
        let (path, operation) = (path.into(), operation.into());
        move |source| Error::Gdal {
            path,
            operation,
            source,
        }
    }

    /// Wrap an I/O error on an input file.
    pub fn input_io(path: impl Into<PathBuf>) -> impl FnOnce(std::io::Error) -> Error {
        let path = path.into();
        move |source| Error::InputIo { path, source }
    }

    /// Wrap an I/O error with the (output) file.
    pub fn io(path: impl Into<PathBuf>) -> impl FnOnce(std::io::Error) -> Error {
        let path = path.into();
        move |source| Error::Io { path, source }
    }

    /// The stage this error belongs to.
    pub fn stage(&self) -> Stage {
        match self {
            Error::InvalidOption { .. } => Stage::Usage,
            Error::Processing { .. } => Stage::Processing,
            Error::Output { .. } | Error::Io { .. } => Stage::Output,
            Error::MissingInput { .. }
            | Error::InputIo { .. }
            | Error::Gdal { .. }
            | Error::MissingCrs { .. }
            | Error::UnsupportedRaster { .. }
            | Error::Records { .. }
            | Error::Accessible { .. }
            | Error::Crs { .. }
            | Error::NoUsableRecords { .. }
            | Error::RunFile { .. }
            | Error::Manifest { .. } => Stage::Input,
        }
    }

    /// The exit code of this error: 2 usage, 3 input, 4 output, 5 processing.
    pub fn exit_code(&self) -> u8 {
        self.stage().exit_code()
    }
}

/// GDAL's own message in a GDAL error, without the binding's wrapper text.
pub(crate) fn gdal_text(e: &gdal::errors::GdalError) -> String {
    use gdal::errors::GdalError as G;
    let msg = match e {
        G::CplError { msg, .. } | G::NullPointer { msg, .. } => msg.trim().to_string(),
        G::InvalidCoordinateRange { msg, .. } => msg.clone().unwrap_or_default(),
        _ => String::new(),
    };
    if msg.is_empty() {
        e.to_string()
    } else {
        msg
    }
}

/// Where an error arose, for the exit code and the documentation.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Stage {
    /// A bad option or option value: exit 2.
    Usage,
    /// A missing, unreadable or unusable input file or record: exit 3.
    Input,
    /// An output that cannot be written: exit 4.
    Output,
    /// A computation that could not be completed on accepted inputs: exit 5.
    Processing,
}

impl Stage {
    /// The CLI exit code of the stage.
    pub fn exit_code(self) -> u8 {
        match self {
            Stage::Usage => 2,
            Stage::Input => 3,
            Stage::Output => 4,
            Stage::Processing => 5,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn exit_codes_follow_the_documented_table() {
        let p = || PathBuf::from("f");
        let io = || std::io::Error::other("x");
        let cases = [
            (
                Error::InvalidOption {
                    option: "--omission",
                    reason: String::new(),
                },
                2,
            ),
            (Error::MissingCrs { path: p() }, 3),
            (
                Error::InputIo {
                    path: p(),
                    source: io(),
                },
                3,
            ),
            (
                Error::Output {
                    path: p(),
                    reason: String::new(),
                },
                4,
            ),
            (
                Error::Io {
                    path: p(),
                    source: io(),
                },
                4,
            ),
            (
                Error::Processing {
                    what: String::new(),
                    reason: String::new(),
                },
                5,
            ),
        ];
        for (e, code) in cases {
            assert_eq!(e.exit_code(), code, "{e:?}");
        }
    }
}
