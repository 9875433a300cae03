//! Plots (plotters): orbits and surveys, as SVG or PNG.
//!
//! plotters draws text only through a font backend, which needs system libraries; so the
//! lines, circles, frame and ticks are drawn by plotters, and the words and numbers are
//! written as SVG `<text>` elements directly into the SVG file. A PNG carries the drawing
//! without words (its colours are those the SVG's legend names).

use std::fmt::Write;
use std::path::Path;

use plotters::coord::Shift;
use plotters::prelude::*;

use crate::error::CliError;
use crate::report;

/// Image size in pixels.
const WIDTH: u32 = 800;
/// Image size in pixels.
const HEIGHT: u32 = 600;
/// Margins around the plotting area, in pixels: room for the tick labels, the axis labels
/// and the title of the SVG.
const LEFT: u32 = 90;
const RIGHT: u32 = 30;
const TOP: u32 = 50;
const BOTTOM: u32 = 60;

/// The file formats written.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum PlotFormat {
    /// Scalable vector graphics, with text.
    Svg,
    /// A PNG bitmap, without text.
    Png,
}

/// The format named by a path's extension (`.svg` or `.png`, any case).
pub fn format_of(path: &Path) -> Result<PlotFormat, CliError> {
    let extension = path
        .extension()
        .and_then(|e| e.to_str())
        .map(str::to_ascii_lowercase);
    match extension.as_deref() {
        Some("svg") => Ok(PlotFormat::Svg),
        Some("png") => Ok(PlotFormat::Png),
        _ => Err(CliError::usage(format!(
            "--plot `{}`: the file name must end in .svg or .png",
            path.display()
        ))),
    }
}

/// A line through points; a non-finite coordinate breaks it, and a point with no finite
/// neighbour is drawn as a small square.
#[derive(Clone, Debug, PartialEq)]
pub struct Series {
    /// The legend's words.
    pub label: String,
    /// The points, in data coordinates.
    pub points: Vec<(f64, f64)>,
    /// Red, green, blue.
    pub color: [u8; 3],
    /// Dashed rather than solid.
    pub dashed: bool,
}

/// A circle in data coordinates (a horizon seen from above).
#[derive(Clone, Debug, PartialEq)]
pub struct Ring {
    /// The legend's words.
    pub label: String,
    /// Its centre.
    pub center: (f64, f64),
    /// Its radius, in data units (drawn true to scale only on a figure with equal aspect).
    pub radius: f64,
    /// Red, green, blue.
    pub color: [u8; 3],
    /// Filled (else an outline).
    pub filled: bool,
}

/// One figure: lines and circles on a frame with ticks.
#[derive(Clone, Debug, PartialEq)]
pub struct Figure {
    /// The title.
    pub title: String,
    /// The horizontal axis's label.
    pub x_label: String,
    /// The vertical axis's label.
    pub y_label: String,
    /// The lines.
    pub series: Vec<Series>,
    /// The circles, drawn beneath the lines.
    pub circles: Vec<Ring>,
    /// One data unit is as long on both axes (for orbits seen from above).
    pub equal_aspect: bool,
}

/// Writes `figure` to `path` in `format`.
pub fn write(figure: &Figure, path: &Path, format: PlotFormat) -> Result<(), CliError> {
    let failed = |reason: String| CliError::Output {
        path: path.to_path_buf(),
        reason,
    };
    let bytes = match format {
        PlotFormat::Svg => svg(figure).map_err(failed)?.into_bytes(),
        PlotFormat::Png => png(figure).map_err(failed)?,
    };
    std::fs::write(path, bytes).map_err(|e| failed(e.to_string()))
}

/// The figure as an SVG document.
pub fn svg(figure: &Figure) -> Result<String, String> {
    let frame = Frame::new(figure);
    let mut text = String::new();
    {
        let root = SVGBackend::with_string(&mut text, (WIDTH, HEIGHT)).into_drawing_area();
        draw(&root, figure, &frame, false).map_err(|e| e.to_string())?;
        root.present().map_err(|e| e.to_string())?;
    }
    let words = frame.words(figure);
    match text.rfind("</svg>") {
        Some(at) => text.insert_str(at, &words),
        None => return Err("the SVG backend wrote no closing tag".to_string()),
    }
    Ok(text)
}

