//! Figures as PNG and PDF, from the SVG text the plots write: parsed and laid out once by
//! usvg, rasterised by resvg (PNG) or converted by svg2pdf (PDF, vector, fonts embedded as
//! subsets). Text is set with the DejaVu Sans faces shipped in `src/report/fonts/` (their
//! licence beside them): no system font or library is looked up, so a figure renders the same
//! on every machine. The same SVG gives the same PNG bytes on every run, and a PDF that differs
//! at most in the order of the entries of its page's resource dictionaries (svg2pdf keeps them
//! in hash maps).
//!
//! Only formatting: bytes in, bytes out, no file is touched.

use resvg::tiny_skia;
use resvg::usvg;
use std::sync::Arc;

/// Pixels of the PNG per SVG pixel: a figure drawn 880 × 540 becomes 1760 × 1080.
pub const PNG_SCALE: f32 = 2.0;

/// The family every text of a figure is set in.
pub const FAMILY: &str = "DejaVu Sans";

const REGULAR: &[u8] = include_bytes!("fonts/DejaVuSans.ttf");
const BOLD: &[u8] = include_bytes!("fonts/DejaVuSans-Bold.ttf");

/// Why a figure could not be rendered (the SVG did not parse, or the size is out of bounds).
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("figure not rendered: {0}")]
pub struct RenderError(pub String);

/// The parsing options: the shipped faces only (`bold` says whether the bold face is among
/// them), and every generic family mapped to them.
fn options(bold: bool) -> usvg::Options<'static> {
    let mut db = usvg::fontdb::Database::new();
    db.load_font_data(REGULAR.to_vec());
    if bold {
        db.load_font_data(BOLD.to_vec());
    }
    db.set_sans_serif_family(FAMILY);
    db.set_serif_family(FAMILY);
    db.set_monospace_family(FAMILY);
    db.set_cursive_family(FAMILY);
    db.set_fantasy_family(FAMILY);
    usvg::Options {
        font_family: FAMILY.to_string(),
        fontdb: Arc::new(db),
        ..usvg::Options::default()
    }
}

fn tree(svg: &str, bold: bool) -> Result<usvg::Tree, RenderError> {
    usvg::Tree::from_str(svg, &options(bold)).map_err(|e| RenderError(e.to_string()))
}

/// The pixel size of the PNG of an SVG of `width` × `height` (its own units).
pub fn png_size(width: f32, height: f32) -> (u32, u32) {
    (
        (width * PNG_SCALE).ceil() as u32,
        (height * PNG_SCALE).ceil() as u32,
    )
}

/// The figure as a PNG (8-bit RGBA) at [`PNG_SCALE`] pixels per SVG pixel, on the figure's own
/// background (transparent where the SVG draws nothing).
pub fn png(svg: &str) -> Result<Vec<u8>, RenderError> {
    let tree = tree(svg, true)?;
    let size = tree.size();
    let (w, h) = png_size(size.width(), size.height());
    if w == 0 || h == 0 || w > 16_384 || h > 16_384 {
        return Err(RenderError(format!("a PNG of {w} × {h} pixels")));
    }
    let mut pixmap = tiny_skia::Pixmap::new(w, h)
        .ok_or_else(|| RenderError(format!("no pixmap of {w} × {h}")))?;
    resvg::render(
        &tree,
        tiny_skia::Transform::from_scale(PNG_SCALE, PNG_SCALE),
        &mut pixmap.as_mut(),
    );
    pixmap
        .encode_png()
        .map_err(|e| RenderError(format!("PNG encoding: {e}")))
}

/// The figure as a one-page PDF whose page is the SVG's size, one SVG pixel to one point
/// (880 × 540 pixels: a page of 880 × 540 pt). Its text is set in the regular face only
/// (bold titles read regular): with two faces svg2pdf writes them in the order of a hash
/// map, and the same figure would not give the same bytes on every run.
pub fn pdf(svg: &str) -> Result<Vec<u8>, RenderError> {
    let tree = tree(svg, false)?;
    svg2pdf::to_pdf(
        &tree,
        svg2pdf::ConversionOptions::default(),
        svg2pdf::PageOptions::default(),
    )
    .map_err(|e| RenderError(format!("PDF conversion: {e}")))
}

#[cfg(test)]
mod tests {
    use super::*;

    const SMALL: &str = r##"<svg xmlns="http://www.w3.org/2000/svg" width="40" height="20" viewBox="0 0 40 20"><rect x="0" y="0" width="40" height="20" fill="#FFFFFF"/><rect x="0" y="0" width="20" height="20" fill="#FF0000"/><text x="22" y="15" font-family="sans-serif" font-size="12">σ</text></svg>"##;

    fn decode(bytes: &[u8]) -> (png::OutputInfo, Vec<u8>) {
        let mut r = png::Decoder::new(std::io::Cursor::new(bytes))
            .read_info()
            .unwrap();
        let mut buf = vec![0; r.output_buffer_size().unwrap()];
        let info = r.next_frame(&mut buf).unwrap();
        buf.truncate(info.buffer_size());
        (info, buf)
    }

    #[test]
    fn png_has_twice_the_size_and_the_colours_drawn() {
        let bytes = png(SMALL).unwrap();
        let (info, buf) = decode(&bytes);
        assert_eq!((info.width, info.height), (80, 40));
        assert_eq!(info.color_type, png::ColorType::Rgba);
        // Pixel (10, 10) lies in the red square, (78, 2) in the white background.
        let at = |x: usize, y: usize| &buf[(y * 80 + x) * 4..(y * 80 + x) * 4 + 4];
        assert_eq!(at(10, 10), [255, 0, 0, 255]);
        assert_eq!(at(78, 2), [255, 255, 255, 255]);
        // The glyph is set: some pixel right of the square is dark.
        let dark = (44..80)
            .flat_map(|x| (0..40).map(move |y| (x, y)))
            .any(|(x, y)| at(x, y)[0] < 128);
        assert!(dark, "the text was drawn with the shipped face");
        assert_eq!(png(SMALL).unwrap(), bytes, "same SVG, same bytes");
    }

    #[test]
    fn pdf_is_one_page_of_the_svg_size() {
        let bytes = pdf(SMALL).unwrap();
        assert!(bytes.starts_with(b"%PDF-"));
        let text = String::from_utf8_lossy(&bytes);
        assert_eq!(
            text.matches("/Type /Page\n").count()
                + text.matches("/Type /Page/").count()
                + text.matches("/Type /Page ").count(),
            1,
            "{text:.600}"
        );
        assert!(text.contains("/MediaBox [0 0 40 20]"), "{text:.600}");
        assert!(text.contains("FontFile2"), "the face is embedded");
        assert_eq!(pdf(SMALL).unwrap(), bytes, "same SVG, same bytes");
    }

    #[test]
    fn bad_svg_is_an_error_not_a_panic() {
        assert!(png("not an svg").is_err());
        assert!(pdf("<svg").is_err());
        assert!(png(r#"<svg xmlns="http://www.w3.org/2000/svg" width="0" height="0"/>"#).is_err());
    }
}
