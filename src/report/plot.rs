//! Heat-map pictures (range-Doppler maps, spectrograms, cepstrograms, cadence-velocity
//! diagrams) as PNG: cells, markers and bands drawn with plotters into an RGB buffer,
//! text in DejaVu Sans (`report::font`), encoded with `png`. The colour scale comes from
//! the picture's own values ([`colour_scale`]). The picture is computed elsewhere
//! (`pipeline::pictures`); this file only draws it.

use std::path::Path;

use ndarray::Array2;
use plotters::prelude::*;

use super::font::{self, Across, Align, Style};
use crate::error::{Error, Result};

/// The kinds of picture.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum PictureKind {
    /// One CPI's clutter-cancelled range-Doppler map (the map CFAR reads).
    RangeDoppler,
    /// A track's micro-Doppler spectrogram (clutter removed).
    Spectrogram,
    /// A track's cepstrogram (real cepstrum of each spectrogram frame).
    Cepstrogram,
    /// A track's cadence-velocity diagram.
    Cadence,
}

impl PictureKind {
    /// The name used on the command line and in file names.
    pub fn name(self) -> &'static str {
        match self {
            PictureKind::RangeDoppler => "range-doppler",
            PictureKind::Spectrogram => "spectrogram",
            PictureKind::Cepstrogram => "cepstrogram",
            PictureKind::Cadence => "cadence",
        }
    }
}

/// A mark on the picture, in axis units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Marker {
    pub x: f64,
    pub y: f64,
    pub kind: MarkerKind,
}

/// What a [`Marker`] shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MarkerKind {
    /// The picture's track: a ring.
    Track,
    /// A detection (CFAR hit cluster) of the same CPI: a small cross.
    Hit,
}

/// A translucent band across the whole height, from `x.0` to `x.1` in axis units (the
/// canceller's notch on a range-Doppler map), named in the legend by `label`.
#[derive(Debug, Clone, PartialEq)]
pub struct Band {
    pub x: (f64, f64),
    pub label: String,
}

/// One picture: `values[[row, col]]` in dB, rows along the y axis (row 0 at the bottom),
/// columns along the x axis; `x`/`y` are the axis values at the first and last
/// column/row centres.
#[derive(Debug, Clone)]
pub struct HeatMap {
    /// First title line: what the picture is, of which recording and track.
    pub title: String,
    /// Second title line: the track's label, confidence, range and speed (may be empty).
    pub subtitle: String,
    pub x_label: String,
    pub y_label: String,
    pub x: (f64, f64),
    pub y: (f64, f64),
    pub values: Array2<f32>,
    /// Colour scale: values at and below `.0` get the darkest colour, at and above `.1`
    /// the lightest (usually [`colour_scale`] of `values`); both ends are labelled.
    pub span_db: (f32, f32),
    /// The colour bar's label, e.g. "dB re noise floor".
    pub scale_label: String,
    /// Marks drawn over the cells.
    pub markers: Vec<Marker>,
    /// Bands drawn over the cells.
    pub bands: Vec<Band>,
    /// Legend names of the marker kinds present (track ring, hit crosses).
    pub marker_labels: Vec<(MarkerKind, String)>,
}

impl HeatMap {
    /// A picture with its colour scale from its own values ([`colour_scale`],
    /// [`SCALE_RULE`]), no marks and no second title line.
    pub fn new(
        title: String,
        x_label: &str,
        y_label: &str,
        x: (f64, f64),
        y: (f64, f64),
        values: Array2<f32>,
        scale_label: &str,
    ) -> Self {
        let span_db = colour_scale(values.iter().copied(), &SCALE_RULE);
        HeatMap {
            title,
            subtitle: String::new(),
            x_label: x_label.into(),
            y_label: y_label.into(),
            x,
            y,
            values,
            span_db,
            scale_label: scale_label.into(),
            markers: Vec::new(),
            bands: Vec::new(),
            marker_labels: Vec::new(),
        }
    }
}

/// How [`colour_scale`] fits a scale to a picture.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ScaleRule {
    /// The bottom of the scale: this percentile of the picture's values (its floor).
    pub floor_percentile: f32,
    /// The scale spans at least this many dB (a picture of noise alone is not stretched
    /// into a picture of strong returns).
    pub min_span_db: f32,
    /// ... and at most this many (a strong peak does not crush everything else: the
    /// floor is then raised, the bottom clipped).
    pub max_span_db: f32,
}