/// The figure as PNG bytes.
pub fn png(figure: &Figure) -> Result<Vec<u8>, String> {
    use image::ImageEncoder;
    let frame = Frame::new(figure);
    let mut pixels = vec![0u8; (WIDTH * HEIGHT * 3) as usize];
    {
        let root = BitMapBackend::with_buffer(&mut pixels, (WIDTH, HEIGHT)).into_drawing_area();
        draw(&root, figure, &frame, true).map_err(|e| e.to_string())?;
        root.present().map_err(|e| e.to_string())?;
    }
    let mut bytes = Vec::new();
    image::codecs::png::PngEncoder::new(&mut bytes)
        .write_image(&pixels, WIDTH, HEIGHT, image::ExtendedColorType::Rgb8)
        .map_err(|e| e.to_string())?;
    Ok(bytes)
}

/// The data ranges and ticks of a figure, and where the plotting area sits in pixels.
#[derive(Clone, Debug)]
struct Frame {
    x: (f64, f64),
    y: (f64, f64),
    x_ticks: Vec<f64>,
    y_ticks: Vec<f64>,
}

impl Frame {
    fn new(figure: &Figure) -> Frame {
        let mut xs = Vec::new();
        let mut ys = Vec::new();
        for s in &figure.series {
            for &(x, y) in &s.points {
                if x.is_finite() && y.is_finite() {
                    xs.push(x);
                    ys.push(y);
                }
            }
        }
        for c in &figure.circles {
            if c.radius.is_finite() && c.center.0.is_finite() && c.center.1.is_finite() {
                xs.extend([c.center.0 - c.radius, c.center.0 + c.radius]);
                ys.extend([c.center.1 - c.radius, c.center.1 + c.radius]);
            }
        }
        let mut x = padded(&xs);
        let mut y = padded(&ys);
        if figure.equal_aspect {
            let (w, h) = (
                (WIDTH - LEFT - RIGHT) as f64,
                (HEIGHT - TOP - BOTTOM) as f64,
            );
            let per_pixel = ((x.1 - x.0) / w).max((y.1 - y.0) / h);
            let (cx, cy) = (0.5 * (x.0 + x.1), 0.5 * (y.0 + y.1));
            x = (cx - 0.5 * per_pixel * w, cx + 0.5 * per_pixel * w);
            y = (cy - 0.5 * per_pixel * h, cy + 0.5 * per_pixel * h);
        }
        Frame {
            x,
            y,
            x_ticks: ticks(x),
            y_ticks: ticks(y),
        }
    }

    /// The pixel of a data point.
    fn pixel(&self, (x, y): (f64, f64)) -> (f64, f64) {
        let (w, h) = (
            (WIDTH - LEFT - RIGHT) as f64,
            (HEIGHT - TOP - BOTTOM) as f64,
        );
        (
            LEFT as f64 + (x - self.x.0) / (self.x.1 - self.x.0) * w,
            (HEIGHT - BOTTOM) as f64 - (y - self.y.0) / (self.y.1 - self.y.0) * h,
        )
    }

    /// Pixels per data unit along x.
    fn scale(&self) -> f64 {
        (WIDTH - LEFT - RIGHT) as f64 / (self.x.1 - self.x.0)
    }

