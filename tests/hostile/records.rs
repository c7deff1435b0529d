//! Hostile occurrence records.

use super::fixture::*;

/// "lon,lat" lines for the default record cells, with a separator and decimal mark.
fn lines(sep: &str, comma_decimals: bool) -> String {
    RECORD_CELLS
        .iter()
        .map(|&(r, c)| {
            let (x, y) = centre(r, c);
            let (x, y) = (format!("{x}"), format!("{y}"));
            if comma_decimals {
                format!("{}{sep}{}\n", x.replace('.', ","), y.replace('.', ","))
            } else {
                format!("{x}{sep}{y}\n")
            }
        })
        .collect()
}

#[test]
fn empty_records_file_is_refused_saying_it_is_empty() {
    let mut c = Case::new();
    c.records_text("records.csv", "");
    let o = c.run(&["--omission", "0"]);
    c.refused(&o, 3, &["records.csv", "the file is empty"]);
}

#[test]
fn header_only_records_file_is_refused_saying_it_has_no_data_rows() {
    let mut c = Case::new();
    c.records_text("records.csv", "decimalLongitude,decimalLatitude\n");
    let o = c.run(&["--omission", "0"]);
    c.refused(&o, 3, &["records.csv", "no data rows"]);
}

#[test]
fn byte_order_mark_is_dropped_and_columns_are_found() {
    let mut c = Case::new();
    c.records_text(
        "records.csv",
        format!(
            "\u{feff}decimalLongitude,decimalLatitude\n{}",
            lines(",", false)
        ),
    );
    let s = c.succeeded(&c.run(&["--omission", "0"]));
    assert_eq!(s["inputs"]["record_columns"][0], "decimalLongitude");
    assert_eq!(threshold(&s), value(5, 5));
}

#[test]
fn semicolon_delimiter_is_detected_and_all_records_are_read() {
    let mut c = Case::new();
    c.records_text("records.csv", format!("lon;lat\n{}", lines(";", false)));
    let s = c.succeeded(&c.run(&["--omission", "0"]));
    assert_eq!(s["records"]["usable"], 5);
    assert_eq!(threshold(&s), value(5, 5));
}

#[test]
fn decimal_commas_with_semicolons_are_read_as_points_with_a_warning() {
    let mut c = Case::new();
    c.records_text("records.csv", format!("lon;lat\n{}", lines(";", true)));
    let o = c.run(&["--omission", "0"]);
    let s = c.succeeded(&o);
    assert_eq!(s["records"]["usable"], 5);
    assert_eq!(threshold(&s), value(5, 5));
    assert_warned(
        &s,
        &o,
        "10 coordinate value(s) written with a decimal comma",
    );
}

#[test]
fn quoted_fields_with_embedded_delimiters_are_read() {
    let mut c = Case::new();
    let mut text = String::from("\"species, author\",\"lon\",\"lat\"\n");
    for &(r, col) in &RECORD_CELLS {
        let (x, y) = centre(r, col);
        text += &format!("\"Aus bus, 1801\",\"{x}\",\"{y}\"\n");
    }
    c.records_text("records.csv", text);
    let s = c.succeeded(&c.run(&["--omission", "0"]));
    assert_eq!(s["records"]["usable"], 5);
    assert_eq!(threshold(&s), value(5, 5));
}

#[test]
fn non_numeric_coordinate_is_skipped_with_a_warning_naming_the_line() {
    let mut c = Case::new();
    c.records_text(
        "records.csv",
        format!("lon,lat\n12°30'E,45.1\n{}", lines(",", false)),
    );
    let o = c.run(&["--omission", "0"]);
    let s = c.succeeded(&o);
    assert_eq!(s["records"]["total"], 5);
    assert_warned(&s, &o, "line 2: longitude '12°30'E' is not a number");
}

#[test]
fn blank_coordinate_is_skipped_with_a_warning_naming_the_line() {
    let mut c = Case::new();
    c.records_text(
        "records.csv",
        format!("lon,lat\n{}1.25,\n", lines(",", false)),
    );
    let o = c.run(&["--omission", "0"]);
    let s = c.succeeded(&o);
    assert_eq!(s["records"]["total"], 5);
    assert_warned(&s, &o, "line 7: latitude is blank");
}

