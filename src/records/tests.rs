//! Delimited-text records. The expected values are the numbers written into each generated
//! file (the file is the outside reference); column names follow the Darwin Core terms
//! decimalLongitude/decimalLatitude/occurrenceID (TDWG Darwin Core standard, from memory).

use super::*;
use tempfile::TempDir;

pub(super) fn write(dir: &TempDir, name: &str, content: &str) -> PathBuf {
    let p = dir.path().join(name);
    std::fs::write(&p, content).unwrap();
    p
}

fn read(path: &Path) -> Result<RecordSet> {
    read_records(path, &RecordOptions::default(), "")
}

fn reason(e: Error) -> String {
    e.to_string()
}

#[test]
fn each_column_pair_is_detected() {
    let dir = TempDir::new().unwrap();
    let cases = [
        (
            "decimalLongitude,decimalLatitude",
            ("decimalLongitude", "decimalLatitude"),
        ),
        ("LONGITUDE,Latitude", ("LONGITUDE", "Latitude")),
        ("lon,lat", ("lon", "lat")),
        ("long,lat", ("long", "lat")),
        ("X,Y", ("X", "Y")),
    ];
    for (header, cols) in cases {
        let p = write(&dir, "r.csv", &format!("name,{header}\nA,10.5,-20.25\n"));
        let set = read(&p).unwrap();
        assert_eq!(
            set.columns,
            (cols.0.to_string(), cols.1.to_string()),
            "{header}"
        );
        assert_eq!(
            (set.records[0].lon, set.records[0].lat),
            (10.5, -20.25),
            "{header}"
        );
        assert_eq!(set.records[0].origin, "line 2");
    }
}

#[test]
fn darwin_core_wins_over_other_pairs() {
    let dir = TempDir::new().unwrap();
    let p = write(
        &dir,
        "r.csv",
        "x,y,lon,lat,longitude,latitude,decimalLongitude,decimalLatitude\n1,2,3,4,5,6,7,8\n",
    );
    let set = read(&p).unwrap();
    assert_eq!(set.columns.0, "decimalLongitude");
    assert_eq!((set.records[0].lon, set.records[0].lat), (7.0, 8.0));
    // Without Darwin Core, longitude/latitude beats lon/lat, which beats x/y.
    let p = write(
        &dir,
        "r.csv",
        "x,y,lon,lat,longitude,latitude\n1,2,3,4,5,6\n",
    );
    assert_eq!(read(&p).unwrap().records[0].lon, 5.0);
    let p = write(&dir, "r.csv", "x,y,lon,lat\n1,2,3,4\n");
    assert_eq!(read(&p).unwrap().records[0].lon, 3.0);
}

#[test]
fn semicolons_with_decimal_commas_are_repaired() {
    let dir = TempDir::new().unwrap();
    let p = write(
        &dir,
        "r.csv",
        "gbifID;decimalLatitude;decimalLongitude\n7;48,85;2,35\n8;-3.5;4\n",
    );
    let set = read(&p).unwrap();
    assert_eq!(set.records.len(), 2);
    assert!((set.records[0].lat - 48.85).abs() < 1e-12);
    assert!((set.records[0].lon - 2.35).abs() < 1e-12);
    assert_eq!(set.records[0].id, "7");
    assert_eq!((set.records[1].lon, set.records[1].lat), (4.0, -3.5));
    assert_eq!(set.warnings.len(), 1, "{:?}", set.warnings);
    assert!(set.warnings[0].contains("decimal comma") && set.warnings[0].contains("line 2"));
}

#[test]
fn decimal_comma_is_not_repaired_with_comma_delimiter() {
    // "12,5" quoted in a comma file is ambiguous (could be a thousands separator).
    let dir = TempDir::new().unwrap();
    let p = write(&dir, "r.csv", "lon,lat\n\"12,5\",3\n1,2\n");
    let set = read(&p).unwrap();
    assert_eq!(set.records.len(), 1);
    assert!(set.warnings[0].contains("line 2: longitude '12,5' is not a number"));
}

#[test]
fn bom_is_stripped_from_the_first_column_name() {
    let dir = TempDir::new().unwrap();
    let p = write(&dir, "r.csv", "\u{FEFF}lon,lat\n1.5,2.5\n");
    let set = read(&p).unwrap();
    assert_eq!(set.columns, ("lon".into(), "lat".into()));
    assert_eq!((set.records[0].lon, set.records[0].lat), (1.5, 2.5));
}