    /// The SVG text elements: title, axis labels, tick labels and legend.
    fn words(&self, figure: &Figure) -> String {
        let mut out = String::new();
        let mut text = |x: f64, y: f64, anchor: &str, size: u32, words: &str, extra: &str| {
            let _ = writeln!(
                out,
                r#"<text x="{x:.1}" y="{y:.1}" text-anchor="{anchor}" font-family="sans-serif" font-size="{size}" fill="black"{extra}>{}</text>"#,
                escape(words)
            );
        };
        let (left, right) = (LEFT as f64, (WIDTH - RIGHT) as f64);
        let (top, bottom) = (TOP as f64, (HEIGHT - BOTTOM) as f64);
        text(
            0.5 * (left + right),
            0.6 * top,
            "middle",
            16,
            &figure.title,
            "",
        );
        text(
            0.5 * (left + right),
            HEIGHT as f64 - 15.0,
            "middle",
            14,
            &figure.x_label,
            "",
        );
        let (ly, lx) = (0.5 * (top + bottom), 22.0);
        text(
            lx,
            ly,
            "middle",
            14,
            &figure.y_label,
            &format!(r#" transform="rotate(-90 {lx:.1} {ly:.1})""#),
        );
        for &t in &self.x_ticks {
            let (px, _) = self.pixel((t, self.y.0));
            text(px, bottom + 18.0, "middle", 12, &report::number(t, 6), "");
        }
        for &t in &self.y_ticks {
            let (_, py) = self.pixel((self.x.0, t));
            text(left - 8.0, py + 4.0, "end", 12, &report::number(t, 6), "");
        }
        // The legend: a swatch and the words of each line and circle, top right.
        let mut row = 0.0;
        let entries = figure
            .series
            .iter()
            .map(|s| (&s.label, s.color, s.dashed))
            .chain(figure.circles.iter().map(|c| (&c.label, c.color, false)));
        let mut swatches = String::new();
        let mut legend: Vec<(f64, f64, String)> = Vec::new();
        for (label, [r, g, b], dashed) in entries {
            if label.is_empty() {
                continue;
            }
            let y = top + 18.0 + 18.0 * row;
            let dash = if dashed {
                r#" stroke-dasharray="6 4""#
            } else {
                ""
            };
            let _ = writeln!(
                swatches,
                r#"<line x1="{:.1}" y1="{y:.1}" x2="{:.1}" y2="{y:.1}" stroke="rgb({r},{g},{b})" stroke-width="2"{dash}/>"#,
                right - 210.0,
                right - 180.0
            );
            legend.push((right - 172.0, y + 4.0, label.clone()));
            row += 1.0;
        }
        let mut labels = String::new();
        for (x, y, words) in legend {
            let _ = writeln!(
                labels,
                r#"<text x="{x:.1}" y="{y:.1}" text-anchor="start" font-family="sans-serif" font-size="12" fill="black">{}</text>"#,
                escape(&words)
            );
        }
        if row > 0.0 {
            // A backing so that the legend stays legible over the lines.
            let _ = writeln!(
                out,
                r#"<rect x="{:.1}" y="{:.1}" width="200" height="{:.1}" fill="white" fill-opacity="0.85" stroke="rgb(160,160,160)"/>"#,
                right - 216.0,
                top + 6.0,
                18.0 * row + 6.0
            );
        }
        out.push_str(&swatches);
        out.push_str(&labels);
        out
    }
}

/// The range of `values` widened by 5% on each side (a unit range around a single value,
/// `0..1` for none).
fn padded(values: &[f64]) -> (f64, f64) {
    let low = values.iter().copied().fold(f64::INFINITY, f64::min);
    let high = values.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if !(low.is_finite() && high.is_finite()) {
        return (0.0, 1.0);
    }
    let span = high - low;
    if span <= 1e-12 * low.abs().max(high.abs()) || span == 0.0 {
        let half = if low == 0.0 { 1.0 } else { 0.1 * low.abs() };
        return (low - half, high + half);
    }
    (low - 0.05 * span, high + 0.05 * span)
}

/// Round tick values inside `(low, high)`: steps of 1, 2 or 5 times a power of ten, about
/// five to ten of them (common practice).
fn ticks((low, high): (f64, f64)) -> Vec<f64> {
    let span = high - low;
    if !(span > 0.0 && span.is_finite()) {
        return Vec::new();
    }
    let raw = span / 6.0;
    let power = 10f64.powf(raw.log10().floor());
    let step = [1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|m| m * power)
        .find(|&s| s >= raw)
        .unwrap_or(10.0 * power);
    let first = (low / step).ceil() as i64;
    let last = (high / step).floor() as i64;
    (first..=last).map(|k| k as f64 * step).collect()
}

/// Escapes the characters XML reserves.
fn escape(text: &str) -> String {
    text.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

type DrawResult<DB> = Result<(), DrawingAreaErrorKind<<DB as DrawingBackend>::ErrorType>>;

/// Draws everything but the words; with `numbers`, also the tick labels in segment digits
/// (for a bitmap, which gets no SVG text).
fn draw<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    figure: &Figure,
    frame: &Frame,
    numbers: bool,
) -> DrawResult<DB> {
    root.fill(&WHITE)?;
    let px = |p: (f64, f64)| {
        let (x, y) = frame.pixel(p);
        (x.round() as i32, y.round() as i32)
    };
    let (left, right) = (LEFT as i32, (WIDTH - RIGHT) as i32);
    let (top, bottom) = (TOP as i32, (HEIGHT - BOTTOM) as i32);
    let grid = RGBColor(225, 225, 225);
    for &t in &frame.x_ticks {
        let (x, _) = px((t, frame.y.0));
        root.draw(&PathElement::new(vec![(x, top), (x, bottom)], grid))?;
        root.draw(&PathElement::new(vec![(x, bottom), (x, bottom + 6)], BLACK))?;
    }
    for &t in &frame.y_ticks {
        let (_, y) = px((frame.x.0, t));
        root.draw(&PathElement::new(vec![(left, y), (right, y)], grid))?;
        root.draw(&PathElement::new(vec![(left - 6, y), (left, y)], BLACK))?;
    }
    for c in &figure.circles {
        if !(c.radius > 0.0 && c.radius.is_finite()) {
            continue;
        }
        let [r, g, b] = c.color;
        let color = RGBColor(r, g, b);
        let size = (c.radius * frame.scale()).round().max(1.0) as i32;
        let style = if c.filled {
            color.mix(0.85).filled()
        } else {
            color.stroke_width(2)
        };
        root.draw(&Circle::new(px(c.center), size, style))?;
    }
    for s in &figure.series {
        let [r, g, b] = s.color;
        let style = RGBColor(r, g, b).stroke_width(2);
        for run in runs(&s.points) {
            let pixels = thin(run.iter().map(|&p| px(p)));
            if pixels.len() == 1 {
                let (x, y) = pixels[0];
                root.draw(&Rectangle::new(
                    [(x - 3, y - 3), (x + 3, y + 3)],
                    RGBColor(r, g, b).filled(),
                ))?;
            } else if s.dashed {
                root.draw(&plotters::element::DashedPathElement::new(
                    pixels, 8, 5, style,
                ))?;
            } else {
                root.draw(&PathElement::new(pixels, style))?;
            }
        }
    }
    root.draw(&Rectangle::new([(left, top), (right, bottom)], BLACK))?;
    if numbers {
        for &t in &frame.x_ticks {
            let (x, _) = px((t, frame.y.0));
            let label = report::number(t, 6);
            let width = segment_width(&label);
            segment_text(root, &label, (x - width / 2, bottom + 12))?;
        }
        for &t in &frame.y_ticks {
            let (_, y) = px((frame.x.0, t));
            let label = report::number(t, 6);
            let width = segment_width(&label);
            segment_text(root, &label, (left - 12 - width, y - GLYPH.1 / 2))?;
        }
    }
    Ok(())
}

/// Width and height of a segment digit, and the gap after it, in pixels.
const GLYPH: (i32, i32, i32) = (6, 10, 3);

/// The lit segments of a character in a seven-segment display (a top, b top right,
/// c bottom right, d bottom, e bottom left, f top left, g middle; common practice), `None`
/// for a character drawn otherwise or not at all.
fn segments(c: char) -> Option<&'static str> {
    Some(match c {
        '0' => "abcdef",
        '1' => "bc",
        '2' => "abdeg",
        '3' => "abcdg",
        '4' => "bcfg",
        '5' => "acdfg",
        '6' => "acdefg",
        '7' => "abc",
        '8' => "abcdefg",
        '9' => "abcdfg",
        '-' => "g",
        'e' => "abdefg",
        _ => return None,
    })
}

