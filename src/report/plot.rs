//! Heat-map pictures (range-Doppler maps, spectrograms, cepstrograms, cadence-velocity
//! diagrams) as PNG: drawn with plotters into an RGB buffer, labelled with the built-in
//! pixel font (`report::font`, no font files needed), encoded with `png`. The picture is
//! computed elsewhere (`pipeline::pictures`); this file only draws it.

use std::path::Path;

use ndarray::Array2;
use plotters::prelude::*;

use super::font;
use crate::error::{Error, Result};

/// One picture: `values[[row, col]]` in dB, rows along the y axis (row 0 at the bottom),
/// columns along the x axis; `x`/`y` are the axis values at the first and last
/// column/row centres.
#[derive(Debug, Clone)]
pub struct HeatMap {
    pub title: String,
    pub x_label: String,
    pub y_label: String,
    pub x: (f64, f64),
    pub y: (f64, f64),
    pub values: Array2<f32>,
    /// Colour scale: values at and below `.0` get the darkest colour, at and above `.1`
    /// the lightest.
    pub span_db: (f32, f32),
    /// The colour bar's label (short: it sits under the bar), e.g. "DB/NOISE".
    pub scale_label: String,
}

/// Picture size, pixels.
pub const WIDTH: u32 = 960;
pub const HEIGHT: u32 = 600;
const LEFT: i32 = 96;
const RIGHT: i32 = 120;
const TOP: i32 = 44;
const BOTTOM: i32 = 70;

/// Our colour scale: deep navy, sea blue, teal, amber, near white.
const STOPS: [(f32, [u8; 3]); 5] = [
    (0.0, [8, 16, 48]),
    (0.3, [22, 84, 140]),
    (0.55, [36, 164, 150]),
    (0.8, [238, 186, 64]),
    (1.0, [255, 252, 236]),
];

/// Colour of a value scaled to 0..1.
pub fn colour(t: f32) -> RGBColor {
    let t = if t.is_finite() {
        t.clamp(0.0, 1.0)
    } else {
        0.0
    };
    for w in STOPS.windows(2) {
        let ((a, ca), (b, cb)) = (w[0], w[1]);
        if t <= b {
            let f = (t - a) / (b - a);
            let mix = |i: usize| (ca[i] as f32 + f * (cb[i] as f32 - ca[i] as f32)).round() as u8;
            return RGBColor(mix(0), mix(1), mix(2));
        }
    }
    let c = STOPS[STOPS.len() - 1].1;
    RGBColor(c[0], c[1], c[2])
}

/// About `target` round tick values (1, 2 or 5 times a power of ten apart) within [a, b].
pub fn ticks(a: f64, b: f64, target: usize) -> Vec<f64> {
    let (lo, hi) = (a.min(b), a.max(b));
    if hi <= lo || !lo.is_finite() || !hi.is_finite() {
        return vec![lo];
    }
    let raw = (hi - lo) / target.max(1) as f64;
    let mag = 10f64.powf(raw.log10().floor());
    let step = [1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|m| m * mag)
        .find(|s| *s >= raw)
        .unwrap_or(10.0 * mag);
    let first = (lo / step).ceil() as i64;
    let last = (hi / step).floor() as i64;
    (first..=last).map(|i| i as f64 * step).collect()
}

/// A tick label: as few decimals as the step needs.
fn label(v: f64, step: f64) -> String {
    let dec = if step >= 1.0 {
        0
    } else {
        (-step.log10().floor()) as usize
    };
    let s = format!("{v:.dec$}");
    if s.starts_with('-') && s[1..].chars().all(|c| c == '0' || c == '.') {
        s[1..].to_string()
    } else {
        s
    }
}

/// Draws `h` and returns the PNG bytes.
pub fn render_png(h: &HeatMap) -> Result<Vec<u8>> {
    let (w, ht) = (WIDTH, HEIGHT);
    let mut buf = vec![255u8; (w * ht * 3) as usize];
    draw(h, &mut buf).map_err(|e| Error::Invalid(format!("drawing the picture: {e}")))?;
    let mut out = Vec::new();
    {
        let mut enc = png::Encoder::new(&mut out, w, ht);
        enc.set_color(png::ColorType::Rgb);
        enc.set_depth(png::BitDepth::Eight);
        enc.set_compression(png::Compression::Best);
        enc.set_adaptive_filter(png::AdaptiveFilterType::Adaptive);
        let mut wr = enc
            .write_header()
            .map_err(|e| Error::Invalid(format!("encoding the picture: {e}")))?;
        wr.write_image_data(&buf)
            .map_err(|e| Error::Invalid(format!("encoding the picture: {e}")))?;
    }
    Ok(out)
}