#[test]
fn quoted_fields_and_embedded_newlines_keep_line_numbers() {
    let dir = TempDir::new().unwrap();
    let text = "\"occurrenceID\",\"note\",\"lon\",\"lat\"\n\
                \"a1\",\"Smith, J.\nsecond line\",\"2.5\",\"45.0\"\n\
                \"a2\",\"x\",\"3\",\"\"\n\
                \"a3\",\"y\",\" 4 \",\"46\"\n";
    let p = write(&dir, "r.csv", text);
    let set = read(&p).unwrap();
    assert_eq!(set.records.len(), 2);
    assert_eq!(set.records[0].id, "a1");
    assert_eq!((set.records[0].lon, set.records[0].lat), (2.5, 45.0));
    // The first record spans lines 2-3, so the blank latitude is on line 4.
    assert_eq!(set.warnings.len(), 1);
    assert!(
        set.warnings[0].ends_with("r.csv line 4: latitude is blank (column lat); record skipped")
    );
    assert_eq!(
        (set.records[1].origin.as_str(), set.records[1].lon),
        ("line 5", 4.0)
    );
}

#[test]
fn tab_delimited_tsv_and_txt() {
    let dir = TempDir::new().unwrap();
    for name in ["r.tsv", "r.txt"] {
        let p = write(&dir, name, "id\tlongitude\tlatitude\nk\t-70.25\t-33.5\n");
        let set = read(&p).unwrap();
        assert_eq!(
            (set.records[0].lon, set.records[0].lat),
            (-70.25, -33.5),
            "{name}"
        );
        assert_eq!(set.records[0].id, "k");
    }
    let p = write(&dir, "r.csv", "lon|lat\n1|2\n");
    assert_eq!(read(&p).unwrap().records[0].lat, 2.0);
}

#[test]
fn other_extension_is_sniffed_as_text() {
    let dir = TempDir::new().unwrap();
    let p = write(&dir, "records.dat", "lon;lat\n5;6\n");
    assert_eq!(read(&p).unwrap().records[0].lon, 5.0);
}

#[test]
fn blank_and_non_numeric_rows_are_skipped_with_their_line() {
    let dir = TempDir::new().unwrap();
    let text = "lon,lat\n1,1\n2,\n\n3,3\n4,abc\nNaN,5\n6,6\n";
    let p = write(&dir, "records.csv", text);
    let set = read(&p).unwrap();
    let origins: Vec<&str> = set.records.iter().map(|r| r.origin.as_str()).collect();
    assert_eq!(origins, ["line 2", "line 5", "line 8"]);
    assert_eq!(set.warnings.len(), 3, "{:?}", set.warnings);
    assert!(set.warnings[0]
        .ends_with("records.csv line 3: latitude is blank (column lat); record skipped"));
    assert!(set.warnings[1].ends_with(
        "records.csv line 6: latitude 'abc' is not a number (column lat); record skipped"
    ));
    assert!(set.warnings[2].contains("line 7: longitude 'NaN' is not a number"));
}

#[test]
fn line_numbers_with_crlf_and_blank_lines() {
    // Counted by hand from the text: blank line 1, header line 2, blank lines 4 and 5,
    // one record on lines 7-8 (quoted line end).
    let dir = TempDir::new().unwrap();
    let p = write(
        &dir,
        "r.csv",
        "\r\nlon,lat\r\n1,1\r\n\r\n\r\n2,x\r\n\"3\",\"3\r\n\"\r\n4,4",
    );
    let set = read(&p).unwrap();
    let origins: Vec<&str> = set.records.iter().map(|r| r.origin.as_str()).collect();
    assert_eq!(origins, ["line 3", "line 7", "line 9"]);
    assert!(
        set.warnings[0].contains("r.csv line 6: latitude 'x' is not a number"),
        "{:?}",
        set.warnings
    );
}

#[test]
fn latitude_out_of_range_hints_at_swapped_columns() {
    let dir = TempDir::new().unwrap();
    let p = write(&dir, "r.csv", "lat,lon\n10,20\n45,120\n");
    // Columns named the wrong way round: the "lat" column holds 120 on line 3.
    let opts = RecordOptions {
        lon_col: Some("lat".into()),
        lat_col: Some("lon".into()),
        ..Default::default()
    };
    let e = read_records(&p, &opts, "").unwrap_err();
    assert!(matches!(e, Error::Records { .. }));
    let msg = reason(e);
    assert!(
        msg.contains("line 3: latitude 120 is outside -90..90"),
        "{msg}"
    );
    assert!(
        msg.contains("are longitude and latitude swapped? use --lon-col/--lat-col"),
        "{msg}"
    );
}