/// How wide [`segment_text`] draws `text`.
fn segment_width(text: &str) -> i32 {
    text.chars()
        .map(|c| if c == '.' { 3 } else { GLYPH.0 + GLYPH.2 })
        .sum::<i32>()
        - GLYPH.2
}

/// Draws `text` (digits, `-`, `.`, `e`) with its top left corner at `at`.
fn segment_text<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    text: &str,
    at: (i32, i32),
) -> DrawResult<DB> {
    let (w, h, gap) = GLYPH;
    let mut x = at.0;
    for c in text.chars() {
        if c == '.' {
            root.draw(&Rectangle::new(
                [(x, at.1 + h - 1), (x + 1, at.1 + h)],
                BLACK.filled(),
            ))?;
            x += 3;
            continue;
        }
        let y = at.1;
        for segment in segments(c).unwrap_or("").chars() {
            let ends = match segment {
                'a' => [(x, y), (x + w, y)],
                'b' => [(x + w, y), (x + w, y + h / 2)],
                'c' => [(x + w, y + h / 2), (x + w, y + h)],
                'd' => [(x, y + h), (x + w, y + h)],
                'e' => [(x, y + h / 2), (x, y + h)],
                'f' => [(x, y), (x, y + h / 2)],
                _ => [(x, y + h / 2), (x + w, y + h / 2)],
            };
            root.draw(&PathElement::new(ends.to_vec(), BLACK))?;
        }
        x += w + gap;
    }
    Ok(())
}

