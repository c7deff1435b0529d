//! Criterion B area thresholds and the wording areal uses to compare figures with them.
//!
//! Inputs: an EOO and an AOO in km2. Output ([`CriterionB`]): for each figure, the most
//! severe category whose threshold the figure is strictly below, and a sentence saying so
//! ("below the threshold for Endangered"). The comparison is never a listing: criterion B
//! also needs at least two of its conditions (a)–(c), and any assessment is for the
//! responsible authority to review ([`CRITERION_B_CAUTION`]).
//!
//! Source of the numbers: IUCN (2001; 2nd ed. 2012) *IUCN Red List Categories and Criteria:
//! Version 3.1*, criterion B1 (EOO) and B2 (AOO). CR and EN values confirmed against a stored
//! copy of that publication; the VU values (20,000 km2 and 2,000 km2) are quoted from memory,
//! consistent with a secondary text.

use serde::Serialize;

/// One category threshold: a figure strictly below `below_km2` is below the threshold.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CategoryThreshold {
    /// Category name as in the Categories and Criteria.
    pub category: &'static str,
    /// The threshold, km2 (strict `<`).
    pub below_km2: f64,
}

/// Criterion B1 (extent of occurrence) thresholds, most severe first.
/// IUCN Red List Categories and Criteria v3.1: CR < 100 km2, EN < 5,000 km2 (confirmed);
/// VU < 20,000 km2 (from memory).
pub const EOO_THRESHOLDS: [CategoryThreshold; 3] = [
    CategoryThreshold {
        category: "Critically Endangered",
        below_km2: 100.0,
    },
    CategoryThreshold {
        category: "Endangered",
        below_km2: 5_000.0,
    },
    CategoryThreshold {
        category: "Vulnerable",
        below_km2: 20_000.0,
    },
];

/// Criterion B2 (area of occupancy) thresholds, most severe first.
/// IUCN Red List Categories and Criteria v3.1: CR < 10 km2, EN < 500 km2 (confirmed);
/// VU < 2,000 km2 (from memory).
pub const AOO_THRESHOLDS: [CategoryThreshold; 3] = [
    CategoryThreshold {
        category: "Critically Endangered",
        below_km2: 10.0,
    },
    CategoryThreshold {
        category: "Endangered",
        below_km2: 500.0,
    },
    CategoryThreshold {
        category: "Vulnerable",
        below_km2: 2_000.0,
    },
];

/// Where the thresholds come from, as printed in the report.
pub const CRITERION_B_SOURCE: &str = "IUCN Red List Categories and Criteria, version 3.1 (IUCN 2001; 2nd ed. 2012), criterion B1 (EOO < 100, 5,000, 20,000 km2) and B2 (AOO < 10, 500, 2,000 km2)";

/// The caution printed with every comparison.
pub const CRITERION_B_CAUTION: &str = "Being below an area threshold is not a listing: criterion B also requires at least two of its conditions (a) severe fragmentation or a small number of locations, (b) continuing decline, (c) extreme fluctuations, and any assessment must be made and reviewed by the responsible Red List authority. These are model- and record-based estimates.";

/// The comparison of one EOO / AOO pair with criterion B's thresholds.
#[derive(Debug, Clone, Serialize, PartialEq, schemars::JsonSchema)]
pub struct CriterionB {
    /// The most severe category whose B1 threshold the EOO is below; null when none (or no EOO).
    pub eoo_below_threshold_for: Option<String>,
    /// The most severe category whose B2 threshold the AOO is below; null when none.
    pub aoo_below_threshold_for: Option<String>,
    /// The comparison in words.
    pub statements: Vec<String>,
    /// Source of the thresholds.
    pub source: String,
    /// What the comparison does not mean.
    pub caution: String,
}

/// The most severe category whose threshold `km2` is strictly below.
pub fn below_threshold_for(km2: f64, table: &[CategoryThreshold]) -> Option<&'static str> {
    table.iter().find(|t| km2 < t.below_km2).map(|t| t.category)
}

/// Compare an EOO (None when it could not be computed) and an AOO with criterion B.
/// `what` names the figures' basis ("records", "modelled range").
pub fn compare(eoo_km2: Option<f64>, aoo_km2: f64, what: &str) -> CriterionB {
    let mut statements = Vec::new();
    let eoo_cat = eoo_km2.and_then(|e| below_threshold_for(e, &EOO_THRESHOLDS));
    match (eoo_km2, eoo_cat) {
        (Some(e), Some(cat)) => statements.push(format!(
            "EOO of the {what}, {} km2, is below the threshold for {cat} under criterion B1 (< {} km2).",
            fmt_km2(e),
            fmt_km2(threshold_of(cat, &EOO_THRESHOLDS))
        )),
        (Some(e), None) => statements.push(format!(
            "EOO of the {what}, {} km2, is not below any criterion B1 threshold (the largest is {} km2, for Vulnerable).",
            fmt_km2(e),
            fmt_km2(EOO_THRESHOLDS[2].below_km2)
        )),
        (None, _) => statements.push(format!(
            "EOO of the {what} could not be computed, so it is not compared with criterion B1."
        )),
    }
    let aoo_cat = below_threshold_for(aoo_km2, &AOO_THRESHOLDS);
    match aoo_cat {
        Some(cat) => statements.push(format!(
            "AOO of the {what}, {} km2, is below the threshold for {cat} under criterion B2 (< {} km2).",
            fmt_km2(aoo_km2),
            fmt_km2(threshold_of(cat, &AOO_THRESHOLDS))
        )),
        None => statements.push(format!(
            "AOO of the {what}, {} km2, is not below any criterion B2 threshold (the largest is {} km2, for Vulnerable).",
            fmt_km2(aoo_km2),
            fmt_km2(AOO_THRESHOLDS[2].below_km2)
        )),
    }
    CriterionB {
        eoo_below_threshold_for: eoo_cat.map(String::from),
        aoo_below_threshold_for: aoo_cat.map(String::from),
        statements,
        source: CRITERION_B_SOURCE.into(),
        caution: CRITERION_B_CAUTION.into(),
    }
}

fn threshold_of(cat: &str, table: &[CategoryThreshold]) -> f64 {
    table
        .iter()
        .find(|t| t.category == cat)
        .map_or(f64::NAN, |t| t.below_km2)
}

/// An area in km2 with thousands separators: one decimal below 10,000 km2, none above.
pub(crate) fn fmt_km2(x: f64) -> String {
    if !x.is_finite() {
        return format!("{x}");
    }
    let s = if x.abs() >= 10_000.0 || x.fract() == 0.0 {
        format!("{:.0}", x)
    } else {
        format!("{:.1}", x)
    };
    let (int, frac) = s
        .split_once('.')
        .map_or((s.as_str(), None), |(a, b)| (a, Some(b)));
    let (sign, digits) = int.strip_prefix('-').map_or(("", int), |d| ("-", d));
    let mut grouped = String::new();
    for (i, ch) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i) % 3 == 0 {
            grouped.push(',');
        }
        grouped.push(ch);
    }
    match frac {
        Some(f) => format!("{sign}{grouped}.{f}"),
        None => format!("{sign}{grouped}"),
    }
}
