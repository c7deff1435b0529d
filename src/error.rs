//! One error type for the library. Every variant names what the user must look at
//! (a file, a record, an option) and, where possible, how to fix it.

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
    #[error("{path}: {operation} failed: {source}")]
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
    /// An I/O error on a named file.
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

    /// Wrap an I/O error with the file.
    pub fn io(path: impl Into<PathBuf>) -> impl FnOnce(std::io::Error) -> Error {
        let path = path.into();
        move |source| Error::Io { path, source }
    }

    /// The exit-code family of this error: 3 for bad input, 4 for output trouble,
    /// 2 for bad options (the same as a usage error).
    pub fn exit_code(&self) -> u8 {
        match self {
            Error::InvalidOption { .. } => 2,
            Error::Output { .. } => 4,
            Error::Io { .. } => 4,
            _ => 3,
        }
    }
}
