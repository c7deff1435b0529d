//! The hostile-input catalogue (docs/hostile-input.md): each test drives the real binary
//! with one bad input and asserts the exact outcome its name states: a refusal with the
//! exit code and a message naming the file, line, feature or option, or a documented repair
//! with its warning in summary.json and on stderr. Refusals leave no output and no
//! temporary folder; no case may print a panic or a raw GDAL error line.

#[path = "../common/mod.rs"]
mod common;
mod fixture;

mod accessible;
mod found_by_fuzzing;
mod options;
mod output;
mod raster;
mod records;
