//! Text for the pictures: DejaVu Sans (assets/fonts/DejaVuSans.ttf, Bitstream Vera
//! licence, assets/fonts/LICENSE.txt), embedded in the binary and rasterised with
//! `ab_glyph` into anti-aliased coverage, horizontal or turned 90° (reading upwards).

use std::sync::OnceLock;

use ab_glyph::{Font, FontRef, PxScale, ScaleFont};

/// The font file, embedded at build time.
const FONT_BYTES: &[u8] = include_bytes!("../../assets/fonts/DejaVuSans.ttf");

fn font() -> Option<&'static FontRef<'static>> {
    static FONT: OnceLock<Option<FontRef<'static>>> = OnceLock::new();
    FONT.get_or_init(|| FontRef::try_from_slice(FONT_BYTES).ok())
        .as_ref()
}

/// Where a text stands relative to its anchor point, along the text.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Align {
    /// The anchor is the text's start.
    Start,
    /// The anchor is the text's middle.
    Centre,
    /// The anchor is the text's end.
    End,
}

/// Where a text stands relative to its anchor point, across the text.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Across {
    /// The anchor is at the top of the capitals (the ascender line).
    Top,
    /// The anchor is halfway between ascender and descender lines.
    Middle,
    /// The anchor is at the bottom of the descenders.
    Bottom,
}

/// One text to draw: its size in pixels (the em height), alignment, and whether it is
/// turned 90° anticlockwise (reading from bottom to top, as a y-axis label).
#[derive(Debug, Clone, Copy)]
pub struct Style {
    pub size_px: f32,
    pub align: Align,
    pub across: Across,
    pub upright: bool,
}

impl Style {
    /// Horizontal text of `size_px`, anchored at its top left.
    pub fn new(size_px: f32) -> Self {
        Style {
            size_px,
            align: Align::Start,
            across: Across::Top,
            upright: false,
        }
    }
    pub fn align(mut self, a: Align) -> Self {
        self.align = a;
        self
    }
    pub fn across(mut self, a: Across) -> Self {
        self.across = a;
        self
    }
    /// Turned 90° anticlockwise.
    pub fn upright(mut self) -> Self {
        self.upright = true;
        self
    }
}

/// Advance width of `s` at `size_px`, pixels (0 when the font cannot be read).
pub fn text_width(s: &str, size_px: f32) -> f32 {
    let Some(f) = font() else { return 0.0 };
    let sf = f.as_scaled(PxScale::from(size_px));
    let mut w = 0.0;
    let mut prev = None;
    for c in s.chars() {
        let id = sf.glyph_id(c);
        if let Some(p) = prev {
            w += sf.kern(p, id);
        }
        w += sf.h_advance(id);
        prev = Some(id);
    }
    w
}

/// Draws `s` anchored at pixel (`x`, `y`); `put(px, py, coverage)` receives every pixel
/// the glyphs cover, coverage in 0..1. Returns false when the embedded font cannot be
/// read (nothing drawn).
pub fn draw_text(
    s: &str,
    x: i32,
    y: i32,
    style: Style,
    put: &mut dyn FnMut(i32, i32, f32),
) -> bool {
    let Some(f) = font() else { return false };
    let scale = PxScale::from(style.size_px);
    let sf = f.as_scaled(scale);
    let width = text_width(s, style.size_px);
    // Layout coordinates: u along the text from its start, v down from the baseline.
    let u0 = match style.align {
        Align::Start => 0.0,
        Align::Centre => -0.5 * width,
        Align::End => -width,
    };
    let (asc, desc) = (sf.ascent(), sf.descent());
    let v0 = match style.across {
        Across::Top => asc,
        Across::Middle => 0.5 * (asc + desc),
        Across::Bottom => desc,
    };
    let mut pen = u0;
    let mut prev = None;
    for c in s.chars() {
        let id = sf.glyph_id(c);
        if let Some(p) = prev {
            pen += sf.kern(p, id);
        }
        prev = Some(id);
        let g = id.with_scale_and_position(scale, ab_glyph::point(pen, v0));
        pen += sf.h_advance(id);
        let Some(og) = f.outline_glyph(g) else {
            continue;
        };
        let b = og.px_bounds();
        og.draw(|gx, gy, cov| {
            let u = b.min.x as i32 + gx as i32;
            let v = b.min.y as i32 + gy as i32;
            let (px, py) = if style.upright {
                (x + v, y - u)
            } else {
                (x + u, y + v)
            };
            put(px, py, cov);
        });
    }
    true
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_embedded_font_draws_mixed_case() {
        let mut lit = Vec::new();
        assert!(draw_text(
            "Ag (m/s)",
            10,
            10,
            Style::new(16.0),
            &mut |x, y, c| {
                if c > 0.5 {
                    lit.push((x, y))
                }
            }
        ));
        assert!(lit.len() > 50, "{} pixels", lit.len());
        // Top-anchored: nothing above the anchor, the descender of g below the capitals.
        assert!(lit.iter().all(|&(_, y)| y >= 10));
        let w = text_width("Ag (m/s)", 16.0);
        assert!(lit
            .iter()
            .all(|&(x, _)| x >= 10 && x <= 10 + w.ceil() as i32));
        // Lower case is narrower than upper case in a proportional font.
        assert!(text_width("ms", 16.0) < text_width("MS", 16.0));
    }

    #[test]
    fn upright_text_runs_upwards() {
        let mut ys = Vec::new();
        let style = Style::new(16.0).align(Align::Start).upright();
        draw_text("range (m)", 50, 200, style, &mut |x, y, c| {
            if c > 0.5 {
                ys.push((x, y))
            }
        });
        let w = text_width("range (m)", 16.0);
        // Starts at the anchor and climbs by the text's width; only ~one line wide.
        assert!(ys
            .iter()
            .all(|&(_, y)| y <= 200 && y >= 200 - w.ceil() as i32 - 1));
        let (xmin, xmax) = ys
            .iter()
            .fold((i32::MAX, i32::MIN), |(a, b), &(x, _)| (a.min(x), b.max(x)));
        assert!(xmax - xmin <= 20, "{xmin}..{xmax}");
    }
}