#[test]
fn nan_and_inf_coordinates_are_skipped_as_not_numbers() {
    let mut c = Case::new();
    c.records_text(
        "records.csv",
        format!("lon,lat\nNaN,45\n1.25,inf\n{}", lines(",", false)),
    );
    let o = c.run(&["--omission", "0"]);
    let s = c.succeeded(&o);
    assert_eq!(s["records"]["total"], 5);
    assert_warned(&s, &o, "line 2: longitude 'NaN' is not a number");
    assert_warned(&s, &o, "line 3: latitude 'inf' is not a number");
}

#[test]
fn latitude_outside_90_is_refused_naming_the_line_and_hinting_swapped_columns() {
    let mut c = Case::new();
    c.records_text(
        "records.csv",
        format!("lon,lat\n{}45.2,123.4\n", lines(",", false)),
    );
    let o = c.run(&["--omission", "0"]);
    c.refused(
        &o,
        3,
        &[
            "records.csv: line 7: latitude 123.4 is outside -90..90",
            "swapped",
            "--lon-col/--lat-col",
        ],
    );
}

#[test]
fn longitudes_in_0_360_are_shifted_into_minus_180_180_with_a_warning() {
    let mut c = Case::new();
    // Cell (5, 5) has its centre at lon -2.25, written here as 357.75.
    let mut text = String::from("lon,lat\n");
    for &(r, col) in &RECORD_CELLS {
        let (x, y) = centre(r, col);
        text += &format!("{},{y}\n", if x < 0.0 { x + 360.0 } else { x });
    }
    c.records_text("records.csv", text);
    let o = c.run(&["--omission", "0"]);
    let s = c.succeeded(&o);
    assert_eq!(s["records"]["outside_raster"], 0);
    assert_eq!(threshold(&s), value(5, 5));
    assert_warned(&s, &o, "longitude(s) in 180..360 shifted by -360");
}

#[test]
fn longitude_beyond_360_is_refused_naming_the_line() {
    let mut c = Case::new();
    c.records_text("records.csv", "lon,lat\n1.25,45.25\n400,45\n");
    let o = c.run(&["--omission", "0"]);
    c.refused(&o, 3, &["line 3: longitude 400 is outside -180..360"]);
}

#[test]
fn duplicate_records_count_once_per_cell_with_a_warning() {
    let mut c = Case::new();
    // Three copies of the lowest record: with one value per cell n = 5 and E = 20 % drops
    // one value (k = floor(5 * 20 / 100) = 1), so T is the second-lowest cell.
    let dup = csv_point(5, 5);
    c.records_text(
        "records.csv",
        format!("lon,lat\n{}{dup}\n{dup}\n", lines(",", false)),
    );
    let o = c.run(&["--omission", "20"]);
    let s = c.succeeded(&o);
    assert_eq!(s["records"]["usable"], 7);
    assert_eq!(s["records"]["occupied_cells"], 5);
    assert_eq!(s["threshold"]["records_used"], 5);
    assert_eq!(threshold(&s), value(6, 6));
    assert_warned(&s, &o, "2 record(s) share a cell with an earlier record");
}

#[test]
fn all_records_outside_the_raster_are_refused_with_counts() {
    let mut c = Case::new();
    c.records_text("records.csv", "lon,lat\n-70,10\n-71,11\n");
    let o = c.run(&["--omission", "0"]);
    c.refused(
        &o,
        3,
        &[
            "records.csv",
            "2 outside the raster, 0 on nodata",
            "--records-crs",
        ],
    );
}

#[test]
fn all_records_on_nodata_are_refused_with_counts() {
    let c = Case::new();
    let mut v = base_values();
    for &(r, col) in &RECORD_CELLS {
        v[r * N + col] = -9999.0;
    }
    write_typed(&c.suitability, N, N, GT, Some(4326), Some(-9999.0), &v, &[]);
    let o = c.run(&["--omission", "0"]);
    c.refused(&o, 3, &["records.csv", "0 outside the raster, 5 on nodata"]);
}

#[test]
fn too_few_records_for_e_to_drop_one_warns_that_none_was_dropped() {
    let c = Case::new();
    // n = 5, E = 10 %: k = floor(0.5) = 0, so T is the lowest value, as with E = 0.
    let o = c.run(&["--omission", "10"]);
    let s = c.succeeded(&o);
    assert_eq!(s["threshold"]["records_dropped"], 0);
    assert_eq!(threshold(&s), value(5, 5));
    assert_warned(&s, &o, "E = 10% drops no record");
}