/// The runs of consecutive finite points.
fn runs(points: &[(f64, f64)]) -> Vec<&[(f64, f64)]> {
    points
        .split(|(x, y)| !(x.is_finite() && y.is_finite()))
        .filter(|run| !run.is_empty())
        .collect()
}

/// Pixels with near repeats dropped (a path of 10⁶ steps needs no more points than the
/// image has pixels along it), the last one always kept.
fn thin(pixels: impl Iterator<Item = (i32, i32)>) -> Vec<(i32, i32)> {
    let mut kept: Vec<(i32, i32)> = Vec::new();
    let mut last_seen = None;
    for p in pixels {
        last_seen = Some(p);
        if kept.last() != Some(&p) {
            kept.push(p);
        }
    }
    if let Some(p) = last_seen {
        if kept.last() != Some(&p) {
            kept.push(p);
        }
    }
    kept
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ticks_are_round_and_inside() {
        let t = ticks((0.13, 2.9));
        assert_eq!(t, vec![0.5, 1.0, 1.5, 2.0, 2.5]);
        assert!(ticks((1.0, 1.0)).is_empty());
        let t = ticks((-12.0, 12.0));
        assert!(
            t.contains(&0.0) && t.iter().all(|v| v.abs() <= 12.0),
            "{t:?}"
        );
    }

    #[test]
    fn formats_come_from_the_extension() {
        assert_eq!(format_of(Path::new("a/b.SVG")).ok(), Some(PlotFormat::Svg));
        assert_eq!(format_of(Path::new("b.png")).ok(), Some(PlotFormat::Png));
        assert!(format_of(Path::new("b.jpg")).is_err());
        assert!(format_of(Path::new("noext")).is_err());
    }

    #[test]
    fn svg_carries_words_escaped_and_circles_only_when_asked() {
        let mut figure = Figure {
            title: "a < b & c".to_string(),
            x_label: "x".to_string(),
            y_label: "y".to_string(),
            series: vec![Series {
                label: "line".to_string(),
                points: vec![(0.0, 0.0), (1.0, 1.0), (f64::NAN, 0.0), (2.0, 0.5)],
                color: [0, 0, 255],
                dashed: false,
            }],
            circles: Vec::new(),
            equal_aspect: true,
        };
        let text = svg(&figure).expect("draws");
        assert!(text.contains("a &lt; b &amp; c"), "{text}");
        assert!(!text.contains("<circle"));
        assert!(text.trim_end().ends_with("</svg>"));
        figure.circles.push(Ring {
            label: "horizon".to_string(),
            center: (0.0, 0.0),
            radius: 0.5,
            color: [0, 0, 0],
            filled: true,
        });
        assert!(svg(&figure).expect("draws").contains("<circle"));
        let bytes = png(&figure).expect("draws");
        assert_eq!(&bytes[1..4], b"PNG");
    }
}
