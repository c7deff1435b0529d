//! Delimited text records (CSV, TSV, semicolon- or pipe-separated), read with the `csv` crate.
//!
//! - The delimiter is the most frequent of `,` `;` TAB `|` outside quotes in the header line
//!   (ties in that order; a header without any of them gives TAB for `.tsv`, else `,`).
//! - A UTF-8 byte order mark is dropped; fields may be quoted; blank lines are ignored.
//! - Coordinate columns are found case-insensitively, first pair present wins:
//!   decimalLongitude/decimalLatitude, longitude/latitude, lon/lat, long/lat, x/y.
//!   `--lon-col`/`--lat-col` override either side.
//! - With `;` as delimiter, a value such as `12,5` is read as 12.5 (one warning per file).
//! - Line numbers are 1-based file lines, the header being line 1, counted here (the csv
//!   crate's own line count is off after blank lines and with CRLF line ends).

use super::{reproject, RawPoint, RawRecords};
use crate::{Error, Result};
use csv::{ByteRecord, ReaderBuilder};
use std::collections::VecDeque;
use std::io::{BufRead, BufReader, Cursor, Read};
use std::path::Path;

const BOM: &[u8] = b"\xEF\xBB\xBF";
const DELIMITERS: [u8; 4] = [b',', b';', b'\t', b'|'];
/// Coordinate column pairs in detection order (compared case-insensitively).
const PAIRS: [(&str, &str); 5] = [
    ("decimalLongitude", "decimalLatitude"),
    ("longitude", "latitude"),
    ("lon", "lat"),
    ("long", "lat"),
    ("x", "y"),
];
/// Id columns in order of preference (compared case-insensitively).
const ID_COLUMNS: [&str; 3] = ["occurrenceID", "gbifID", "id"];

/// Whether the first bytes of a file look like delimited text with a header line.
pub(super) fn looks_delimited(head: &[u8]) -> bool {
    let head = head.strip_prefix(BOM).unwrap_or(head);
    if head.contains(&0) {
        return false;
    }
    let text = String::from_utf8_lossy(head);
    let text = text.trim_start();
    if text.starts_with(['{', '[', '<']) {
        return false;
    }
    let first = text.lines().next().unwrap_or("");
    first.bytes().any(|b| DELIMITERS.contains(&b))
}

/// The delimiter of a header line: the most frequent candidate outside double quotes.
fn detect_delimiter(header: &[u8], fallback: u8) -> u8 {
    let mut counts = [0usize; 4];
    let mut quoted = false;
    for &b in header {
        if b == b'"' {
            quoted = !quoted;
        } else if !quoted {
            if let Some(i) = DELIMITERS.iter().position(|&d| d == b) {
                counts[i] += 1;
            }
        }
    }
    let (best, n) = counts
        .iter()
        .enumerate()
        .fold((0, 0), |acc, (i, &n)| if n > acc.1 { (i, n) } else { acc });
    if n == 0 {
        fallback
    } else {
        DELIMITERS[best]
    }
}

/// Index of a header name: exact match first, then case-insensitive.
fn find(headers: &[String], name: &str) -> Option<usize> {
    headers
        .iter()
        .position(|h| h == name)
        .or_else(|| headers.iter().position(|h| h.eq_ignore_ascii_case(name)))
}