/// The rule every picture uses: from the median (the noise floor of a picture that is
/// mostly noise, common practice for display) to the peak, 10 to 60 dB (10 dB: a
/// return that just clears a CFAR threshold stands ~13 dB over the noise at Pfa 1e-6,
/// Richards §6.2 — from memory — so a noise-only picture shows no such contrast; 60 dB:
/// the dynamic range of the pictures' strongest returns over the floor).
pub const SCALE_RULE: ScaleRule = ScaleRule {
    floor_percentile: 50.0,
    min_span_db: 10.0,
    max_span_db: 60.0,
};

/// The colour scale of a picture: (floor, peak) in dB, whole dB (floor rounded down,
/// peak up), from the `rule`'s percentile of the finite values to their maximum, the span
/// kept within the rule's limits by moving the floor. (0, min span) when no value is
/// finite.
pub fn colour_scale(values: impl Iterator<Item = f32>, rule: &ScaleRule) -> (f32, f32) {
    let mut v: Vec<f32> = values.filter(|x| x.is_finite()).collect();
    if v.is_empty() {
        return (0.0, rule.min_span_db);
    }
    let top = v.iter().copied().fold(f32::NEG_INFINITY, f32::max);
    let k =
        ((rule.floor_percentile.clamp(0.0, 100.0) / 100.0) * (v.len() - 1) as f32).round() as usize;
    let (_, floor, _) = v.select_nth_unstable_by(k, f32::total_cmp);
    let hi = top.ceil();
    let lo = floor
        .floor()
        .max(hi - rule.max_span_db)
        .min(hi - rule.min_span_db);
    (lo, hi)
}

/// The picture formats `plot` writes, by file extension: only PNG. `Err` names the
/// problem in one line (for a usage error before any work).
pub fn check_picture_path(path: &Path) -> std::result::Result<(), String> {
    match path.extension().and_then(|e| e.to_str()) {
        Some(e) if e.eq_ignore_ascii_case("png") => Ok(()),
        Some(e) => Err(format!(
            "{}: cannot write .{e} pictures; the output must end in .png",
            path.display()
        )),
        None => Err(format!(
            "{}: the output must end in .png (the picture format)",
            path.display()
        )),
    }
}

/// Picture size, pixels.
pub const WIDTH: u32 = 960;
pub const HEIGHT: u32 = 600;
/// Margins around the cells, pixels: left holds the y tick labels and the upright y
/// label, top the two title lines, right the colour bar with its labels, bottom the x
/// tick labels and x label.
const LEFT: i32 = 92;
const RIGHT: i32 = 140;
const TOP: i32 = 70;
const BOTTOM: i32 = 64;
/// Text sizes, pixels (em height).
const TITLE_PX: f32 = 20.0;
const SUBTITLE_PX: f32 = 16.0;
const LABEL_PX: f32 = 16.0;
const TICK_PX: f32 = 14.0;
const LEGEND_PX: f32 = 13.0;
const INK: RGBColor = RGBColor(20, 20, 20);
/// Marker colour: a magenta the colour scale (navy, teal, amber, white) never takes.
const MARK: RGBColor = RGBColor(236, 40, 200);

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

type Area<'a> = DrawingArea<BitMapBackend<'a>, plotters::coord::Shift>;

