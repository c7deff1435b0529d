//! The omission-based threshold.
//!
//! Inputs: the suitability of the cell under each usable record (records outside the
//! raster or on nodata never reach this module). Output: a threshold T; a cell is
//! suitable when its suitability is `>= T`.
//!
//! Rule (least training presence threshold, Pearson et al. 2007, generalised to a share E
//! of records tolerated as erroneous): sort the n values ascending, drop the
//! k = floor(n * E / 100) lowest, and T is the lowest remaining value. With E = 0 this is
//! the plain least training presence threshold. The floor is the only rank rule that
//! guarantees a training omission rate of at most E; E is meant to be fixed before the
//! results are seen. See docs/threshold.md.

use crate::{Error, Result};

/// How the threshold is set.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ThresholdSpec {
    /// Tolerate this percentage E of records as erroneous (0 <= E < 100).
    Omission(f64),
    /// A fixed suitability value chosen by the user.
    Fixed(f64),
}

impl ThresholdSpec {
    /// A checked omission rule: E must be finite and in [0, 100).
    ///
    /// ```
    /// use areal::ThresholdSpec;
    /// assert!(ThresholdSpec::omission(5.0).is_ok());
    /// assert!(ThresholdSpec::omission(100.0).is_err());
    /// ```
    pub fn omission(e_percent: f64) -> Result<Self> {
        if !e_percent.is_finite() || !(0.0..100.0).contains(&e_percent) {
            return Err(Error::InvalidOption {
                option: "--omission",
                reason: format!(
                    "E = {e_percent} is outside 0 <= E < 100 (a percentage, e.g. --omission 5)"
                ),
            });
        }
        Ok(ThresholdSpec::Omission(e_percent))
    }

    /// A checked fixed threshold: any finite value.
    pub fn fixed(value: f64) -> Result<Self> {
        if !value.is_finite() {
            return Err(Error::InvalidOption {
                option: "--threshold",
                reason: format!("{value} is not a finite number"),
            });
        }
        Ok(ThresholdSpec::Fixed(value))
    }
}

/// The threshold chosen and how.
#[derive(Debug, Clone, PartialEq)]
pub struct Threshold {
    /// T: cells with suitability >= T are suitable.
    pub value: f64,
    /// The rule that gave T, in words, for the report.
    pub method: String,
    /// Number of record values the rule saw (n).
    pub records_used: usize,
    /// Number of lowest values dropped (k).
    pub records_dropped: usize,
    /// Number of values strictly below T (the training omission; can be < k when values tie).
    pub records_omitted: usize,
}

/// Compute the threshold from the record values.
///
/// ```
/// use areal::{omission_threshold, ThresholdSpec};
/// let v = [0.9, 0.2, 0.5, 0.7];
/// let t = omission_threshold(&v, ThresholdSpec::omission(25.0)?)?;
/// assert_eq!((t.value, t.records_dropped), (0.5, 1));
/// # Ok::<(), areal::Error>(())
/// ```
pub fn omission_threshold(values: &[f64], spec: ThresholdSpec) -> Result<Threshold> {
    if let Some(bad) = values.iter().find(|v| !v.is_finite()) {
        return Err(Error::Processing {
            what: "threshold".into(),
            reason: format!(
                "a record value is {bad}; nodata and non-finite cells must be excluded first"
            ),
        });
    }
    match spec {
        ThresholdSpec::Fixed(t) => Ok(Threshold {
            value: t,
            method: format!("fixed value {t} set by the user"),
            records_used: values.len(),
            records_dropped: 0,
            records_omitted: values.iter().filter(|&&v| v < t).count(),
        }),
        ThresholdSpec::Omission(e) => {
            let n = values.len();
            if n == 0 {
                return Err(Error::InvalidOption {
                    option: "--omission",
                    reason: "no record values to compute a threshold from".into(),
                });
            }
            let k = drop_count(n, e);
            let mut sorted = values.to_vec();
            sorted.sort_by(f64::total_cmp);
            let t = sorted[k];
            let method = if e == 0.0 {
                "least training presence threshold (Pearson et al. 2007): lowest suitability at a record".to_string()
            } else {
                format!(
                    "least training presence threshold with E = {e}% tolerated omission (Pearson et al. 2007): \
                     lowest {k} of {n} record values dropped (k = floor(n*E/100))"
                )
            };
            Ok(Threshold {
                value: t,
                method,
                records_used: n,
                records_dropped: k,
                records_omitted: sorted.iter().filter(|&&v| v < t).count(),
            })
        }
    }
}

