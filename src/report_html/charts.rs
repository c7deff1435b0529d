//! The report's charts as inline SVG (plotters, SVG backend only). Their text is laid out
//! with the shipped font and names its family ([`text::FAMILY`]), which the page embeds;
//! every chart has a caption in the page saying what it shows.

use super::palette::{self, Rgb};
use super::text::{self, FAMILY};
use super::{MapRecord, PatchInfo};
use plotters::prelude::*;

const SIZE: (u32, u32) = (640, 300);

fn rgb(c: Rgb) -> RGBColor {
    RGBColor(c[0], c[1], c[2])
}

/// Renders into a fresh SVG string; a plotters failure leaves a note instead of a chart.
fn svg(
    draw: impl FnOnce(&DrawingArea<SVGBackend, plotters::coord::Shift>) -> Result<(), String>,
) -> String {
    text::register_for_charts();
    let mut s = String::new();
    let res = {
        let root = SVGBackend::with_string(&mut s, SIZE).into_drawing_area();
        let r = root
            .fill(&WHITE)
            .map_err(|e| e.to_string())
            .and_then(|_| draw(&root));
        r.and_then(|_| root.present().map_err(|e| e.to_string()))
    };
    match res {
        Ok(()) => s,
        Err(e) => format!(
            "<p class=\"note\">chart not drawn: {}</p>",
            super::page::escape(&e)
        ),
    }
}

/// The records' suitability values, sorted, with T and the records dropped by it.
pub fn records_chart(records: &[MapRecord], t: f64) -> Option<String> {
    let mut v: Vec<(f64, bool)> = records
        .iter()
        .filter_map(|r| r.suitability.map(|s| (s, r.status == "below_threshold")))
        .collect();
    if v.is_empty() {
        return None;
    }
    v.sort_by(|a, b| a.0.total_cmp(&b.0));
    let lo = v[0].0.min(t);
    let hi = v[v.len() - 1].0.max(t);
    let pad = ((hi - lo) * 0.08).max(1e-6);
    let n = v.len();
    Some(svg(|root| {
        let mut c = ChartBuilder::on(root)
            .margin(10)
            .margin_right(30)
            .x_label_area_size(40)
            .y_label_area_size(60)
            .build_cartesian_2d(0f64..(n as f64 + 1.0), (lo - pad)..(hi + pad))
            .map_err(|e| e.to_string())?;
        c.configure_mesh()
            .x_desc("records, by suitability")
            .y_desc("suitability")
            .label_style((FAMILY, 15))
            .light_line_style(WHITE)
            .draw()
            .map_err(|e| e.to_string())?;
        c.draw_series(LineSeries::new(
            [(0.0, t), (n as f64 + 1.0, t)],
            rgb(palette::ACCESSIBLE).stroke_width(2),
        ))
        .map_err(|e| e.to_string())?
        .label(format!("T = {t:.4}"))
        .legend(|(x, y)| {
            PathElement::new(
                [(x, y), (x + 16, y)],
                rgb(palette::ACCESSIBLE).stroke_width(2),
            )
        });
        c.draw_series(
            v.iter()
                .enumerate()
                .filter(|(_, p)| !p.1)
                .map(|(i, p)| Circle::new((i as f64 + 1.0, p.0), 3, rgb(palette::INK).filled())),
        )
        .map_err(|e| e.to_string())?
        .label("used")
        .legend(|(x, y)| Circle::new((x + 8, y), 3, rgb(palette::INK).filled()));
        c.draw_series(v.iter().enumerate().filter(|(_, p)| p.1).map(|(i, p)| {
            Cross::new(
                (i as f64 + 1.0, p.0),
                5,
                rgb(palette::DROPPED).stroke_width(2),
            )
        }))
        .map_err(|e| e.to_string())?
        .label("dropped by the threshold")
        .legend(|(x, y)| Cross::new((x + 8, y), 5, rgb(palette::DROPPED).stroke_width(2)));
        c.configure_series_labels()
            .position(SeriesLabelPosition::UpperLeft)
            .label_font((FAMILY, 14))
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK)
            .draw()
            .map_err(|e| e.to_string())
    }))
}

/// One sensitivity row (summary.json `sensitivity`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Sensitivity {
    /// E, percent.
    pub e: f64,
    /// Suitable area, km2.
    pub suitable: f64,
    /// Suitable inside M, km2.
    pub inside: f64,
}

