//! PNG files of the figures, for the CLI (native builds only). Text is set
//! in DejaVu Sans, bundled with its licence in `font/`, so that a machine
//! without fonts still gets labelled axes.

use super::data::Figure;
use super::draw::draw_figure;
use plotters::prelude::*;
use std::fmt;
use std::sync::Once;

static FONT: Once = Once::new();
static DEJAVU: &[u8] = include_bytes!("font/DejaVuSans.ttf");

fn register_font() {
    FONT.call_once(|| {
        // The bundled font is valid; a failure here would leave text unset, not crash.
        let _ = plotters::style::register_font("sans-serif", FontStyle::Normal, DEJAVU);
    });
}

/// Why a figure could not be drawn or encoded.
#[derive(Debug)]
pub struct PlotError(pub String);

impl fmt::Display for PlotError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "A plot could not be drawn: {}", self.0)
    }
}

impl std::error::Error for PlotError {}

/// Draws the figure to an RGB buffer of `width x height` pixels.
pub fn render_rgb(fig: &Figure, width: u32, height: u32) -> Result<Vec<u8>, PlotError> {
    register_font();
    let mut buf = vec![255u8; (width * height * 3) as usize];
    {
        let root = BitMapBackend::with_buffer(&mut buf, (width, height)).into_drawing_area();
        draw_figure(&root, fig).map_err(|e| PlotError(e.to_string()))?;
    }
    Ok(buf)
}

/// Draws the figure and encodes it as PNG.
pub fn render_png(fig: &Figure, width: u32, height: u32) -> Result<Vec<u8>, PlotError> {
    let rgb = render_rgb(fig, width, height)?;
    let mut out = Vec::new();
    image::codecs::png::PngEncoder::new(&mut out)
        .write_image(&rgb, width, height, image::ColorType::Rgb8)
        .map_err(|e| PlotError(e.to_string()))?;
    Ok(out)
}

use image::ImageEncoder;