/// Draws `h` and writes it to `path` as PNG, atomically ([`crate::atomic`]).
pub fn write_png(h: &HeatMap, path: &Path) -> Result<()> {
    let bytes = render_png(h)?;
    crate::atomic::write_atomic(path, &bytes)
}

fn draw(h: &HeatMap, buf: &mut [u8]) -> std::result::Result<(), String> {
    let root = BitMapBackend::with_buffer(buf, (WIDTH, HEIGHT)).into_drawing_area();
    root.fill(&WHITE).map_err(|e| e.to_string())?;
    let (pw, ph) = (WIDTH as i32 - LEFT - RIGHT, HEIGHT as i32 - TOP - BOTTOM);
    let (rows, cols) = h.values.dim();
    let (lo, hi) = h.span_db;
    let span = (hi - lo).max(1e-6);
    let mut err: Option<String> = None;
    let mut put = |x: i32, y: i32, c: &RGBColor| {
        if let Err(e) = root.draw_pixel((x, y), c) {
            err.get_or_insert(e.to_string());
        }
    };
    // Cells: each picture pixel shows the largest value of the cells it covers, so short
    // flashes in a long recording stay visible.
    if rows > 0 && cols > 0 {
        for px in 0..pw {
            let c0 = (px as usize * cols) / pw as usize;
            let c1 = (((px + 1) as usize * cols) / pw as usize)
                .max(c0 + 1)
                .min(cols);
            for py in 0..ph {
                // py = 0 is the top: counted from the top, rows t0..t1 (row index rows-1-t)
                let t0 = (py as usize * rows) / ph as usize;
                let t1 = (((py + 1) as usize * rows) / ph as usize)
                    .max(t0 + 1)
                    .min(rows);
                let mut v = f32::NEG_INFINITY;
                for t in t0..t1 {
                    for c in c0..c1 {
                        v = v.max(h.values[[rows - 1 - t, c]]);
                    }
                }
                put(LEFT + px, TOP + py, &colour((v - lo) / span));
            }
        }
    }
    let black = RGBColor(20, 20, 20);
    // Frame.
    for x in LEFT - 1..=LEFT + pw {
        put(x, TOP - 1, &black);
        put(x, TOP + ph, &black);
    }
    for y in TOP - 1..=TOP + ph {
        put(LEFT - 1, y, &black);
        put(LEFT + pw, y, &black);
    }
    let mut text = |s: &str, x: i32, y: i32, scale: i32| {
        font::draw_text(s, x, y, scale, &mut |a, b| put(a, b, &black));
    };
    // x ticks
    let (x0, x1) = h.x;
    let xt = ticks(x0, x1, 8);
    let xstep = if xt.len() > 1 { xt[1] - xt[0] } else { 1.0 };
    for &v in &xt {
        let f = if x1 != x0 { (v - x0) / (x1 - x0) } else { 0.5 };
        let x = LEFT + (f * (pw - 1) as f64).round() as i32;
        for d in 0..6 {
            root.draw_pixel((x, TOP + ph + d), &black)
                .map_err(|e| e.to_string())?;
        }
        let s = label(v, xstep);
        text(&s, x - font::text_width(&s, 2) / 2, TOP + ph + 10, 2);
    }
    let xl = &h.x_label;
    text(
        xl,
        LEFT + pw / 2 - font::text_width(xl, 2) / 2,
        TOP + ph + 40,
        2,
    );
    // y ticks
    let (y0, y1) = h.y;
    let yt = ticks(y0, y1, 8);
    let ystep = if yt.len() > 1 { yt[1] - yt[0] } else { 1.0 };
    for &v in &yt {
        let f = if y1 != y0 { (v - y0) / (y1 - y0) } else { 0.5 };
        let y = TOP + ph - 1 - (f * (ph - 1) as f64).round() as i32;
        for d in 1..7 {
            root.draw_pixel((LEFT - d, y), &black)
                .map_err(|e| e.to_string())?;
        }
        let s = label(v, ystep);
        text(&s, LEFT - 10 - font::text_width(&s, 2), y - 7, 2);
    }
    // y label, written along the left edge letter by letter (top to bottom)
    let yl: Vec<char> = h.y_label.chars().collect();
    let top = TOP + ph / 2 - (yl.len() as i32 * 16) / 2;
    for (i, c) in yl.iter().enumerate() {
        text(&c.to_string(), 8, top + i as i32 * 16, 2);
    }
    // title
    text(&h.title, LEFT, 12, 2);
    // colour bar
    let bx = LEFT + pw + 24;
    for py in 0..ph {
        let t = 1.0 - py as f32 / (ph - 1).max(1) as f32;
        for dx in 0..18 {
            root.draw_pixel((bx + dx, TOP + py), &colour(t))
                .map_err(|e| e.to_string())?;
        }
    }
    for &v in &ticks(lo as f64, hi as f64, 5) {
        let f = (v - lo as f64) / span as f64;
        let y = TOP + ph - 1 - (f * (ph - 1) as f64).round() as i32;
        let s = label(v, 1.0);
        text(&s, bx + 22, y - 7, 2);
    }
    text(&h.scale_label, bx - 4, TOP + ph + 14, 2);
    if let Some(e) = err {
        return Err(e);
    }
    root.present().map_err(|e| e.to_string())?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ticks_are_round_and_inside() {
        assert_eq!(ticks(0.0, 10.0, 5), vec![0.0, 2.0, 4.0, 6.0, 8.0, 10.0]);
        let t = ticks(-62.4, 62.4, 8);
        assert!(t.contains(&0.0) && t.iter().all(|v| v.abs() <= 62.4));
        assert_eq!(label(-0.0, 1.0), "0");
        assert_eq!(label(0.25, 0.05), "0.25");
    }

    #[test]
    fn colours_run_dark_to_light() {
        let lum = |c: RGBColor| c.0 as u32 + c.1 as u32 + c.2 as u32;
        let mut last = 0;
        for i in 0..=20 {
            let l = lum(colour(i as f32 / 20.0));
            assert!(l >= last, "step {i}");
            last = l;
        }
        assert_eq!(lum(colour(f32::NAN)), lum(colour(0.0)));
    }

    #[test]
    fn renders_a_png_with_the_hot_cell_light() {
        let mut v = Array2::from_elem((40, 60), -10.0f32);
        v[[20, 30]] = 40.0;
        let h = HeatMap {
            title: "TEST".into(),
            x_label: "X".into(),
            y_label: "Y".into(),
            x: (0.0, 59.0),
            y: (0.0, 39.0),
            values: v,
            span_db: (0.0, 30.0),
            scale_label: "DB".into(),
        };
        let png = render_png(&h).unwrap();
        assert_eq!(&png[1..4], b"PNG");
        let dec = png::Decoder::new(std::io::Cursor::new(png));
        let mut r = dec.read_info().unwrap();
        let mut img = vec![0; r.output_buffer_size()];
        r.next_frame(&mut img).unwrap();
        // The centre of the plot area holds the hot cell: the lightest colour.
        let (pw, ph) = (WIDTH as i32 - LEFT - RIGHT, HEIGHT as i32 - TOP - BOTTOM);
        let (cx, cy) = (LEFT + pw * 30 / 60 + 2, TOP + ph - ph * 20 / 40 - 2);
        let i = ((cy as u32 * WIDTH + cx as u32) * 3) as usize;
        let c = colour(1.0);
        assert_eq!((img[i], img[i + 1], img[i + 2]), (c.0, c.1, c.2));
        // A cold corner: the darkest.
        let j = (((TOP + 3) as u32 * WIDTH + (LEFT + 3) as u32) * 3) as usize;
        let d = colour(0.0);
        assert_eq!((img[j], img[j + 1], img[j + 2]), (d.0, d.1, d.2));
    }
}
