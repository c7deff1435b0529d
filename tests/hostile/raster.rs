//! Hostile suitability rasters.

use super::fixture::*;

#[test]
fn raster_without_crs_is_refused_naming_the_file_and_gdal_edit() {
    let c = Case::new();
    write_typed(
        &c.suitability,
        N,
        N,
        GT,
        None,
        Some(-9999.0),
        &base_values(),
        &[],
    );
    let o = c.run(&["--omission", "0"]);
    c.refused(
        &o,
        3,
        &["suitability.tif: raster has no CRS", "gdal_edit.py -a_srs"],
    );
}

#[test]
fn raster_all_nodata_is_refused_saying_every_record_is_on_nodata() {
    let c = Case::new();
    write_typed(
        &c.suitability,
        N,
        N,
        GT,
        Some(4326),
        Some(-9999.0),
        &vec![-9999f32; N * N],
        &[],
    );
    let o = c.run(&["--omission", "0"]);
    c.refused(&o, 3, &["records.csv", "0 outside the raster, 5 on nodata"]);
}

#[test]
fn nan_and_infinite_cells_are_nodata_with_a_warning_and_records_on_them_excluded() {
    let c = Case::new();
    let mut v = base_values();
    // NaN under the lowest record, +inf and -inf elsewhere; no nodata value set.
    v[5 * N + 5] = f32::NAN;
    v[0] = f32::INFINITY;
    v[1] = f32::NEG_INFINITY;
    write_typed(&c.suitability, N, N, GT, Some(4326), None, &v, &[]);
    let o = c.run(&["--omission", "0"]);
    let s = c.succeeded(&o);
    assert_eq!(s["cells"]["nodata"], 3);
    assert_eq!(s["records"]["on_nodata"], 1);
    // The lowest remaining record is on cell (6, 6).
    assert_eq!(threshold(&s), value(6, 6));
    assert_warned(&s, &o, "NaN or infinite");
    assert_warned(&s, &o, "1 record(s) lie on nodata cells");
}

#[test]
fn int16_raster_with_nodata_minus_32768_excludes_exactly_those_cells() {
    let c = Case::new();
    let mut v: Vec<i16> = (0..N * N).map(|i| i as i16).collect();
    v[5 * N + 5] = i16::MIN;
    v[19 * N + 19] = i16::MIN;
    write_typed(
        &c.suitability,
        N,
        N,
        GT,
        Some(4326),
        Some(-32768.0),
        &v,
        &[],
    );
    let o = c.run(&["--omission", "0"]);
    let s = c.succeeded(&o);
    assert_eq!(s["cells"]["nodata"], 2);
    assert_eq!(s["records"]["on_nodata"], 1);
    assert_eq!(threshold(&s), (6 * N + 6) as f64);
}

#[test]
fn integer_raster_with_a_fractional_nodata_is_warned_that_no_cell_can_match() {
    let c = Case::new();
    let v: Vec<u16> = (0..N * N).map(|i| i as u16).collect();
    write_typed(&c.suitability, N, N, GT, Some(4326), Some(0.5), &v, &[]);
    let o = c.run(&["--omission", "0"]);
    let s = c.succeeded(&o);
    assert_eq!(s["cells"]["nodata"], 0);
    assert_eq!(threshold(&s), (5 * N + 5) as f64);
    assert_warned(&s, &o, "nodata value 0.5 cannot occur in a UInt16 band");
}

#[test]
fn byte_raster_with_nodata_out_of_its_range_is_warned_that_no_cell_can_match() {
    let c = Case::new();
    let v: Vec<u8> = (0..N * N).map(|i| (i % 200) as u8).collect();
    write_typed(&c.suitability, N, N, GT, Some(4326), Some(-9999.0), &v, &[]);
    let o = c.run(&["--omission", "0"]);
    let s = c.succeeded(&o);
    assert_eq!(s["cells"]["nodata"], 0);
    assert_warned(&s, &o, "nodata value -9999 cannot occur in a Byte band");
}

/// A tiled, compressed raster big enough for several tiles, then cut short.
fn truncated(c: &Case, keep: f64) {
    let (w, h) = (1024, 1024);
    // Values vary so DEFLATE cannot shrink the tiles to nothing.
    let v: Vec<f32> = (0..w * h)
        .map(|i| ((i * 7919) % 1000) as f32 / 1000.0)
        .collect();
    write_typed(
        &c.suitability,
        w,
        h,
        [-5.0, 10.0 / w as f64, 0.0, 50.0, 0.0, -10.0 / h as f64],
        Some(4326),
        Some(-9999.0),
        &v,
        &["TILED=YES", "COMPRESS=DEFLATE"],
    );
    let bytes = std::fs::read(&c.suitability).unwrap();
    let n = (bytes.len() as f64 * keep) as usize;
    std::fs::write(&c.suitability, &bytes[..n]).unwrap();
}

