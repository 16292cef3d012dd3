//! Drawing a [`Figure`] with plotters on any backend: the PNG files of the
//! CLI and the canvas of the page use this same code.
//!
//! Colours are the Okabe–Ito palette (Okabe and Ito 2008, "Color Universal
//! Design"), which stays distinguishable with the common colour-vision
//! deficiencies.

use super::data::{Figure, LineRole};
use plotters::coord::Shift;
use plotters::prelude::*;

/// Okabe–Ito blue: the points.
pub const BLUE: RGBColor = RGBColor(0, 114, 178);
/// Okabe–Ito orange: the smoother.
pub const ORANGE: RGBColor = RGBColor(230, 159, 0);
/// Okabe–Ito vermillion: contours, and positive correlations.
pub const VERMILLION: RGBColor = RGBColor(213, 94, 0);
/// Okabe–Ito sky blue: bands.
pub const SKY: RGBColor = RGBColor(86, 180, 233);
/// Okabe–Ito bluish green: model lines and curves.
pub const GREEN: RGBColor = RGBColor(0, 158, 115);
/// A neutral grey for reference lines.
pub const GREY: RGBColor = RGBColor(110, 110, 110);

fn padded(lo: f64, hi: f64) -> (f64, f64) {
    if !(lo.is_finite() && hi.is_finite()) {
        return (0.0, 1.0);
    }
    if hi > lo {
        let pad = (hi - lo) * 0.05;
        (lo - pad, hi + pad)
    } else {
        let pad = lo.abs().max(1.0) * 0.05;
        (lo - pad, hi + pad)
    }
}

/// The x and y extent of everything in the figure.
pub fn extent(fig: &Figure) -> ((f64, f64), (f64, f64)) {
    let mut xs: Vec<f64> = Vec::new();
    let mut ys: Vec<f64> = Vec::new();
    for p in &fig.points {
        xs.extend(&p.x);
        ys.extend(&p.y);
    }
    for l in &fig.lines {
        // Curves drawn for reference only (bands, contours) do not widen
        // the y range beyond the data.
        xs.extend(&l.x);
        if !matches!(l.role, LineRole::Contour) {
            ys.extend(&l.y);
        }
    }
    if let Some(b) = &fig.bars {
        xs.extend(&b.edges);
        ys.push(0.0);
        ys.push(*b.counts.iter().max().unwrap_or(&1) as f64);
    }
    let fin = |v: &[f64]| {
        let lo = v.iter().copied().filter(|x| x.is_finite()).fold(f64::INFINITY, f64::min);
        let hi = v.iter().copied().filter(|x| x.is_finite()).fold(f64::NEG_INFINITY, f64::max);
        padded(lo, hi)
    };
    (fin(&xs), fin(&ys))
}

