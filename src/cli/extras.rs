//! Worked examples shown by `--help`, and the generated extras: shell completions and the man
//! page, both from the clap definitions (clap_complete, clap_mangen).

use super::args::Cli;
use clap::CommandFactory;
use std::io::Write;

/// Shown after `areal --help`.
pub(crate) const EXAMPLES: &str = "\
Examples:
  # The range with 5 % tolerated omission, M from a polygon file:
  areal range --suitability suitability.tif --records records.csv --omission 5 \\
              --accessible accessible.geojson --out run1
  # Record metrics only (EOO, AOO):
  areal extent --records records.csv
  # Shell completions and the man page:
  areal completions bash > ~/.local/share/bash-completion/completions/areal
  areal man > areal.1

Each subcommand has its own examples: areal range --help, areal extent --help.";

/// Shown after `areal range --help`.
pub(crate) const RANGE_EXAMPLES: &str = "\
Examples:
  # E = 5 % chosen beforehand; M is a polygon; vectors for GIS:
  areal range --suitability suitability.tif --records records.csv --omission 5 \\
              --accessible accessible.geojson --out run1 --vectors
  # M as the cells within 150 km of a record; a fixed threshold; 4-neighbour patches:
  areal range --suitability suit.tif --records occ.csv --threshold 0.42 \\
              --buffer-km 150 --connectivity 4 --out run2
  # Stepping-stone reach with jumps of at most 25 km; machine-readable summary on stdout:
  areal range --suitability suit.tif --records occ.gpkg --records-layer points --omission 10 \\
              --hull-buffer-km 50 --gap-km 25 --out run3 --json --quiet
  # Records in a projected CRS, named columns; replace an earlier run:
  areal range --suitability suit.tif --records occ.csv --lon-col east --lat-col north \\
              --records-crs EPSG:3035 --omission 0 --out run1 --overwrite

Outputs in DIR: classes.tif (+ .aux.xml, classes.qml), patches.csv, records.csv, summary.json
(schema: areal schema), and with --vectors range.gpkg and GeoJSON files.";

/// Shown after `areal polygons --help`.
pub(crate) const POLYGONS_EXAMPLES: &str = "\
Examples:
  # Vectors of run1 (made with --accessible accessible.geojson), also in an equal-area CRS:
  areal polygons --classes run1/classes.tif --accessible accessible.geojson \\
                 --vector-crs --out run1-vectors";

/// Shown after `areal extent --help`.
pub(crate) const EXTENT_EXAMPLES: &str = "\
Examples:
  # EOO and AOO of the records alone:
  areal extent --records records.csv
  # With the modelled range of an earlier run, on a 1 km AOO grid, as JSON:
  areal extent --records records.csv --range run1/classes.tif --aoo-cell-km 1 --json";

/// Write the completion script for `shell` to stdout.
pub(crate) fn completions(shell: clap_complete::Shell) {
    let mut cmd = Cli::command();
    let mut buf = Vec::new();
    clap_complete::generate(shell, &mut cmd, "areal", &mut buf);
    // A closed stdout (e.g. `| head`) is not an error.
    let _ = std::io::stdout().lock().write_all(&buf);
}

/// Write the man page (roff) of areal and its subcommands to stdout.
pub(crate) fn man_page() -> std::io::Result<()> {
    let cmd = Cli::command();
    let mut out = std::io::stdout().lock();
    clap_mangen::Man::new(cmd.clone()).render(&mut out)?;
    for sub in cmd.get_subcommands() {
        let name = format!("areal-{}", sub.get_name());
        let sub = sub.clone().display_name(name);
        writeln!(out)?;
        clap_mangen::Man::new(sub).render(&mut out)?;
    }
    Ok(())
}