#[test]
fn geotiff_cut_short_in_its_tiles_is_refused_naming_the_file() {
    let c = Case::new();
    truncated(&c, 0.6);
    let o = c.run(&["--omission", "0"]);
    c.refused(&o, 3, &["suitability.tif"]);
}

#[test]
fn geotiff_cut_short_in_its_header_is_refused_naming_the_file() {
    let c = Case::new();
    truncated(&c, 0.0005);
    let o = c.run(&["--omission", "0"]);
    c.refused(
        &o,
        3,
        &["suitability.tif", "opening the suitability raster"],
    );
}

#[test]
fn random_bytes_named_tif_are_refused_naming_the_file() {
    let c = Case::new();
    let junk: Vec<u8> = (0..5000u32)
        .map(|i| (i.wrapping_mul(2654435761u32) >> 24) as u8)
        .collect();
    std::fs::write(&c.suitability, junk).unwrap();
    let o = c.run(&["--omission", "0"]);
    c.refused(
        &o,
        3,
        &["suitability.tif", "opening the suitability raster"],
    );
}

#[test]
fn multi_band_raster_is_refused_saying_how_to_pick_a_band() {
    let c = Case::new();
    let mut ds = gdal::DriverManager::get_driver_by_name("GTiff")
        .unwrap()
        .create_with_band_type::<f32, _>(&c.suitability, 4, 4, 3)
        .unwrap();
    ds.set_geo_transform(&GT).unwrap();
    ds.set_spatial_ref(&gdal::spatial_ref::SpatialRef::from_epsg(4326).unwrap())
        .unwrap();
    ds.close().unwrap();
    let o = c.run(&["--omission", "0"]);
    c.refused(&o, 3, &["has 3 bands", "gdal_translate -b 1"]);
}

#[test]
fn rotated_raster_is_refused_saying_to_warp_it() {
    let c = Case::new();
    write_typed(
        &c.suitability,
        N,
        N,
        [-5.0, 0.5, 0.1, 50.0, 0.0, -0.5],
        Some(4326),
        None,
        &base_values(),
        &[],
    );
    let o = c.run(&["--omission", "0"]);
    c.refused(&o, 3, &["rotated or sheared", "gdalwarp"]);
}

#[test]
fn missing_raster_file_is_refused_naming_it() {
    let mut c = Case::new();
    c.suitability = c.path("nope.tif");
    let o = c.run(&["--omission", "0"]);
    c.refused(&o, 3, &["nope.tif: suitability raster not found"]);
}

#[test]
fn geotiff_with_a_corrupt_first_strip_is_refused_without_hanging() {
    use gdal::Metadata;
    let c = Case::new();
    // 16 strips of 256 rows; the tiles of the first strip are overwritten with garbage, so
    // decoding fails there while the later strips decode (and queue up) fine.
    let (w, h) = (512, 4096);
    let v: Vec<f32> = (0..w * h)
        .map(|i| ((i * 7919) % 1000) as f32 / 1000.0)
        .collect();
    write_typed(
        &c.suitability,
        w,
        h,
        [-5.0, 10.0 / w as f64, 0.0, 50.0, 0.0, -10.0 / h as f64],
        Some(4326),
        Some(-9999.0),
        &v,
        &["TILED=YES", "COMPRESS=DEFLATE"],
    );
    let offsets: Vec<u64> = {
        let ds = gdal::Dataset::open(&c.suitability).unwrap();
        let band = ds.rasterband(1).unwrap();
        (0..2)
            .map(|bx| {
                band.metadata_item(&format!("BLOCK_OFFSET_{bx}_0"), "TIFF")
                    .unwrap()
                    .parse()
                    .unwrap()
            })
            .collect()
    };
    let mut bytes = std::fs::read(&c.suitability).unwrap();
    for off in offsets {
        for b in &mut bytes[off as usize..off as usize + 64] {
            *b = 0xA5;
        }
    }
    std::fs::write(&c.suitability, bytes).unwrap();
    let o = c.run_within(60, &[("AREAL_THREADS", "2")], &["--threshold", "0.5"]);
    c.refused(&o, 3, &["suitability.tif", "reading rows 0..256"]);
}
