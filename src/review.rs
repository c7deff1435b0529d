//! A last look at a finished summary for results that look right but may not be what the
//! user meant: an empty range, no suitable cell in M, an omission E too small to drop any
//! record, and records that collapsed onto shared cells. Each finding becomes one warning
//! in `summary.warnings` (the CLI mirrors them on stderr). Nothing here changes a number.

use crate::report::Summary;

/// Append the warnings for `s` to `s.warnings`.
pub(crate) fn review(s: &mut Summary) {
    let mut w = Vec::new();
    let (inside, outside) = (s.cells.inside_accessible, s.cells.outside_accessible);
    if inside + outside == 0 {
        w.push(format!(
            "no cell is suitable (suitability >= T = {}): the range is empty; check the \
             threshold and the raster's values",
            s.threshold.value
        ));
    } else if inside == 0 && !s.accessible.whole_raster {
        w.push(format!(
            "no suitable cell lies in M ({outside} suitable cell(s) all beyond M): the \
             accessible range is empty; check M ({})",
            s.accessible.description
        ));
    }
    let t = &s.threshold;
    if let Some(e) = t.omission_percent {
        if e > 0.0 && t.records_dropped == 0 {
            let needed = (100.0 / e).ceil();
            w.push(format!(
                "E = {e}% drops no record: with n = {} value(s), k = floor(n*E/100) = 0, so T \
                 is the lowest record value, as with E = 0; at least {needed} values are needed \
                 to drop one",
                t.records_used
            ));
        }
    }
    let r = &s.records;
    if t.one_value_per_cell && r.usable > r.occupied_cells {
        w.push(format!(
            "{} record(s) share a cell with an earlier record; the threshold uses one value \
             per occupied cell ({} values; --keep-duplicates counts every record)",
            r.usable - r.occupied_cells,
            r.occupied_cells
        ));
    }
    s.warnings.extend(w);
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::*;

    fn summary() -> Summary {
        Summary {
            areal_version: String::new(),
            inputs: InputsReport {
                suitability: String::new(),
                records: String::new(),
                record_columns: [String::new(), String::new()],
                width: 1,
                height: 1,
                geo_transform: [0.0; 6],
                crs_name: String::new(),
                crs_geographic: true,
                wraps_antimeridian: false,
                data_type: String::new(),
                nodata: None,
            },
            threshold: ThresholdReport {
                value: 0.5,
                method: String::new(),
                omission_percent: Some(5.0),
                records_used: 30,
                records_dropped: 1,
                records_omitted: 1,
                one_value_per_cell: true,
                binary_input: false,
            },
            records: RecordsReport {
                total: 30,
                usable: 30,
                outside_raster: 0,
                on_nodata: 0,
                occupied_cells: 30,
                excluded: vec![],
            },
            accessible: AccessReport {
                description: "polygon m.gpkg".into(),
                whole_raster: false,
                polygon: Some("m.gpkg".into()),
                buffer_km: None,
                hull_buffer_km: None,
            },
            area_km2: AreaReport {
                suitable: 1.0,
                inside_accessible: 1.0,
                outside_accessible: 0.0,
                occupied: 1.0,
                unsuitable: 0.0,
                accessible: 1.0,
            },
            cells: CellReport {
                unsuitable: 0,
                inside_accessible: 1,
                outside_accessible: 0,
                nodata: 0,
            },
            patches: PatchReport {
                inside_accessible: 1,
                outside_accessible: 0,
                occupied: 1,
                connectivity: 8,
            },
            area_method: String::new(),
            warnings: vec![],
            metrics: None,
            sensitivity: Vec::new(),
            command_line: Vec::new(),
            cautions: vec![],
        }
    }

    #[test]
    fn an_ordinary_result_gets_no_warning() {
        let mut s = summary();
        review(&mut s);
        assert!(s.warnings.is_empty(), "{:?}", s.warnings);
    }

    #[test]
    fn e_too_small_to_drop_names_the_records_needed() {
        // E = 3 %: k = floor(n * 0.03) >= 1 needs n >= 100/3, i.e. 34 values.
        let mut s = summary();
        s.threshold.omission_percent = Some(3.0);
        s.threshold.records_dropped = 0;
        review(&mut s);
        assert_eq!(s.warnings.len(), 1);
        assert!(
            s.warnings[0].contains("at least 34 values"),
            "{:?}",
            s.warnings
        );
    }

    #[test]
    fn empty_range_and_empty_m_are_told_apart() {
        let mut s = summary();
        s.cells.inside_accessible = 0;
        s.cells.outside_accessible = 5;
        review(&mut s);
        assert!(s.warnings[0].starts_with("no suitable cell lies in M (5 suitable"));
        let mut s = summary();
        s.cells.inside_accessible = 0;
        s.cells.outside_accessible = 0;
        review(&mut s);
        assert!(s.warnings[0].starts_with("no cell is suitable"));
    }

    #[test]
    fn shared_cells_are_counted() {
        let mut s = summary();
        s.records.usable = 33;
        review(&mut s);
        assert!(s.warnings[0].starts_with("3 record(s) share a cell"));
    }
}
