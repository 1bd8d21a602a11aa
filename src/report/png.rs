//! SVG to PNG, for `--plot FILE.png`: the plot's SVG rendered by resvg (pure Rust, no system
//! libraries), text set in the DejaVu Sans font bundled in `assets/fonts/` (its licence beside it),
//! so the picture is the same on a machine without any font installed. The only file that knows resvg.

use resvg::{tiny_skia, usvg};

/// The bundled font (Bitstream Vera licence with the DejaVu changes in the public domain).
const FONT: &[u8] = include_bytes!("../../assets/fonts/DejaVuSans.ttf");

/// Pixels per SVG user unit: 2 gives a sharp picture for print and high-density screens.
const SCALE: f32 = 2.0;

/// Why an SVG could not be turned into a PNG.
#[derive(Debug, thiserror::Error)]
pub enum PngError {
    #[error("the plot's SVG could not be read: {0}")]
    Svg(String),
    #[error("the picture would be empty or too large ({0} × {1} pixels)")]
    Size(u32, u32),
    #[error("PNG encoding failed: {0}")]
    Encode(String),
}

/// Render SVG text to PNG bytes.
pub fn svg_to_png(svg: &str) -> Result<Vec<u8>, PngError> {
    let mut options = usvg::Options {
        font_family: "DejaVu Sans".into(),
        ..usvg::Options::default()
    };
    let db = options.fontdb_mut();
    db.load_font_data(FONT.to_vec());
    db.set_sans_serif_family("DejaVu Sans");
    let tree = usvg::Tree::from_str(svg, &options).map_err(|e| PngError::Svg(e.to_string()))?;
    let size = tree.size();
    let (w, h) = (
        (size.width() * SCALE).ceil() as u32,
        (size.height() * SCALE).ceil() as u32,
    );
    if w == 0 || h == 0 || u64::from(w) * u64::from(h) > 40_000_000 {
        return Err(PngError::Size(w, h));
    }
    let mut pixmap = tiny_skia::Pixmap::new(w, h).ok_or(PngError::Size(w, h))?;
    pixmap.fill(tiny_skia::Color::WHITE);
    resvg::render(
        &tree,
        tiny_skia::Transform::from_scale(SCALE, SCALE),
        &mut pixmap.as_mut(),
    );
    pixmap
        .encode_png()
        .map_err(|e| PngError::Encode(e.to_string()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn renders_text_and_lines_to_a_png() {
        let svg = r##"<svg xmlns="http://www.w3.org/2000/svg" width="100" height="40"><line x1="0" y1="20" x2="100" y2="20" stroke="#000"/><text x="5" y="15" font-family="sans-serif" font-size="12">49.0 Hz</text></svg>"##;
        let png = svg_to_png(svg).unwrap();
        // PNG signature (ISO/IEC 15948:2004, 5.2).
        assert_eq!(&png[..8], b"\x89PNG\r\n\x1a\n");
        let pixmap = tiny_skia::Pixmap::decode_png(&png).unwrap();
        assert_eq!((pixmap.width(), pixmap.height()), (200, 80));
        // The text drew dark pixels above the line (the bundled font was found).
        let dark_above = (0..200 * 36)
            .filter(|&i| pixmap.pixels()[i].red() < 128)
            .count();
        assert!(
            dark_above > 20,
            "{dark_above} dark pixels where the text is"
        );
    }

    #[test]
    fn broken_svg_is_an_error_not_a_panic() {
        assert!(svg_to_png("<svg").is_err());
    }
}