/// Area against E: for reading only (E is fixed before looking).
pub fn sensitivity_chart(rows: &[Sensitivity], chosen: Option<f64>) -> Option<String> {
    if rows.is_empty() {
        return None;
    }
    let mut rows = rows.to_vec();
    rows.sort_by(|a, b| a.e.total_cmp(&b.e));
    let emax = rows.iter().map(|r| r.e).fold(0.0, f64::max).max(1.0) * 1.05;
    let amax = rows
        .iter()
        .map(|r| r.suitable.max(r.inside))
        .fold(0.0, f64::max)
        .max(1e-9)
        * 1.1;
    Some(svg(|root| {
        let mut c = ChartBuilder::on(root)
            .margin(10)
            .margin_right(30)
            .x_label_area_size(40)
            .y_label_area_size(80)
            .build_cartesian_2d(0f64..emax, 0f64..amax)
            .map_err(|e| e.to_string())?;
        c.configure_mesh()
            .x_desc("tolerated omission E, %")
            .y_desc("area, km²")
            .label_style((FAMILY, 15))
            .light_line_style(WHITE)
            .draw()
            .map_err(|e| e.to_string())?;
        if let Some(e) = chosen {
            c.draw_series(LineSeries::new(
                [(e, 0.0), (e, amax)],
                rgb(palette::GRATICULE).stroke_width(1),
            ))
            .map_err(|e| e.to_string())?
            .label(format!("E of this run ({e}%)"))
            .legend(|(x, y)| PathElement::new([(x, y), (x + 16, y)], rgb(palette::GRATICULE)));
        }
        for (name, col, get) in [
            (
                "suitable, all",
                palette::OUTSIDE,
                (|r: &Sensitivity| r.suitable) as fn(&Sensitivity) -> f64,
            ),
            ("suitable inside M", palette::INSIDE, |r: &Sensitivity| {
                r.inside
            }),
        ] {
            c.draw_series(LineSeries::new(
                rows.iter().map(|r| (r.e, get(r))),
                rgb(col).stroke_width(2),
            ))
            .map_err(|e| e.to_string())?
            .label(name)
            .legend(move |(x, y)| {
                PathElement::new([(x, y), (x + 16, y)], rgb(col).stroke_width(2))
            });
            c.draw_series(
                rows.iter()
                    .map(|r| Circle::new((r.e, get(r)), 3, rgb(col).filled())),
            )
            .map_err(|e| e.to_string())?;
        }
        c.configure_series_labels()
            .position(SeriesLabelPosition::UpperRight)
            .label_font((FAMILY, 14))
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK)
            .draw()
            .map_err(|e| e.to_string())
    }))
}

/// Patch counts by area (log bins of half a decade), class 1 and class 2 side by side.
pub fn patch_chart(patches: &[PatchInfo]) -> Option<String> {
    let logs: Vec<(f64, u8)> = patches
        .iter()
        .filter(|p| p.area_km2 > 0.0)
        .map(|p| (p.area_km2.log10(), p.class))
        .collect();
    if logs.is_empty() {
        return None;
    }
    let lo = (logs.iter().map(|p| p.0).fold(f64::MAX, f64::min) * 2.0).floor() / 2.0;
    let hi = (logs.iter().map(|p| p.0).fold(f64::MIN, f64::max) * 2.0).floor() / 2.0 + 0.5;
    let nb = ((hi - lo) * 2.0).round().max(1.0) as usize;
    let mut counts = vec![[0u32; 2]; nb];
    for &(l, k) in &logs {
        let b = (((l - lo) * 2.0).floor() as usize).min(nb - 1);
        counts[b][usize::from(k == 2)] += 1;
    }
    let ymax = counts
        .iter()
        .flat_map(|c| c.iter())
        .copied()
        .max()
        .unwrap_or(1)
        + 1;
    Some(svg(|root| {
        let mut c = ChartBuilder::on(root)
            .margin(10)
            .margin_right(40)
            .x_label_area_size(40)
            .y_label_area_size(60)
            .build_cartesian_2d((10f64.powf(lo)..10f64.powf(hi)).log_scale(), 0u32..ymax)
            .map_err(|e| e.to_string())?;
        c.configure_mesh()
            .x_desc("patch area, km² (log scale)")
            .y_desc("patches")
            .x_label_formatter(&|v| super::fmt_num(*v, if *v < 1.0 { 3 } else { 0 }))
            .label_style((FAMILY, 15))
            .light_line_style(WHITE)
            .draw()
            .map_err(|e| e.to_string())?;
        for (k, name, col) in [
            (0usize, "class 1, inside M", palette::INSIDE),
            (1, "class 2, beyond M", palette::OUTSIDE),
        ] {
            c.draw_series(
                counts
                    .iter()
                    .enumerate()
                    .filter(|(_, n)| n[k] > 0)
                    .map(|(b, n)| {
                        let a = lo + b as f64 * 0.5 + k as f64 * 0.25;
                        Rectangle::new(
                            [(10f64.powf(a), 0), (10f64.powf(a + 0.25), n[k])],
                            rgb(col).filled(),
                        )
                    }),
            )
            .map_err(|e| e.to_string())?
            .label(name)
            .legend(move |(x, y)| Rectangle::new([(x, y - 5), (x + 12, y + 5)], rgb(col).filled()));
        }
        c.configure_series_labels()
            .position(SeriesLabelPosition::UpperRight)
            .label_font((FAMILY, 14))
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK)
            .draw()
            .map_err(|e| e.to_string())
    }))
}