/// The (lon, lat) column indices, from the options or by detection.
fn choose_columns(
    path: &Path,
    headers: &[String],
    opts: &super::RecordOptions,
) -> Result<(usize, usize)> {
    let listed = headers.join(", ");
    let named = |name: &str, option: &'static str| {
        find(headers, name).ok_or_else(|| Error::InvalidOption {
            option,
            reason: format!(
                "column '{name}' is not in {}; columns found: {listed}; pass one of them to {option}",
                path.display()
            ),
        })
    };
    let auto = PAIRS
        .iter()
        .find_map(|(lo, la)| Some((find(headers, lo)?, find(headers, la)?)));
    let side = |pick: fn(&(&'static str, &'static str)) -> &'static str| {
        PAIRS.iter().find_map(|p| find(headers, pick(p)))
    };
    let (lon, lat) = match (&opts.lon_col, &opts.lat_col) {
        (Some(lo), Some(la)) => (named(lo, "--lon-col")?, named(la, "--lat-col")?),
        (Some(lo), None) => (
            named(lo, "--lon-col")?,
            side(|p| p.1).ok_or_else(|| missing(path, &listed, "latitude", "--lat-col"))?,
        ),
        (None, Some(la)) => (
            side(|p| p.0).ok_or_else(|| missing(path, &listed, "longitude", "--lon-col"))?,
            named(la, "--lat-col")?,
        ),
        (None, None) => auto.ok_or_else(|| Error::Records {
            path: path.to_path_buf(),
            reason: format!(
                "no longitude/latitude column pair recognised in the header [{listed}] \
                 (looked for decimalLongitude/decimalLatitude, longitude/latitude, lon/lat, \
                 long/lat, x/y); name the columns with --lon-col and --lat-col"
            ),
        })?,
    };
    if lon == lat {
        return Err(Error::InvalidOption {
            option: "--lat-col",
            reason: format!(
                "the latitude column '{}' is also the longitude column; name two different columns",
                headers[lat]
            ),
        });
    }
    Ok((lon, lat))
}

fn missing(path: &Path, listed: &str, what: &str, option: &str) -> Error {
    Error::Records {
        path: path.to_path_buf(),
        reason: format!(
            "no {what} column recognised in the header [{listed}]; name it with {option}"
        ),
    }
}

/// One coordinate field, parsed.
enum Coord {
    Number(f64),
    DecimalComma(f64),
    Blank,
    NotNumber,
}

fn parse_coord(raw: &[u8], delimiter: u8) -> Coord {
    let s = String::from_utf8_lossy(raw);
    let s = s.trim();
    if s.is_empty() {
        return Coord::Blank;
    }
    if let Ok(v) = s.parse::<f64>() {
        return if v.is_finite() {
            Coord::Number(v)
        } else {
            Coord::NotNumber
        };
    }
    let one_comma = s.bytes().filter(|&b| b == b',').count() == 1 && !s.contains('.');
    if delimiter == b';' && one_comma {
        if let Ok(v) = s.replace(',', ".").parse::<f64>() {
            if v.is_finite() {
                return Coord::DecimalComma(v);
            }
        }
    }
    Coord::NotNumber
}

