//! The study's table (CSV) and figure (PNG: labels spent against lane-departure share).

use std::io::Write;
use std::path::Path;

use plotters::prelude::*;

use super::{ResultRow, Strategy};

const FONT: &[u8] = include_bytes!("../../assets/fonts/DejaVuSans.ttf");

/// Writes the result table as CSV.
pub fn write_csv<W: Write>(rows: &[ResultRow], mut w: W) -> std::io::Result<()> {
    writeln!(
        w,
        "strategy,round,labels,departure,departure_low,departure_high,lateral_m,lateral_low,lateral_high,cost,cost_low,cost_high"
    )?;
    for r in rows {
        let (d, l, c) = (r.departure, r.lateral, r.cost);
        writeln!(
            w,
            "{},{},{},{:.4},{:.4},{:.4},{:.4},{:.4},{:.4},{:.3},{:.3},{:.3}",
            r.strategy.name(),
            r.round,
            r.labels,
            d.mean,
            d.low,
            d.high,
            l.mean,
            l.low,
            l.high,
            c.mean,
            c.low,
            c.high
        )?;
    }
    Ok(())
}

/// A colour per strategy (Okabe & Ito 2008 colour-vision-friendly palette).
fn colour(s: Strategy) -> RGBColor {
    match s {
        Strategy::MoreDemos => RGBColor(0xE6, 0x9F, 0x00),
        Strategy::DaggerAll => RGBColor(0x00, 0x00, 0x00),
        Strategy::Random => RGBColor(0x56, 0xB4, 0xE9),
        Strategy::TopNovelty => RGBColor(0xCC, 0x79, 0xA7),
        Strategy::ReviewList => RGBColor(0x00, 0x9E, 0x73),
    }
}

/// Draws labels spent (log scale) against lane-departure share, one line per strategy with
/// its 95 % interval as whiskers.
pub fn write_plot(rows: &[ResultRow], path: &Path) -> Result<(), String> {
    const SIZE: (u32, u32) = (900, 560);
    let mut pixels = vec![0u8; SIZE.0 as usize * SIZE.1 as usize * 3];
    draw_plot(rows, BitMapBackend::with_buffer(&mut pixels, SIZE))?;
    let img = image::RgbImage::from_raw(SIZE.0, SIZE.1, pixels)
        .ok_or_else(|| "plot buffer has the wrong size".to_string())?;
    let png = crate::sim::frames::encode_png(&img).map_err(|e| e.to_string())?;
    crate::durable::write_bytes(path, &png).map_err(|e| e.to_string())
}

fn draw_plot(rows: &[ResultRow], backend: BitMapBackend<'_>) -> Result<(), String> {
    plotters::style::register_font("sans-serif", FontStyle::Normal, FONT)
        .map_err(|_| "font".to_string())?;
    let e = |e: &dyn std::fmt::Display| e.to_string();
    let root = backend.into_drawing_area();
    root.fill(&WHITE).map_err(|x| e(&x))?;
    let max_labels = rows.iter().map(|r| r.labels).max().unwrap_or(1).max(10) as f64;
    let max_dep = rows
        .iter()
        .map(|r| r.departure.high)
        .fold(0.05, f64::max)
        .min(1.0)
        * 1.1;
    let mut chart = ChartBuilder::on(&root)
        .caption(
            "Lane departures against expert labels spent",
            ("sans-serif", 22),
        )
        .margin(14)
        .x_label_area_size(46)
        .y_label_area_size(60)
        .build_cartesian_2d((1.0f64..max_labels * 1.5).log_scale(), 0.0f64..max_dep)
        .map_err(|x| e(&x))?;
    chart
        .configure_mesh()
        .x_desc("expert labels spent (cumulative; round 0 drawn at 1)")
        .y_desc("share of evaluation episodes leaving the lane")
        .label_style(("sans-serif", 14))
        .draw()
        .map_err(|x| e(&x))?;
    for s in Strategy::ALL {
        let pts: Vec<&ResultRow> = rows.iter().filter(|r| r.strategy == s).collect();
        if pts.is_empty() {
            continue;
        }
        let c = colour(s);
        let xy = |r: &ResultRow| ((r.labels.max(1)) as f64, r.departure.mean);
        chart
            .draw_series(LineSeries::new(
                pts.iter().map(|r| xy(r)),
                c.stroke_width(2),
            ))
            .map_err(|x| e(&x))?
            .label(s.name())
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], c.stroke_width(2)));
        chart
            .draw_series(pts.iter().map(|r| Circle::new(xy(r), 4, c.filled())))
            .map_err(|x| e(&x))?;
        chart
            .draw_series(pts.iter().map(|r| {
                let x = r.labels.max(1) as f64;
                PathElement::new(
                    vec![(x, r.departure.low), (x, r.departure.high)],
                    c.stroke_width(1),
                )
            }))
            .map_err(|x| e(&x))?;
    }
    chart
        .configure_series_labels()
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK)
        .label_font(("sans-serif", 14))
        .position(SeriesLabelPosition::UpperRight)
        .draw()
        .map_err(|x| e(&x))?;
    root.present().map_err(|x| e(&x))?;
    Ok(())
}