#[test]
fn unknown_records_crs_is_refused_naming_the_option() {
    let c = Case::new();
    let o = c.run(&["--omission", "0", "--records-crs", "EPSG:999999"]);
    c.refused(&o, 3, &["--records-crs", "EPSG:999999"]);
}

#[test]
fn lon_col_naming_a_missing_column_is_refused_listing_the_columns() {
    let c = Case::new();
    let o = c.run(&["--omission", "0", "--lon-col", "easting"]);
    c.refused(
        &o,
        2,
        &["--lon-col", "'easting'", "columns found: lon, lat"],
    );
}

#[test]
fn header_without_coordinate_columns_is_refused_naming_the_options() {
    let mut c = Case::new();
    c.records_text("records.csv", "easting,northing\n11,42\n");
    let o = c.run(&["--omission", "0"]);
    c.refused(&o, 3, &["[easting, northing]", "--lon-col and --lat-col"]);
}

#[test]
fn polygon_records_layer_is_refused_naming_the_feature() {
    let mut c = Case::new();
    c.records_text(
        "records.geojson",
        r#"{"type":"FeatureCollection","features":[{"type":"Feature","properties":{},
        "geometry":{"type":"Polygon","coordinates":[[[0,45],[1,45],[1,46],[0,45]]]}}]}"#,
    );
    let o = c.run(&["--omission", "0"]);
    c.refused(
        &o,
        3,
        &["records.geojson", "feature 0", "Point or MultiPoint"],
    );
}

#[test]
fn missing_records_file_is_refused_naming_it() {
    let mut c = Case::new();
    c.records = c.path("nope.csv");
    let o = c.run(&["--omission", "0"]);
    c.refused(&o, 3, &["nope.csv: records file not found"]);
}

#[test]
fn binary_garbage_records_file_is_refused_naming_it() {
    let mut c = Case::new();
    let junk: Vec<u8> = (0..3000u32)
        .map(|i| (i.wrapping_mul(2654435761u32) >> 24) as u8)
        .collect();
    c.records_text("records.dat", junk);
    let o = c.run(&["--omission", "0"]);
    c.refused(&o, 3, &["records.dat"]);
}

#[test]
fn records_path_that_is_a_folder_is_refused_naming_it() {
    let mut c = Case::new();
    c.records = c.path("records_folder");
    std::fs::create_dir(&c.records).unwrap();
    let o = c.run(&["--omission", "0"]);
    c.refused(
        &o,
        3,
        &["records_folder: records file not found or not readable"],
    );
}

#[test]
fn file_whose_every_row_is_skipped_is_refused_quoting_the_first_reason() {
    let mut c = Case::new();
    c.records_text("records.csv", "lon,lat\n,\nabc,45\n");
    let o = c.run(&["--omission", "0"]);
    c.refused(
        &o,
        3,
        &[
            "no usable records: all 2 rows/features were skipped",
            "line 2: longitude is blank",
        ],
    );
}

#[test]
fn records_layer_in_web_mercator_is_reprojected_onto_the_lonlat_raster() {
    let mut c = Case::new();
    // Spherical Mercator of the centre of cell (5, 5), lon -2.25, lat 47.25 (EPSG Guidance
    // Note 7-2 formula, from memory): x = R·lon, y = R·ln(tan(pi/4 + lat/2)).
    let r = 6_378_137.0f64;
    let (lon, lat) = centre(5, 5);
    let x = r * lon.to_radians();
    let y = r
        * (std::f64::consts::FRAC_PI_4 + lat.to_radians() / 2.0)
            .tan()
            .ln();
    c.records_text(
        "records.geojson",
        format!(
            r#"{{"type":"FeatureCollection","crs":{{"type":"name","properties":{{"name":"urn:ogc:def:crs:EPSG::3857"}}}},
            "features":[{{"type":"Feature","properties":{{}},"geometry":{{"type":"Point","coordinates":[{x},{y}]}}}}]}}"#
        ),
    );
    let s = c.succeeded(&c.run(&["--omission", "0"]));
    assert_eq!(s["records"]["usable"], 1);
    assert_eq!(threshold(&s), value(5, 5));
}