/// Read a delimited text file into raw points in the `--records-crs` CRS.
pub(super) fn read(path: &Path, opts: &super::RecordOptions) -> Result<RawRecords> {
    let srs = crate::crs::from_definition(&opts.crs, "--records-crs")?;
    let geographic = reproject::is_geographic_degrees(&srs);
    let file = std::fs::File::open(path).map_err(Error::input_io(path))?;
    let mut buf = BufReader::new(file);
    if buf
        .fill_buf()
        .map_err(Error::input_io(path))?
        .starts_with(BOM)
    {
        buf.consume(BOM.len());
    }
    // Read up to the first non-blank line (the header); the csv reader still sees every
    // byte, so its line numbers stay file line numbers.
    let mut head = Vec::new();
    let header_start = loop {
        let start = head.len();
        if buf
            .read_until(b'\n', &mut head)
            .map_err(Error::input_io(path))?
            == 0
        {
            return Err(Error::Records {
                path: path.to_path_buf(),
                reason: "no records: the file is empty".into(),
            });
        }
        if !head[start..].iter().all(u8::is_ascii_whitespace) {
            break start;
        }
    };
    let is_tsv = path
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("tsv"));
    let delimiter = detect_delimiter(&head[header_start..], if is_tsv { b'\t' } else { b',' });
    let mut rdr = ReaderBuilder::new()
        .delimiter(delimiter)
        .has_headers(true)
        .flexible(true)
        .from_reader(LineCounter::new(Cursor::new(head).chain(buf)));
    let bad = |e: csv::Error| Error::Records {
        path: path.to_path_buf(),
        reason: format!("cannot be read as delimited text: {e}"),
    };
    let headers: Vec<String> = rdr
        .byte_headers()
        .map_err(bad)?
        .iter()
        .map(|h| String::from_utf8_lossy(h).trim().to_string())
        .collect();
    let (lon_i, lat_i) = choose_columns(path, &headers, opts)?;
    let id_i = ID_COLUMNS.iter().find_map(|c| find(&headers, c));
    let (lon_role, lat_role) = if geographic {
        ("longitude", "latitude")
    } else {
        ("x", "y")
    };

    let mut out = RawRecords {
        points: Vec::new(),
        rows: 0,
        columns: (headers[lon_i].clone(), headers[lat_i].clone()),
        warnings: Vec::new(),
        srs,
        crs_label: format!("--records-crs {}", opts.crs),
        swap_hint:
            "are longitude and latitude swapped? use --lon-col/--lat-col to name the columns",
    };
    if opts.layer.is_some() {
        out.warnings.push(format!(
            "{}: --records-layer ignored for a delimited text file",
            path.display()
        ));
    }
    let (mut commas, mut first_comma) = (0usize, String::new());
    let mut rec = ByteRecord::new();
    while rdr.read_byte_record(&mut rec).map_err(bad)? {
        out.rows += 1;
        let line = rdr
            .get_mut()
            .line_at(rec.position().map_or(0, |p| p.byte()));
        let origin = format!("line {line}");
        let mut values = [0.0f64; 2];
        let mut skip = None;
        for (k, (i, role)) in [(lon_i, lon_role), (lat_i, lat_role)]
            .into_iter()
            .enumerate()
        {
            let field = rec.get(i).unwrap_or(b"");
            match parse_coord(field, delimiter) {
                Coord::Number(v) => values[k] = v,
                Coord::DecimalComma(v) => {
                    values[k] = v;
                    if commas == 0 {
                        first_comma =
                            format!("{origin}: '{}'", String::from_utf8_lossy(field).trim());
                    }
                    commas += 1;
                }
                Coord::Blank => {
                    skip = Some(format!("{role} is blank (column {})", headers[i]));
                    break;
                }
                Coord::NotNumber => {
                    let v = String::from_utf8_lossy(field);
                    skip = Some(format!(
                        "{role} '{}' is not a number (column {})",
                        v.trim(),
                        headers[i]
                    ));
                    break;
                }
            }
        }
        if let Some(why) = skip {
            out.warnings.push(format!(
                "{} {origin}: {why}; record skipped",
                path.display()
            ));
            continue;
        }
        let id = id_i
            .and_then(|i| rec.get(i))
            .map(|v| String::from_utf8_lossy(v).trim().to_string())
            .unwrap_or_default();
        out.points.push(RawPoint {
            origin,
            id,
            x: values[0],
            y: values[1],
        });
    }
    if commas > 0 {
        out.warnings.push(format!(
            "{}: {commas} coordinate value(s) written with a decimal comma were read with a \
             decimal point (first at {first_comma})",
            path.display()
        ));
    }
    Ok(out)
}

/// Passes bytes through to the csv reader and tells the file line of a record from the
/// byte offset where the csv reader says it starts. That offset may point at the line
/// ends (and blank lines) before the record, so those are skipped. Only the bytes not yet
/// behind the current record are kept.
struct LineCounter<R> {
    inner: R,
    window: VecDeque<u8>,
    /// File offset of `window[0]`.
    base: u64,
    /// Line ends before `base`.
    newlines: u64,
}

impl<R: Read> LineCounter<R> {
    fn new(inner: R) -> Self {
        LineCounter {
            inner,
            window: VecDeque::new(),
            base: 0,
            newlines: 0,
        }
    }

    /// 1-based line of the first byte at or after `byte` that is not a line end.
    /// Calls must come with non-decreasing offsets.
    fn line_at(&mut self, byte: u64) -> u64 {
        while self.base < byte {
            match self.window.pop_front() {
                Some(b) => {
                    self.newlines += u64::from(b == b'\n');
                    self.base += 1;
                }
                None => break,
            }
        }
        let run = self
            .window
            .iter()
            .take_while(|&&b| b == b'\r' || b == b'\n');
        self.newlines + run.filter(|&&b| b == b'\n').count() as u64 + 1
    }
}

impl<R: Read> Read for LineCounter<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.inner.read(buf)?;
        self.window.extend(&buf[..n]);
        Ok(n)
    }
}
