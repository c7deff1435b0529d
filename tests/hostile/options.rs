//! Hostile option values.

use super::fixture::*;

#[test]
fn negative_omission_is_refused_exit_2() {
    let c = Case::new();
    let o = c.run(&["--omission", "-1"]);
    c.refused(&o, 2, &["--omission", "E = -1 is outside 0 <= E < 100"]);
}

#[test]
fn omission_of_100_or_more_is_refused_exit_2() {
    let c = Case::new();
    for e in ["100", "250"] {
        let o = c.run(&["--omission", e]);
        c.refused(&o, 2, &["--omission", "outside 0 <= E < 100"]);
    }
}

#[test]
fn omission_nan_is_refused_exit_2() {
    let c = Case::new();
    let o = c.run(&["--omission", "NaN"]);
    c.refused(&o, 2, &["--omission", "E = NaN"]);
}

#[test]
fn both_omission_and_threshold_is_a_usage_error_exit_2() {
    let c = Case::new();
    let o = c.run(&["--omission", "5", "--threshold", "0.3"]);
    assert_eq!(o.code, Some(2), "{}", o.stderr);
    assert!(o.stderr.contains("--threshold") && o.stderr.contains("--omission"));
    assert!(!c.out.exists());
}

#[test]
fn neither_omission_nor_threshold_is_a_usage_error_exit_2() {
    let c = Case::new();
    let o = c.run(&[]);
    assert_eq!(o.code, Some(2), "{}", o.stderr);
    assert!(o.stderr.contains("--omission"), "{}", o.stderr);
    assert!(!c.out.exists());
}

#[test]
fn infinite_threshold_is_refused_exit_2() {
    let c = Case::new();
    let o = c.run(&["--threshold", "inf"]);
    c.refused(&o, 2, &["--threshold", "not a finite number"]);
}

#[test]
fn buffer_of_zero_km_is_refused_exit_2() {
    let c = Case::new();
    let o = c.run(&["--omission", "0", "--buffer-km", "0"]);
    c.refused(&o, 2, &["--buffer-km", "0 is not a usable distance", "> 0"]);
}

#[test]
fn negative_buffer_is_refused_exit_2() {
    let c = Case::new();
    let o = c.run(&["--omission", "0", "--buffer-km", "-5"]);
    c.refused(&o, 2, &["--buffer-km", "-5 is not a usable distance"]);
    let o = c.run(&["--omission", "0", "--hull-buffer-km", "-5"]);
    c.refused(&o, 2, &["--hull-buffer-km", "-5 is not a usable distance"]);
}

#[test]
fn threshold_above_every_value_gives_zero_suitable_cells_with_a_warning() {
    let c = Case::new();
    let o = c.run(&["--threshold", "2"]);
    let s = c.succeeded(&o);
    assert_eq!(s["cells"]["inside_accessible"], 0);
    assert_eq!(s["cells"]["outside_accessible"], 0);
    assert_eq!(s["area_km2"]["suitable"], 0.0);
    assert_warned(&s, &o, "no cell is suitable");
}

#[test]
fn unknown_connectivity_is_a_usage_error_exit_2() {
    let c = Case::new();
    let o = c.run(&["--omission", "0", "--connectivity", "6"]);
    assert_eq!(o.code, Some(2), "{}", o.stderr);
    assert!(o.stderr.contains("--connectivity"), "{}", o.stderr);
    assert!(!c.out.exists());
}
