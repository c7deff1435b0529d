//! The range colours, one definition for `classes.tif`'s colour table, the map and the
//! charts.
//!
//! Our choice, from published colour-blind-safe general-purpose sets: bluish green, orange,
//! blue and vermillion from Okabe and Ito (2008), "Color Universal Design" (also printed in
//! Wong, Nature Methods 8:441, 2011); pale grey from Paul Tol's "Colour Schemes"
//! (SRON/EPS/TN/09-002). Dropped records differ from used ones by shape as well as colour.

/// An opaque RGB colour.
pub type Rgb = [u8; 3];

/// Class 0, below the threshold: pale grey (Tol).
pub const UNSUITABLE: Rgb = [0xDD, 0xDD, 0xDD];
/// Class 1, suitable inside M: bluish green (Okabe and Ito).
pub const INSIDE: Rgb = [0x00, 0x9E, 0x73];
/// Class 2, suitable beyond M: orange (Okabe and Ito).
pub const OUTSIDE: Rgb = [0xE6, 0x9F, 0x00];
/// Nodata on the map: white (transparent in `classes.tif`).
pub const NODATA: Rgb = [0xFF, 0xFF, 0xFF];
/// Outline of M: blue (Okabe and Ito).
pub const ACCESSIBLE: Rgb = [0x00, 0x72, 0xB2];
/// Records dropped by the threshold: vermillion (Okabe and Ito).
pub const DROPPED: Rgb = [0xD5, 0x5E, 0x00];
/// Used records and text: black.
pub const INK: Rgb = [0x00, 0x00, 0x00];
/// Excluded records (outside the raster or on nodata): reddish purple (Okabe and Ito).
pub const EXCLUDED: Rgb = [0xCC, 0x79, 0xA7];
/// Graticule lines: mid grey.
pub const GRATICULE: Rgb = [0x77, 0x77, 0x77];

/// The name of the palette, for the report and the docs.
pub const SOURCE: &str = "Okabe and Ito (2008) Color Universal Design, with pale grey from Paul Tol's Colour Schemes (SRON/EPS/TN/09-002)";

/// `c` with an opaque alpha.
pub const fn opaque(c: Rgb) -> [u8; 4] {
    [c[0], c[1], c[2], 255]
}

/// The colour of a class code (0, 1, 2; anything else is nodata).
pub fn class_colour(class: u8) -> Rgb {
    match class {
        0 => UNSUITABLE,
        1 => INSIDE,
        2 => OUTSIDE,
        _ => NODATA,
    }
}

/// `#rrggbb`.
pub fn hex(c: Rgb) -> String {
    format!("#{:02X}{:02X}{:02X}", c[0], c[1], c[2])
}