/// Patches by the fewest jumps that reach them (`--gap-km`), and those not reached.
pub fn reach_chart(patches: &[PatchInfo]) -> Option<String> {
    if patches.iter().all(|p| p.reachable.is_none()) {
        return None;
    }
    let max_j = patches
        .iter()
        .filter_map(|p| p.reach_jumps)
        .max()
        .unwrap_or(0) as usize;
    let groups = max_j + 2; // 0..=max_j, then "not reached"
    let mut counts = vec![[0u32; 2]; groups];
    for p in patches {
        let g = match (p.reachable, p.reach_jumps) {
            (Some(true), Some(j)) => j as usize,
            _ => groups - 1,
        };
        counts[g][usize::from(p.class == 2)] += 1;
    }
    let ymax = counts
        .iter()
        .flat_map(|c| c.iter())
        .copied()
        .max()
        .unwrap_or(1)
        + 1;
    Some(svg(|root| {
        let mut c = ChartBuilder::on(root)
            .margin(10)
            .margin_right(30)
            .x_label_area_size(40)
            .y_label_area_size(60)
            .build_cartesian_2d(-0.5f64..(groups as f64 - 0.5), 0u32..ymax)
            .map_err(|e| e.to_string())?;
        c.configure_mesh()
            .x_desc("jumps from the occupied patches (last: not reached)")
            .y_desc("patches")
            .x_labels(groups.min(12))
            .x_label_formatter(&|v| {
                let i = v.round() as usize;
                if (v - v.round()).abs() > 1e-6 {
                    String::new()
                } else if i + 1 == groups {
                    "none".into()
                } else {
                    i.to_string()
                }
            })
            .label_style((FAMILY, 15))
            .light_line_style(WHITE)
            .draw()
            .map_err(|e| e.to_string())?;
        for (k, name, col) in [
            (0usize, "class 1, inside M", palette::INSIDE),
            (1, "class 2, beyond M", palette::OUTSIDE),
        ] {
            c.draw_series(
                counts
                    .iter()
                    .enumerate()
                    .filter(|(_, n)| n[k] > 0)
                    .map(|(g, n)| {
                        let x = g as f64 - 0.4 + k as f64 * 0.4;
                        Rectangle::new([(x, 0), (x + 0.4, n[k])], rgb(col).filled())
                    }),
            )
            .map_err(|e| e.to_string())?
            .label(name)
            .legend(move |(x, y)| Rectangle::new([(x, y - 5), (x + 12, y + 5)], rgb(col).filled()));
        }
        c.configure_series_labels()
            .position(SeriesLabelPosition::UpperRight)
            .label_font((FAMILY, 14))
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK)
            .draw()
            .map_err(|e| e.to_string())
    }))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sensitivity_chart_marks_each_row_and_the_runs_e() {
        let rows: Vec<Sensitivity> = [0.0, 1.0, 2.0, 5.0, 10.0]
            .iter()
            .map(|&e| Sensitivity {
                e,
                suitable: 1000.0 - 50.0 * e,
                inside: 800.0 - 40.0 * e,
            })
            .collect();
        let svg = sensitivity_chart(&rows, Some(5.0)).unwrap();
        // One dot per row and series, plus none elsewhere.
        assert_eq!(svg.matches("<circle").count(), 10, "{svg}");
        assert!(svg.contains("E of this run (5%)"));
        assert!(sensitivity_chart(&[], None).is_none());
    }

    #[test]
    fn records_chart_draws_used_dots_and_dropped_crosses() {
        let rec = |s: f64, status: &str| MapRecord {
            lon: 0.0,
            lat: 0.0,
            cell: Some((0, 0)),
            suitability: Some(s),
            status: status.into(),
        };
        let recs = [
            rec(0.9, "used"),
            rec(0.7, "used"),
            rec(0.1, "below_threshold"),
        ];
        let svg = records_chart(&recs, 0.5).unwrap();
        // Two used dots plus the legend's dot.
        assert_eq!(svg.matches("<circle").count(), 3, "{svg}");
        assert!(svg.contains("T = 0.5000"));
    }
}
