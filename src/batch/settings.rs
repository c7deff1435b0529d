//! The options of one range run as named text values: the columns of a batch manifest and the
//! `[options]` table of a run file use the same names (the `areal range` options with `-`
//! written `_`) and the same value syntax, and both turn into [`RangeOptions`] here, through the
//! library's own checked constructors.

use crate::access::AccessSpec;
use crate::metrics::MetricsOptions;
use crate::patches::Connectivity;
use crate::records::RecordOptions;
use crate::vectors::{VectorCrs, VectorOptions};
use crate::{Error, ProgressHandle, RangeOptions, Result, ThresholdSpec};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// Every option of a range run, by its manifest / run-file name.
pub const OPTION_KEYS: [&str; 20] = [
    "omission",
    "threshold",
    "accessible",
    "buffer_km",
    "hull_buffer_km",
    "connectivity",
    "keep_duplicates",
    "lon_col",
    "lat_col",
    "records_crs",
    "records_layer",
    "vectors",
    "vector_crs",
    "simplify_m",
    "aoo_cell_km",
    "min_patch_km2",
    "gap_km",
    "keep_dropped",
    "no_metrics",
    "no_report",
];

/// Option values by name; a missing or empty value means the option is not given.
pub type Settings = BTreeMap<String, String>;

/// `--buffer-km` for `buffer_km`: the command-line spelling, for error messages.
fn flag(key: &str) -> &'static str {
    match key {
        "omission" => "--omission",
        "threshold" => "--threshold",
        "accessible" => "--accessible",
        "buffer_km" => "--buffer-km",
        "hull_buffer_km" => "--hull-buffer-km",
        "connectivity" => "--connectivity",
        "keep_duplicates" => "--keep-duplicates",
        "lon_col" => "--lon-col",
        "lat_col" => "--lat-col",
        "records_crs" => "--records-crs",
        "records_layer" => "--records-layer",
        "vectors" => "--vectors",
        "vector_crs" => "--vector-crs",
        "simplify_m" => "--simplify-m",
        "aoo_cell_km" => "--aoo-cell-km",
        "min_patch_km2" => "--min-patch-km2",
        "gap_km" => "--gap-km",
        "keep_dropped" => "--keep-dropped",
        _ => "--no-metrics",
    }
}

struct Reader<'a>(&'a Settings);

impl Reader<'_> {
    fn text(&self, key: &str) -> Option<String> {
        self.0
            .get(key)
            .map(|v| v.trim().to_string())
            .filter(|v| !v.is_empty())
    }
    fn num(&self, key: &str) -> Result<Option<f64>> {
        match self.text(key) {
            None => Ok(None),
            Some(v) => v
                .parse::<f64>()
                .map(Some)
                .map_err(|_| Error::InvalidOption {
                    option: flag(key),
                    reason: format!("{key} = \"{v}\" is not a number"),
                }),
        }
    }
    fn flag(&self, key: &str) -> Result<bool> {
        match self.text(key).map(|v| v.to_ascii_lowercase()) {
            None => Ok(false),
            Some(v) if ["true", "yes", "1"].contains(&v.as_str()) => Ok(true),
            Some(v) if ["false", "no", "0"].contains(&v.as_str()) => Ok(false),
            Some(v) => Err(Error::InvalidOption {
                option: flag(key),
                reason: format!("{key} = \"{v}\" is not true or false (also yes/no, 1/0)"),
            }),
        }
    }
}

/// Refuse names that are not options.
pub fn check_keys<'a>(keys: impl IntoIterator<Item = &'a String>) -> Result<()> {
    for k in keys {
        if !OPTION_KEYS.contains(&k.as_str()) {
            return Err(Error::InvalidOption {
                option: "--manifest",
                reason: format!(
                    "\"{k}\" is not an option of areal range; use one of {}",
                    OPTION_KEYS.join(", ")
                ),
            });
        }
    }
    Ok(())
}

/// Build the run's options. A relative `accessible` path is taken relative to `base`.
pub fn to_range_options(
    s: &Settings,
    base: &Path,
    progress: ProgressHandle,
) -> Result<RangeOptions> {
    check_keys(s.keys())?;
    let r = Reader(s);
    let threshold = match (r.num("omission")?, r.num("threshold")?) {
        (Some(e), None) => ThresholdSpec::omission(e)?,
        (None, Some(v)) => ThresholdSpec::fixed(v)?,
        (Some(_), Some(_)) => {
            return Err(Error::InvalidOption {
                option: "--omission",
                reason: "both omission and threshold are given; give one of them".into(),
            })
        }
        (None, None) => return Err(Error::InvalidOption {
            option: "--omission",
            reason:
                "neither omission nor threshold is given; give one (a column or a default option)"
                    .into(),
        }),
    };
    let connectivity = match r.text("connectivity").as_deref() {
        None | Some("8") => Connectivity::Eight,
        Some("4") => Connectivity::Four,
        Some(v) => {
            return Err(Error::InvalidOption {
                option: "--connectivity",
                reason: format!("connectivity = \"{v}\"; give 8 or 4"),
            })
        }
    };
    let vector_crs = r.text("vector_crs").map(|c| {
        if c.eq_ignore_ascii_case("auto") {
            VectorCrs::Auto
        } else {
            VectorCrs::Given(c)
        }
    });
    let simplify_m = r.num("simplify_m")?;
    let vectors = (r.flag("vectors")? || vector_crs.is_some() || simplify_m.is_some()).then_some({
        VectorOptions {
            equal_area: vector_crs,
            simplify_m,
        }
    });
    let metrics = MetricsOptions {
        enabled: !r.flag("no_metrics")?,
        aoo_cell_km: r.num("aoo_cell_km")?.unwrap_or(2.0),
        min_patch_km2: r.num("min_patch_km2")?,
        gap_km: r.num("gap_km")?,
        keep_dropped: r.flag("keep_dropped")?,
    };
    metrics.check()?;
    Ok(RangeOptions {
        threshold,
        access: AccessSpec {
            polygon: r.text("accessible").map(|p| base.join(p)),
            buffer_km: r.num("buffer_km")?,
            hull_buffer_km: r.num("hull_buffer_km")?,
        },
        connectivity,
        keep_duplicates: r.flag("keep_duplicates")?,
        records: RecordOptions {
            lon_col: r.text("lon_col"),
            lat_col: r.text("lat_col"),
            crs: r.text("records_crs").unwrap_or_else(|| "EPSG:4326".into()),
            layer: r.text("records_layer"),
        },
        progress,
        vectors,
        metrics,
        report: !r.flag("no_report")?,
        model: Default::default(),
    })
}