/// k = floor(n * E / 100), never n (at least one value stays, since E < 100).
/// A relative epsilon absorbs binary rounding of n*E/100 (e.g. 20 * 5.0 / 100).
pub(crate) fn drop_count(n: usize, e_percent: f64) -> usize {
    let x = n as f64 * e_percent / 100.0;
    let k = (x + 1e-9 * x.max(1.0)).floor() as usize;
    k.min(n.saturating_sub(1))
}

#[cfg(test)]
mod tests {
    use super::*;

    // Worked example constructed by hand (no external source), checked with numpy:
    // n = 20, unsorted so the test also checks sorting.
    const VALUES: [f64; 20] = [
        0.82, 0.15, 0.67, 0.91, 0.33, 0.58, 0.74, 0.22, 0.49, 0.88, 0.61, 0.05, 0.77, 0.40, 0.95,
        0.29, 0.53, 0.70, 0.84, 0.12,
    ];

    fn t(e: f64) -> Threshold {
        omission_threshold(&VALUES, ThresholdSpec::omission(e).unwrap()).unwrap()
    }

    #[test]
    fn worked_example_e0_is_least_training_presence() {
        let r = t(0.0);
        assert_eq!(
            (r.value, r.records_dropped, r.records_omitted),
            (0.05, 0, 0)
        );
    }

    #[test]
    fn worked_example_e5_drops_one() {
        let r = t(5.0);
        assert_eq!(
            (r.value, r.records_dropped, r.records_omitted),
            (0.12, 1, 1)
        );
    }

    #[test]
    fn worked_example_e10_drops_two() {
        let r = t(10.0);
        assert_eq!(
            (r.value, r.records_dropped, r.records_omitted),
            (0.15, 2, 2)
        );
    }

    #[test]
    fn worked_example_e20_and_not_the_linear_quantile() {
        // Derived by hand: E = 20 % gives 0.29; numpy's linear quantile would give 0.276.
        assert_eq!(t(20.0).value, 0.29);
    }

    #[test]
    fn non_integer_share_rounds_down() {
        // n = 25, E = 10 %: n*E/100 = 2.5 -> drop 2 (ceil would omit 12 % > E; derived by hand).
        let v: Vec<f64> = (1..=25).map(|i| i as f64 / 100.0).collect();
        let r = omission_threshold(&v, ThresholdSpec::Omission(10.0)).unwrap();
        assert_eq!((r.value, r.records_dropped), (0.03, 2));
    }

    #[test]
    fn ties_drop_by_rank_but_omit_nothing() {
        // Derived by hand: 0.10 x3 then higher values, n = 20, E = 10 %: T = 0.10, 0 omitted.
        let mut v = vec![0.10, 0.10, 0.10];
        v.extend((0..17).map(|i| 0.2 + i as f64 * 0.01));
        let r = omission_threshold(&v, ThresholdSpec::Omission(10.0)).unwrap();
        assert_eq!(
            (r.value, r.records_dropped, r.records_omitted),
            (0.10, 2, 0)
        );
    }

    #[test]
    fn too_few_records_to_drop_one() {
        // n = 10, E = 5 %: 0.5 -> nothing dropped, the threshold is the plain minimum.
        let v: Vec<f64> = (1..=10).map(|i| i as f64).collect();
        let r = omission_threshold(&v, ThresholdSpec::Omission(5.0)).unwrap();
        assert_eq!((r.value, r.records_dropped), (1.0, 0));
    }

    #[test]
    fn e_out_of_range_names_the_option() {
        for e in [-1.0, 100.0, 150.0, f64::NAN] {
            let msg = ThresholdSpec::omission(e).unwrap_err().to_string();
            assert!(msg.starts_with("--omission"), "{msg}");
        }
    }

    #[test]
    fn fixed_threshold_counts_omission() {
        let r = omission_threshold(&VALUES, ThresholdSpec::fixed(0.3).unwrap()).unwrap();
        assert_eq!((r.value, r.records_omitted, r.records_dropped), (0.3, 5, 0));
    }

    #[test]
    fn monotone_in_e() {
        let mut last = f64::NEG_INFINITY;
        for e in 0..100 {
            let v = t(e as f64).value;
            assert!(v >= last);
            last = v;
        }
    }
}