#[test]
fn longitudes_0_to_360_are_shifted_with_one_warning() {
    let dir = TempDir::new().unwrap();
    let p = write(&dir, "r.csv", "lon,lat\n350,10\n190.5,-10\n360,0\n20,5\n");
    let set = read(&p).unwrap();
    let lons: Vec<f64> = set.records.iter().map(|r| r.lon).collect();
    assert_eq!(lons, [-10.0, -169.5, 0.0, 20.0]);
    // Raster CRS is WGS84 here, so x is the shifted longitude too.
    assert_eq!(set.records[0].x, -10.0);
    assert_eq!(set.warnings.len(), 1);
    assert!(
        set.warnings[0].contains("3 longitude(s) in 180..360")
            && set.warnings[0].contains("line 2")
    );
    let p = write(&dir, "r.csv", "lon,lat\n361,10\n");
    assert!(reason(read(&p).unwrap_err()).contains("line 2: longitude 361 is outside -180..360"));
}

#[test]
fn empty_and_header_only_files_have_no_records() {
    let dir = TempDir::new().unwrap();
    for content in ["", "\n\n", "lon,lat\n", "lon,lat\n\n"] {
        let p = write(&dir, "r.csv", content);
        let msg = reason(read(&p).unwrap_err());
        assert!(msg.contains("no records"), "{content:?}: {msg}");
    }
    let p = write(&dir, "r.csv", "lon,lat\n,\nx,1\n");
    let e = read(&p).unwrap_err();
    assert!(matches!(e, Error::NoUsableRecords { .. }), "{e}");
    assert!(reason(e).contains("all 2 rows"));
}

#[test]
fn unknown_header_names_the_options() {
    let dir = TempDir::new().unwrap();
    let p = write(&dir, "r.csv", "species,east,north\nA,1,2\n");
    let msg = reason(read(&p).unwrap_err());
    assert!(
        msg.contains("[species, east, north]") && msg.contains("--lon-col and --lat-col"),
        "{msg}"
    );
    let opts = RecordOptions {
        lon_col: Some("easting".into()),
        lat_col: Some("north".into()),
        ..Default::default()
    };
    let e = read_records(&p, &opts, "").unwrap_err();
    assert!(
        matches!(
            e,
            Error::InvalidOption {
                option: "--lon-col",
                ..
            }
        ),
        "{e}"
    );
    let msg = reason(e);
    assert!(
        msg.contains("'easting'") && msg.contains("species, east, north"),
        "{msg}"
    );
}

#[test]
fn explicit_columns_override_detection() {
    let dir = TempDir::new().unwrap();
    let p = write(&dir, "r.csv", "lon,lat,east,north\n1,2,30,40\n");
    let opts = RecordOptions {
        lon_col: Some("EAST".into()),
        lat_col: Some("north".into()),
        ..Default::default()
    };
    let set = read_records(&p, &opts, "").unwrap();
    assert_eq!(set.columns, ("east".into(), "north".into()));
    assert_eq!((set.records[0].lon, set.records[0].lat), (30.0, 40.0));
    // Only one side named: the other comes from detection.
    let opts = RecordOptions {
        lat_col: Some("north".into()),
        ..Default::default()
    };
    let set = read_records(&p, &opts, "").unwrap();
    assert_eq!((set.records[0].lon, set.records[0].lat), (1.0, 40.0));
}

#[test]
fn id_prefers_occurrence_id() {
    let dir = TempDir::new().unwrap();
    let p = write(
        &dir,
        "r.csv",
        "ID,gbifID,occurrenceID,lon,lat\n1,2,urn:x:3,0,0\n",
    );
    assert_eq!(read(&p).unwrap().records[0].id, "urn:x:3");
}

#[test]
fn missing_file_and_bad_crs() {
    let dir = TempDir::new().unwrap();
    let missing = dir.path().join("nope.csv");
    let e = read(&missing).unwrap_err();
    assert!(matches!(&e, Error::MissingInput { path, .. } if path == &missing));
    assert!(reason(e).contains("nope.csv"));
    let p = write(&dir, "r.csv", "lon,lat\n1,2\n");
    let opts = RecordOptions {
        crs: "EPSG:99999999".into(),
        ..Default::default()
    };
    let e = read_records(&p, &opts, "").unwrap_err();
    assert!(
        matches!(&e, Error::Crs { what, .. } if what == "--records-crs"),
        "{e}"
    );
}