/// Every option of `opts` with its value, defaults included; options not given are "".
/// Numbers are written so that they read back to the same f64.
pub fn from_range_options(opts: &RangeOptions) -> Settings {
    let num = |v: Option<f64>| v.map_or(String::new(), |v| v.to_string());
    let text = |v: &Option<String>| v.clone().unwrap_or_default();
    let path = |v: &Option<PathBuf>| {
        v.as_ref()
            .map_or(String::new(), |p| p.display().to_string())
    };
    let (omission, threshold) = match opts.threshold {
        ThresholdSpec::Omission(e) => (Some(e), None),
        ThresholdSpec::Fixed(v) => (None, Some(v)),
    };
    let v = opts.vectors.as_ref();
    let pairs: [(&str, String); 20] = [
        ("omission", num(omission)),
        ("threshold", num(threshold)),
        ("accessible", path(&opts.access.polygon)),
        ("buffer_km", num(opts.access.buffer_km)),
        ("hull_buffer_km", num(opts.access.hull_buffer_km)),
        (
            "connectivity",
            match opts.connectivity {
                Connectivity::Eight => "8",
                Connectivity::Four => "4",
            }
            .into(),
        ),
        ("keep_duplicates", opts.keep_duplicates.to_string()),
        ("lon_col", text(&opts.records.lon_col)),
        ("lat_col", text(&opts.records.lat_col)),
        ("records_crs", opts.records.crs.clone()),
        ("records_layer", text(&opts.records.layer)),
        ("vectors", v.is_some().to_string()),
        (
            "vector_crs",
            match v.and_then(|v| v.equal_area.as_ref()) {
                None => String::new(),
                Some(VectorCrs::Auto) => "auto".into(),
                Some(VectorCrs::Given(c)) => c.clone(),
            },
        ),
        ("simplify_m", num(v.and_then(|v| v.simplify_m))),
        ("aoo_cell_km", opts.metrics.aoo_cell_km.to_string()),
        ("min_patch_km2", num(opts.metrics.min_patch_km2)),
        ("gap_km", num(opts.metrics.gap_km)),
        ("keep_dropped", opts.metrics.keep_dropped.to_string()),
        ("no_metrics", (!opts.metrics.enabled).to_string()),
        ("no_report", (!opts.report).to_string()),
    ];
    pairs.into_iter().map(|(k, v)| (k.to_string(), v)).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn settings(pairs: &[(&str, &str)]) -> Settings {
        pairs
            .iter()
            .map(|(k, v)| (k.to_string(), v.to_string()))
            .collect()
    }

    #[test]
    fn options_round_trip_through_text() {
        let s = settings(&[
            ("omission", "7.25"),
            ("buffer_km", "150"),
            ("connectivity", "4"),
            ("simplify_m", "0.1"),
            ("gap_km", "12.5"),
            ("keep_dropped", "yes"),
        ]);
        let o = to_range_options(&s, Path::new("/m"), ProgressHandle::default()).unwrap();
        assert_eq!(o.threshold, ThresholdSpec::Omission(7.25));
        assert_eq!(o.connectivity, Connectivity::Four);
        assert_eq!(o.vectors.as_ref().unwrap().simplify_m, Some(0.1));
        let back = from_range_options(&o);
        assert_eq!(back.len(), OPTION_KEYS.len());
        assert_eq!(back["omission"], "7.25");
        assert_eq!(back["vectors"], "true");
        assert_eq!(back["aoo_cell_km"], "2");
        let again = to_range_options(&back, Path::new("/m"), ProgressHandle::default()).unwrap();
        assert_eq!(from_range_options(&again), back);
    }

    #[test]
    fn bad_values_name_the_option() {
        let e = to_range_options(
            &settings(&[("omission", "five")]),
            Path::new("."),
            ProgressHandle::default(),
        )
        .unwrap_err()
        .to_string();
        assert!(e.contains("--omission") && e.contains("five"), "{e}");
        let e = to_range_options(
            &settings(&[("threshold", "0.5"), ("colour", "x")]),
            Path::new("."),
            ProgressHandle::default(),
        )
        .unwrap_err()
        .to_string();
        assert!(e.contains("\"colour\" is not an option"), "{e}");
        let e = to_range_options(&settings(&[]), Path::new("."), ProgressHandle::default())
            .unwrap_err()
            .to_string();
        assert!(e.contains("neither omission nor threshold"), "{e}");
    }
}