/// Text in `colour` through the embedded font, blended by coverage.
fn text(root: &Area, s: &str, x: i32, y: i32, style: Style, colour: RGBColor) -> bool {
    let mut ok = true;
    let drawn = font::draw_text(s, x, y, style, &mut |px, py, cov| {
        let c = RGBAColor(colour.0, colour.1, colour.2, cov.clamp(0.0, 1.0) as f64);
        ok &= root.draw_pixel((px, py), &c).is_ok();
    });
    ok && drawn
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
    // Frame.
    for x in LEFT - 1..=LEFT + pw {
        put(x, TOP - 1, &INK);
        put(x, TOP + ph, &INK);
    }
    for y in TOP - 1..=TOP + ph {
        put(LEFT - 1, y, &INK);
        put(LEFT + pw, y, &INK);
    }
    if let Some(e) = err {
        return Err(e);
    }
    let e = |e: plotters::drawing::DrawingAreaErrorKind<_>| e.to_string();
    let (x0, x1) = h.x;
    let (y0, y1) = h.y;
    let to_px = |x: f64| {
        let f = if x1 != x0 { (x - x0) / (x1 - x0) } else { 0.5 };
        LEFT + (f * (pw - 1) as f64).round() as i32
    };
    let to_py = |y: f64| {
        let f = if y1 != y0 { (y - y0) / (y1 - y0) } else { 0.5 };
        TOP + ph - 1 - (f * (ph - 1) as f64).round() as i32
    };
    let inside = |px: i32, py: i32| px >= LEFT && px < LEFT + pw && py >= TOP && py < TOP + ph;
    // Bands, translucent, clipped to the cells.
    for b in &h.bands {
        let (a, z) = (to_px(b.x.0.min(b.x.1)), to_px(b.x.0.max(b.x.1)));
        let (a, z) = (a.max(LEFT), z.min(LEFT + pw - 1));
        if z >= a {
            root.draw(&Rectangle::new(
                [(a, TOP), (z, TOP + ph - 1)],
                RGBAColor(255, 255, 255, 0.22).filled(),
            ))
            .map_err(e)?;
            for x in [a, z] {
                for y in (TOP..TOP + ph).step_by(6) {
                    root.draw(&PathElement::new(
                        vec![(x, y), (x, (y + 2).min(TOP + ph - 1))],
                        WHITE,
                    ))
                    .map_err(e)?;
                }
            }
        }
    }
    // Markers: hits first, the track's ring on top.
    for kind in [MarkerKind::Hit, MarkerKind::Track] {
        for m in h.markers.iter().filter(|m| m.kind == kind) {
            let (px, py) = (to_px(m.x), to_py(m.y));
            if !inside(px, py) {
                continue;
            }
            match kind {
                MarkerKind::Hit => {
                    for (dx, dy) in [(4, 4), (4, -4)] {
                        root.draw(&PathElement::new(
                            vec![(px - dx, py - dy), (px + dx, py + dy)],
                            MARK.stroke_width(2),
                        ))
                        .map_err(e)?;
                    }
                }
                MarkerKind::Track => {
                    root.draw(&Circle::new((px, py), 13, INK.stroke_width(1)))
                        .map_err(e)?;
                    root.draw(&Circle::new((px, py), 11, MARK.stroke_width(3)))
                        .map_err(e)?;
                }
            }
        }
    }
    // Legend, top left inside the cells, on a dark translucent box.
    let mut legend: Vec<(Option<MarkerKind>, &str)> = Vec::new();
    for (k, l) in &h.marker_labels {
        if h.markers.iter().any(|m| m.kind == *k) {
            legend.push((Some(*k), l));
        }
    }
    for b in &h.bands {
        legend.push((None, &b.label));
    }
    if !legend.is_empty() {
        let w = legend
            .iter()
            .map(|(_, l)| font::text_width(l, LEGEND_PX))
            .fold(0.0f32, f32::max) as i32
            + 40;
        let lh = 20;
        root.draw(&Rectangle::new(
            [
                (LEFT + 6, TOP + 6),
                (LEFT + 6 + w, TOP + 10 + lh * legend.len() as i32),
            ],
            RGBAColor(0, 0, 0, 0.55).filled(),
        ))
        .map_err(e)?;
        for (i, (k, l)) in legend.iter().enumerate() {
            let cy = TOP + 8 + lh * i as i32 + lh / 2;
            let cx = LEFT + 20;
            match k {
                Some(MarkerKind::Track) => {
                    root.draw(&Circle::new((cx, cy), 6, MARK.stroke_width(2)))
                        .map_err(e)?;
                }
                Some(MarkerKind::Hit) => {
                    for (dx, dy) in [(4, 4), (4, -4)] {
                        root.draw(&PathElement::new(
                            vec![(cx - dx, cy - dy), (cx + dx, cy + dy)],
                            MARK.stroke_width(2),
                        ))
                        .map_err(e)?;
                    }
                }
                None => {
                    root.draw(&Rectangle::new(
                        [(cx - 6, cy - 6), (cx + 6, cy + 6)],
                        RGBAColor(255, 255, 255, 0.45).filled(),
                    ))
                    .map_err(e)?;
                }
            }
            let st = Style::new(LEGEND_PX).across(Across::Middle);
            text(&root, l, cx + 14, cy, st, WHITE);
        }
    }
    // x ticks
    let xt = ticks(x0, x1, 8);
    let xstep = if xt.len() > 1 { xt[1] - xt[0] } else { 1.0 };
    for &v in &xt {
        let x = to_px(v);
        root.draw(&PathElement::new(
            vec![(x, TOP + ph), (x, TOP + ph + 5)],
            INK,
        ))
        .map_err(e)?;
        let st = Style::new(TICK_PX).align(Align::Centre);
        text(&root, &label(v, xstep), x, TOP + ph + 8, st, INK);
    }
    let st = Style::new(LABEL_PX).align(Align::Centre);
    text(&root, &h.x_label, LEFT + pw / 2, TOP + ph + 32, st, INK);
    // y ticks
    let yt = ticks(y0, y1, 8);
    let ystep = if yt.len() > 1 { yt[1] - yt[0] } else { 1.0 };
    for &v in &yt {
        let y = to_py(v);
        root.draw(&PathElement::new(vec![(LEFT - 6, y), (LEFT - 1, y)], INK))
            .map_err(e)?;
        let st = Style::new(TICK_PX).align(Align::End).across(Across::Middle);
        text(&root, &label(v, ystep), LEFT - 9, y, st, INK);
    }
    // y label, turned to read upwards
    let st = Style::new(LABEL_PX)
        .align(Align::Centre)
        .across(Across::Middle)
        .upright();
    text(&root, &h.y_label, 24, TOP + ph / 2, st, INK);
    // title lines
    text(&root, &h.title, LEFT, 10, Style::new(TITLE_PX), INK);
    text(&root, &h.subtitle, LEFT, 40, Style::new(SUBTITLE_PX), INK);
    // colour bar, its two ends labelled with their values and round values between
    let bx = LEFT + pw + 20;
    for py in 0..ph {
        let t = 1.0 - py as f32 / (ph - 1).max(1) as f32;
        root.draw(&PathElement::new(
            vec![(bx, TOP + py), (bx + 17, TOP + py)],
            colour(t),
        ))
        .map_err(e)?;
    }
    let bar_y =
        |v: f64| TOP + ph - 1 - (((v - lo as f64) / span as f64) * (ph - 1) as f64).round() as i32;
    let st = Style::new(TICK_PX).across(Across::Middle);
    let mut marks: Vec<(f64, String)> = vec![
        (lo as f64, label(lo as f64, 1.0)),
        (hi as f64, label(hi as f64, 1.0)),
    ];
    for v in ticks(lo as f64, hi as f64, 5) {
        if (bar_y(v) - bar_y(lo as f64)).abs() > 18 && (bar_y(v) - bar_y(hi as f64)).abs() > 18 {
            marks.push((v, label(v, 1.0)));
        }
    }
    for (v, s) in &marks {
        let y = bar_y(*v);
        root.draw(&PathElement::new(vec![(bx + 18, y), (bx + 22, y)], INK))
            .map_err(e)?;
        text(&root, s, bx + 25, y, st, INK);
    }
    let st = Style::new(LABEL_PX)
        .align(Align::Centre)
        .across(Across::Middle)
        .upright();
    text(&root, &h.scale_label, bx + 80, TOP + ph / 2, st, INK);
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
    fn the_colour_scale_spans_the_pictures_own_values() {
        // 0.0, 0.1, ..., 99.9 dB with a 25 dB span would be clipped: values 0..=30 dB,
        // median 15, peak 30 -> the scale runs 15..30.
        let v: Vec<f32> = (0..=300).map(|i| i as f32 / 10.0).collect();
        assert_eq!(colour_scale(v.iter().copied(), &SCALE_RULE), (15.0, 30.0));
        // A picture that reaches only 12.3 dB over a -1.6 dB floor: the old fixed 0..40
        // scale used its bottom third; this one runs from the floor to the peak.
        let mut w = vec![-1.6f32; 1000];
        w[3] = 12.3;
        assert_eq!(colour_scale(w.iter().copied(), &SCALE_RULE), (-2.0, 13.0));
        // Noise alone (2 dB of contrast) still gets the minimum span, below its peak.
        let n: Vec<f32> = (0..100).map(|i| (i % 3) as f32).collect();
        assert_eq!(colour_scale(n.iter().copied(), &SCALE_RULE), (-8.0, 2.0));
        // A 90 dB peak over a 0 dB floor: the floor moves up to keep 60 dB.
        let mut p = vec![0.0f32; 100];
        p[0] = 90.0;
        assert_eq!(colour_scale(p.iter().copied(), &SCALE_RULE), (30.0, 90.0));
        // Non-finite cells are ignored; nothing finite gives the default.
        let q = [f32::NEG_INFINITY, f32::NAN, 5.0, 7.0, 20.0];
        assert_eq!(colour_scale(q.iter().copied(), &SCALE_RULE), (7.0, 20.0));
        assert_eq!(
            colour_scale([f32::NAN].into_iter(), &SCALE_RULE),
            (0.0, 10.0)
        );
    }

    #[test]
    fn only_png_paths_are_accepted() {
        assert!(check_picture_path(Path::new("a/b.png")).is_ok());
        assert!(check_picture_path(Path::new("B.PNG")).is_ok());
        let e = check_picture_path(Path::new("x.jpg")).unwrap_err();
        assert!(
            e.contains(".jpg") && e.contains(".png") && !e.contains('\n'),
            "{e}"
        );
        assert!(check_picture_path(Path::new("noext")).is_err());
    }

    fn decode(png: Vec<u8>) -> Vec<u8> {
        assert_eq!(&png[1..4], b"PNG");
        let dec = png::Decoder::new(std::io::Cursor::new(png));
        let mut r = dec.read_info().unwrap();
        let mut img = vec![0; r.output_buffer_size()];
        r.next_frame(&mut img).unwrap();
        img
    }

    fn test_map(title: &str) -> HeatMap {
        let mut v = Array2::from_elem((40, 60), -10.0f32);
        v[[20, 30]] = 40.0;
        let mut h = HeatMap::new(
            title.into(),
            "time (s)",
            "radial velocity (m/s)",
            (0.0, 59.0),
            (0.0, 39.0),
            v,
            "dB re noise floor",
        );
        h.span_db = (0.0, 30.0);
        h
    }

    #[test]
    fn renders_a_png_with_the_hot_cell_light() {
        let img = decode(render_png(&test_map("Test")).unwrap());
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

    /// Dark pixels in a rectangle of the picture (text is near-black on white).
    fn ink_in(img: &[u8], x0: i32, y0: i32, x1: i32, y1: i32) -> usize {
        let mut n = 0;
        for y in y0..y1 {
            for x in x0..x1 {
                let i = ((y as u32 * WIDTH + x as u32) * 3) as usize;
                if (img[i] as u32 + img[i + 1] as u32 + img[i + 2] as u32) < 300 {
                    n += 1;
                }
            }
        }
        n
    }

    #[test]
    fn titles_and_labels_are_written() {
        let blank = decode(render_png(&test_map("")).unwrap());
        let img = decode(render_png(&test_map("Spectrogram of a long title")).unwrap());
        // The title region is white without a title and inked with one.
        assert_eq!(ink_in(&blank, LEFT, 8, LEFT + 300, 34), 0);
        assert!(ink_in(&img, LEFT, 8, LEFT + 300, 34) > 200);
        // The y label stands upright in the left margin: taller than wide.
        let (mut xs, mut ys) = ((i32::MAX, i32::MIN), (i32::MAX, i32::MIN));
        for y in TOP..HEIGHT as i32 - BOTTOM {
            for x in 0..40 {
                if ink_in(&img, x, y, x + 1, y + 1) > 0 {
                    xs = (xs.0.min(x), xs.1.max(x));
                    ys = (ys.0.min(y), ys.1.max(y));
                }
            }
        }
        assert!(ys.1 - ys.0 > 3 * (xs.1 - xs.0), "x {xs:?} y {ys:?}");
        // The colour bar's label is drawn in the right margin.
        assert!(
            ink_in(
                &img,
                WIDTH as i32 - 50,
                TOP,
                WIDTH as i32,
                HEIGHT as i32 - BOTTOM
            ) > 100
        );
    }

    #[test]
    fn markers_and_bands_are_drawn() {
        let mut h = test_map("marks");
        h.markers.push(Marker {
            x: 10.0,
            y: 10.0,
            kind: MarkerKind::Track,
        });
        h.bands.push(Band {
            x: (40.0, 50.0),
            label: "canceller notch".into(),
        });
        let img = decode(render_png(&h).unwrap());
        let (pw, ph) = (WIDTH as i32 - LEFT - RIGHT, HEIGHT as i32 - TOP - BOTTOM);
        let px = |x: f64| LEFT + (x / 59.0 * (pw - 1) as f64).round() as i32;
        let py = |y: f64| TOP + ph - 1 - (y / 39.0 * (ph - 1) as f64).round() as i32;
        // The ring passes 11 px right of the track's cell, in the marker colour.
        let i = ((py(10.0) as u32 * WIDTH + (px(10.0) + 11) as u32) * 3) as usize;
        assert_eq!((img[i], img[i + 1], img[i + 2]), (MARK.0, MARK.1, MARK.2));
        // Inside the band the cold cells are lighter than outside it.
        let at = |x: i32, y: i32| {
            let i = ((y as u32 * WIDTH + x as u32) * 3) as usize;
            img[i] as u32 + img[i + 1] as u32 + img[i + 2] as u32
        };
        assert!(at(px(45.0), py(5.0)) > at(px(55.0), py(5.0)) + 60);
    }
}