/// Draws the figure onto the whole drawing area.
pub fn draw_figure<DB: DrawingBackend>(root: &DrawingArea<DB, Shift>, fig: &Figure) -> Result<(), DrawingAreaErrorKind<DB::ErrorType>> {
    root.fill(&WHITE)?;
    if let Some(h) = &fig.heatmap {
        return draw_heatmap(root, fig, h);
    }
    let ((x0, x1), (y0, y1)) = extent(fig);
    let mut chart = ChartBuilder::on(root)
        .caption(&fig.title, ("sans-serif", 22))
        .margin(14)
        .x_label_area_size(46)
        .y_label_area_size(64)
        .build_cartesian_2d(x0..x1, y0..y1)?;
    chart
        .configure_mesh()
        .x_desc(fig.x_label.as_str())
        .y_desc(fig.y_label.as_str())
        .x_labels(7)
        .y_labels(8)
        .axis_desc_style(("sans-serif", 16))
        .label_style(("sans-serif", 13))
        .light_line_style(RGBColor(235, 235, 235))
        .bold_line_style(RGBColor(215, 215, 215))
        .draw()?;
    if let Some(b) = &fig.bars {
        chart.draw_series(b.counts.iter().enumerate().map(|(k, &c)| {
            Rectangle::new([(b.edges[k], 0.0), (b.edges[k + 1], c as f64)], BLUE.mix(0.45).filled())
        }))?;
        chart.draw_series(b.counts.iter().enumerate().map(|(k, &c)| {
            Rectangle::new([(b.edges[k], 0.0), (b.edges[k + 1], c as f64)], BLUE.stroke_width(1))
        }))?;
    }
    for p in &fig.points {
        chart.draw_series(
            p.x.iter().zip(&p.y).filter(|(x, y)| x.is_finite() && y.is_finite()).map(|(&x, &y)| Circle::new((x, y), 3, BLUE.mix(0.6).filled())),
        )?;
    }
    let mut labelled: Vec<&str> = Vec::new();
    for l in &fig.lines {
        let (colour, width) = match l.role {
            LineRole::Smooth => (ORANGE, 3),
            LineRole::Reference => (GREY, 1),
            LineRole::Band => (SKY, 2),
            LineRole::Contour => (VERMILLION, 2),
            LineRole::Fit => (GREEN, 2),
        };
        let pts: Vec<(f64, f64)> = l.x.iter().zip(&l.y).filter(|(x, y)| x.is_finite() && y.is_finite() && **y >= y0 && **y <= y1).map(|(&x, &y)| (x, y)).collect();
        let s = chart.draw_series(LineSeries::new(pts, colour.stroke_width(width)))?;
        if !l.label.is_empty() && l.role != LineRole::Reference && !labelled.contains(&l.label.as_str()) {
            labelled.push(&l.label);
            s.label(l.label.as_str()).legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], colour.stroke_width(width)));
        }
    }
    if fig.lines.iter().any(|l| l.role != LineRole::Reference) {
        chart
            .configure_series_labels()
            .background_style(WHITE.mix(0.85))
            .border_style(RGBColor(200, 200, 200))
            .label_font(("sans-serif", 13))
            .draw()?;
    }
    root.present()
}

/// A correlation matrix as coloured cells with their values.
fn draw_heatmap<DB: DrawingBackend>(root: &DrawingArea<DB, Shift>, fig: &Figure, h: &super::data::Heatmap) -> Result<(), DrawingAreaErrorKind<DB::ErrorType>> {
    let k = h.labels.len().max(1);
    let mut chart = ChartBuilder::on(root)
        .caption(&fig.title, ("sans-serif", 20))
        .margin(14)
        .margin_left(170)
        .margin_bottom(190)
        .build_cartesian_2d(0.0..k as f64, 0.0..k as f64)?;
    // Labels at the cell centres, drawn on the root so they are not clipped.
    let style = ("sans-serif", 12).into_font();
    for (i, label) in h.labels.iter().enumerate() {
        let short: String = if label.chars().count() > 24 { label.chars().take(23).chain(['…']).collect() } else { label.clone() };
        let (px, py) = chart.backend_coord(&(0.0, (k - 1 - i) as f64 + 0.5));
        root.draw(&Text::new(short.clone(), (px - 8 - 7 * short.chars().count() as i32, py - 6), style.clone()))?;
        let (qx, qy) = chart.backend_coord(&(i as f64 + 0.5, 0.0));
        root.draw(&Text::new(short, (qx - 4, qy + 8), style.clone().transform(FontTransform::Rotate90)))?;
    }
    for (a, row) in h.values.iter().enumerate() {
        for (b, &v) in row.iter().enumerate() {
            let (x, y) = (b as f64, (k - 1 - a) as f64);
            let colour = diverging(v);
            chart.draw_series(std::iter::once(Rectangle::new([(x, y), (x + 1.0, y + 1.0)], colour.filled())))?;
            chart.draw_series(std::iter::once(Text::new(
                format!("{v:.2}"),
                (x + 0.3, y + 0.6),
                ("sans-serif", 13).into_font().color(if v.abs() > 0.6 { &WHITE } else { &BLACK }),
            )))?;
        }
    }
    root.present()
}

/// Blue for −1, white for 0, vermillion for +1.
pub fn diverging(v: f64) -> RGBColor {
    let t = v.clamp(-1.0, 1.0);
    let (end, w) = if t < 0.0 { (BLUE, -t) } else { (VERMILLION, t) };
    let mix = |a: u8, b: u8| (a as f64 + (b as f64 - a as f64) * w).round() as u8;
    RGBColor(mix(255, end.0), mix(255, end.1), mix(255, end.2))
}
