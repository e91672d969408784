//! Figures: the coded studies and the benchmark (forest), coefficients against a moderator
//! (with the fitted line, its confidence band and the prediction band; the score-spread
//! model with its slope −2 reference), where a new study falls (the predictive
//! distribution with the expected range), how a correction moves with the reliabilities,
//! and coefficients against their standard errors.
//!
//! Each figure is data plus a drawing routine that works on any plotters backend, so the
//! same figure is written as SVG (text stays text, for the HTML report) and as PNG (text
//! drawn with the embedded DejaVu Sans, so no system fonts are needed).
//!
//! The look is relyard's own: a white ground, a faint grid, slate ink, and two hues that
//! stay apart for the common colour-vision deficiencies (a blue-teal and a burnt orange,
//! which differ in lightness as well as hue), with bands as light tints of the blue.

mod draw;

use crate::error::{Error, Result};
use plotters::prelude::*;

pub use draw::{
    BubbleAxes, BubblePoint, Figure, FitBand, ForestRow, Kind, SensitivitySeries, forest_capacity,
};

/// Ink for text, axes and study markers.
pub const INK: RGBColor = RGBColor(0x23, 0x30, 0x3c);
/// The main hue (study estimates, fitted lines).
pub const BLUE: RGBColor = RGBColor(0x1f, 0x6f, 0x95);
/// The contrasting hue (the pooled value, the new study).
pub const ORANGE: RGBColor = RGBColor(0xc2, 0x5b, 0x12);
/// Light tint of the main hue (confidence bands, the expected range).
pub const BAND: RGBColor = RGBColor(0xb9, 0xd8, 0xe6);
/// Lighter tint (prediction bands).
pub const BAND_LIGHT: RGBColor = RGBColor(0xe1, 0xee, 0xf4);
/// Grid lines.
pub const GRID: RGBColor = RGBColor(0xe7, 0xe9, 0xec);
/// Secondary ink (reference lines, notes).
pub const MUTED: RGBColor = RGBColor(0x7a, 0x84, 0x8e);

/// Font family used in every figure.
pub const FONT: &str = "sans-serif";

fn register_fonts() {
    static ONCE: std::sync::Once = std::sync::Once::new();
    ONCE.call_once(|| {
        // The embedded font is valid TrueType; a failure would only make PNG text
        // fall back to nothing, which the PNG tests would catch.
        let _ = plotters::style::register_font(FONT, FontStyle::Normal, dejavu::sans::regular());
        let _ = plotters::style::register_font(FONT, FontStyle::Bold, dejavu::sans::bold());
    });
}

fn drawing_error<E: std::fmt::Debug>(what: &str) -> impl FnOnce(E) -> Error + '_ {
    move |e| Error::Numerical(format!("drawing the {what} failed: {e:?}"))
}

impl Figure {
    /// The figure as an SVG document, with a title and a text description for screen
    /// readers (and for anyone reading the file).
    pub fn svg(&self) -> Result<String> {
        // Text is measured with the embedded font even when it is written as SVG text.
        register_fonts();
        let mut out = String::new();
        {
            let root = SVGBackend::with_string(&mut out, self.size).into_drawing_area();
            self.draw(&root, 1.0).map_err(drawing_error(&self.title))?;
            root.present().map_err(drawing_error(&self.title))?;
        }
        Ok(label_svg(&out, &self.name, &self.title, &self.description))
    }

    /// The figure as a PNG image, at twice the SVG's size (for print).
    pub fn png(&self) -> Result<Vec<u8>> {
        register_fonts();
        let (w, h) = (self.size.0 * 2, self.size.1 * 2);
        let mut rgb = vec![0u8; (w * h * 3) as usize];
        {
            let root = BitMapBackend::with_buffer(&mut rgb, (w, h)).into_drawing_area();
            self.draw(&root, 2.0).map_err(drawing_error(&self.title))?;
            root.present().map_err(drawing_error(&self.title))?;
        }
        encode_png(&rgb, w, h)
    }
}

fn encode_png(rgb: &[u8], w: u32, h: u32) -> Result<Vec<u8>> {
    let mut out = Vec::new();
    {
        let mut enc = png::Encoder::new(&mut out, w, h);
        enc.set_color(png::ColorType::Rgb);
        enc.set_depth(png::BitDepth::Eight);
        let mut writer = enc
            .write_header()
            .map_err(|e| Error::Numerical(format!("writing a PNG failed: {e}")))?;
        writer
            .write_image_data(rgb)
            .map_err(|e| Error::Numerical(format!("writing a PNG failed: {e}")))?;
    }
    Ok(out)
}

/// Escape text for XML.
pub fn xml_escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// Add `role="img"`, a `<title>` and a `<desc>` to an SVG document, with ids built from
/// the figure's name so that several figures can share one page.
fn label_svg(svg: &str, name: &str, title: &str, description: &str) -> String {
    let Some(open_end) = svg
        .find("<svg")
        .and_then(|i| svg[i..].find('>').map(|j| i + j))
    else {
        return svg.to_string();
    };
    let (head, rest) = svg.split_at(open_end);
    let id = xml_escape(name);
    format!(
        "{head} role=\"img\" aria-labelledby=\"{id}-title {id}-desc\"><title id=\"{id}-title\">{}</title><desc id=\"{id}-desc\">{}</desc>{}",
        xml_escape(title),
        xml_escape(description),
        &rest[1..]
    )
}
