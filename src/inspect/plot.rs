//! `inspect --plot FILE.svg`: the channel's spectrum as an SVG picture, drawn with the
//! `plotters` SVG backend. Labels are SVG `<text>` (no font files are read).
//!
//! The x axis is logarithmic frequency; the y axis is the chain's attenuation in dB,
//! growing downwards (so the curve reads like a low-pass response). The picture shows
//! the band, the required rejection, the least attenuated folding frequency of every rate
//! change, the images of the band around the multiples of every rate change's rate, a
//! delta-sigma converter's modulator images and its worst one, and the sensor resonance
//! and disturbance tones. Everything drawn is worked out by
//! [`super::plot_data`]; this module only lays it out.

use crate::words::{ATTENUATION_CEILING_DB, format_hz};
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use std::io::Write;
use std::path::Path;

/// A curve of attenuation against frequency.
#[derive(Clone, Debug)]
pub struct Curve {
    /// Legend text.
    pub label: String,
    /// (Hz, dB) in rising frequency; the dB may be infinite (a null).
    pub points: Vec<(f64, f64)>,
    /// The whole chain including decimation filters (drawn dashed).
    pub full_chain: bool,
}

/// What a marker stands for.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum MarkerKind {
    /// fs − B of a rate change.
    Fold,
    /// The sensor resonance (at its net attenuation).
    Resonance,
    /// A disturbance tone.
    Disturbance,
    /// The worst modulator image of a delta-sigma converter, at the analog chain's
    /// attenuation there.
    Modulator,
}

/// A labelled frequency.
#[derive(Clone, Debug)]
pub struct Marker {
    /// What it is.
    pub kind: MarkerKind,
    /// Where, Hz.
    pub frequency_hz: f64,
    /// The attenuation to put the dot at, dB (net for a resonance).
    pub attenuation_db: f64,
    /// Its label.
    pub label: String,
    /// Its verdict, where there is one.
    pub pass: Option<bool>,
    /// Its own requirement, drawn as a short bar at the marker (a disturbance needs the
    /// required rejection plus its level).
    pub required_db: Option<f64>,
}

/// An image of the band: `[k·fs − B, k·fs + B]`.
#[derive(Clone, Debug)]
pub struct Image {
    /// Low edge, Hz.
    pub low_hz: f64,
    /// High edge, Hz.
    pub high_hz: f64,
    /// "fs ± B", "2fs ± B" …, or empty for an image drawn without a label.
    pub label: String,
    /// The rate change whose images these are (0 the ADC, k stage k), or `None` for an
    /// image of a delta-sigma modulator's rate.
    pub stage: Option<usize>,
}

/// Half the output rate of a rate change: everything above it folds.
#[derive(Clone, Debug)]
pub struct HalfRate {
    /// The rate change (0 the ADC, k stage k).
    pub stage: usize,
    /// fs/2, Hz.
    pub frequency_hz: f64,
    /// Legend text for the stage ("ADC at 51.2 kHz", "stage 1 at 6.4 kHz").
    pub label: String,
}

/// The group panel: each member's phase over the common band (analog phase less the
/// digital delays), drawn below the spectrum when the channel is in a group.
#[derive(Clone, Debug)]
pub struct PhasePanel {
    /// Panel title ("phase in group `modes` over the common 400 Hz band").
    pub title: String,
    /// The common band, Hz (the panel's right edge).
    pub band_hz: f64,
    /// (legend, points (Hz, deg)); the first is the inspected channel.
    pub curves: Vec<(String, Vec<(f64, f64)>)>,
}

/// Everything the plot shows.
#[derive(Clone, Debug)]
pub struct PlotData {
    /// "rig / channel".
    pub title: String,
    /// Rates, band and requirement.
    pub subtitle: String,
    /// Left edge of the frequency axis, Hz.
    pub f_min: f64,
    /// Right edge, Hz.
    pub f_max: f64,
    /// The band B, Hz.
    pub band_hz: f64,
    /// Legend text of the band.
    pub band_label: String,
    /// The required rejection, dB.
    pub required_db: f64,
    /// Its legend text.
    pub required_label: String,
    /// The chain's curves.
    pub curves: Vec<Curve>,
    /// Fold, resonance and disturbance markers inside the range.
    pub markers: Vec<Marker>,
    /// Images of the band around multiples of every rate change's rate (and of the
    /// modulator rate).
    pub images: Vec<Image>,
    /// fs/2 of every rate change.
    pub half_rates: Vec<HalfRate>,
    /// The group phase panel, if the channel is in a group.
    pub phase: Option<PhasePanel>,
    /// Things that could not be drawn (a marker outside the range).
    pub notes: Vec<String>,
}

/// Points spaced evenly in log frequency from `lo` to `hi`, both included.
pub fn log_points(lo: f64, hi: f64, n: usize) -> Vec<f64> {
    let (a, b) = (lo.ln(), hi.ln());
    (0..n)
        .map(|i| (a + (b - a) * i as f64 / (n - 1) as f64).exp())
        .collect()
}

/// Refuse an output that is not an `.svg` file name, or that is a directory.
pub fn check_target(p: &Path) -> Result<(), String> {
    let is_svg = p
        .extension()
        .and_then(|e| e.to_str())
        .is_some_and(|e| e.eq_ignore_ascii_case("svg"));
    if !is_svg {
        return Err(format!(
            "{}: the plot is written as SVG; name a file ending in .svg",
            p.display()
        ));
    }
    if p.is_dir() {
        return Err(format!("{}: is a directory", p.display()));
    }
    Ok(())
}

/// Write `svg` to `path` atomically: into a new temporary file in the same directory,
/// then renamed over `path`. Refuses to write over any file the run read (`read`).
pub fn write(path: &Path, svg: &str, read: &[&Path]) -> Result<(), String> {
    let canonical = |p: &Path| std::fs::canonicalize(p).ok();
    if let Some(target) = canonical(path)
        && read.iter().any(|r| canonical(r).as_ref() == Some(&target))
    {
        return Err(format!(
            "{}: refusing to write the plot over a file foldcheck reads",
            path.display()
        ));
    }
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => std::path::PathBuf::from("."),
    };
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "plot.svg".to_string());
    let fail = |e: std::io::Error| format!("{}: cannot write the plot: {e}", path.display());
    let mut n = 0u32;
    let (tmp, mut file) = loop {
        let tmp = dir.join(format!(".{name}.{}.{n}.tmp", std::process::id()));
        match std::fs::OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&tmp)
        {
            Ok(f) => break (tmp, f),
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists && n < 100 => n += 1,
            Err(e) => return Err(fail(e)),
        }
    };
    let result = file
        .write_all(svg.as_bytes())
        .and_then(|_| file.sync_all())
        .and_then(|_| {
            drop(file);
            std::fs::rename(&tmp, path)
        });
    if let Err(e) = result {
        let _ = std::fs::remove_file(&tmp);
        return Err(fail(e));
    }
    Ok(())
}

const WIDTH: u32 = 1200;
const PLOT_HEIGHT: u32 = 470;
const Y_LABEL_AREA: u32 = 70;
const X_LABEL_AREA: u32 = 50;
const MARGIN_LEFT: u32 = 10;
const MARGIN_RIGHT: u32 = 30;
const LABEL_FONT: f64 = 15.0;
const LABEL_ROW: i32 = 19;
const HEADER: i32 = 74;
const FONT: &str = "sans-serif";

/// A rough width of text in pixels, on the generous side (SVG viewers measure the real
/// one; this only keeps labels apart). `size` is the plotters size, which the SVG
/// backend writes as a font size of `size / 1.24`; sans-serif glyphs average about 0.6 em.
fn text_width(s: &str, size: f64) -> i32 {
    (s.chars().count() as f64 * size / 1.24 * 0.62).ceil() as i32
}

/// A label placed above the plot: its leader's x, its text span, its row (0 nearest to
/// the plot) and whether its text ends at the leader (right-anchored) or starts there.
#[derive(Clone, Copy, Debug)]
struct Placed {
    x: i32,
    left: i32,
    right: i32,
    row: usize,
    right_anchored: bool,
}

const MAX_ROWS: usize = 12;
const GAP: i32 = 8;

/// Whether label `a` and label `b` can sit where they are: no overlap in one row, and no
/// leader line (which runs from a label down to the plot) through a lower label's text.
fn compatible(a: &Placed, b: &Placed) -> bool {
    // The text of a label starts 4 px from its own leader, so a leader at (nearly) the
    // same x passes beside it.
    let clear = |x: i32, p: &Placed| {
        let (l, r) = if p.right_anchored {
            (p.left, p.x - 4)
        } else {
            (p.x + 4, p.right)
        };
        x < l - 2 || x > r + 2
    };
    match a.row.cmp(&b.row) {
        std::cmp::Ordering::Equal => a.right + GAP <= b.left || b.right + GAP <= a.left,
        std::cmp::Ordering::Greater => clear(a.x, b),
        std::cmp::Ordering::Less => clear(b.x, a),
    }
}

fn span(x: i32, w: i32, right_anchored: bool) -> (i32, i32) {
    if right_anchored {
        (x - 4 - w, x)
    } else {
        (x, x + 4 + w)
    }
}

/// Place labels `(x, width)` in as few rows above the plot as possible so that no two
/// overlap and no leader line runs through a label (a small depth-first search; the
/// greedy fallback keeps within a budget for crowded plots).
fn place_labels(items: &[(i32, i32)], lo: i32, hi: i32) -> Vec<Placed> {
    let mut order: Vec<usize> = (0..items.len()).collect();
    order.sort_by_key(|&i| std::cmp::Reverse(items[i].0));
    let options = |i: usize, rows: usize| -> Vec<Placed> {
        let (x, w) = items[i];
        let mut v = Vec::new();
        for row in 0..rows {
            for right_anchored in [false, true] {
                let (left, right) = span(x, w, right_anchored);
                if left >= lo && right <= hi {
                    v.push(Placed {
                        x,
                        left,
                        right,
                        row,
                        right_anchored,
                    });
                }
            }
        }
        if v.is_empty() {
            // Wider than the room on either side: right-anchor it and clip at the edge.
            let (left, right) = span(x, w, true);
            v.push(Placed {
                x,
                left: left.max(lo),
                right,
                row: 0,
                right_anchored: true,
            });
        }
        v
    };
    fn search(
        k: usize,
        order: &[usize],
        placed: &mut Vec<(usize, Placed)>,
        options: &dyn Fn(usize) -> Vec<Placed>,
        budget: &mut u32,
    ) -> bool {
        if k == order.len() {
            return true;
        }
        for p in options(order[k]) {
            if *budget == 0 {
                return false;
            }
            *budget -= 1;
            if placed.iter().all(|(_, q)| compatible(&p, q)) {
                placed.push((order[k], p));
                if search(k + 1, order, placed, options, budget) {
                    return true;
                }
                placed.pop();
            }
        }
        false
    }
    let mut budget = 200_000;
    for rows in 1..=MAX_ROWS {
        let mut placed = Vec::new();
        if search(0, &order, &mut placed, &|i| options(i, rows), &mut budget) {
            placed.sort_by_key(|(i, _)| *i);
            return placed.into_iter().map(|(_, p)| p).collect();
        }
        if budget == 0 {
            break;
        }
    }
    // Crowded: first row that fits each label, right to left.
    let mut placed: Vec<(usize, Placed)> = Vec::new();
    for &i in &order {
        let all = options(i, MAX_ROWS);
        let p = all
            .iter()
            .find(|p| placed.iter().all(|(_, q)| compatible(p, q)))
            .copied()
            .unwrap_or_else(|| Placed {
                row: MAX_ROWS - 1,
                ..all[0]
            });
        placed.push((i, p));
    }
    placed.sort_by_key(|(i, _)| *i);
    placed.into_iter().map(|(_, p)| p).collect()
}

fn marker_colour(m: &Marker) -> RGBColor {
    match (m.kind, m.pass) {
        (_, Some(false)) => RGBColor(200, 30, 30),
        (MarkerKind::Fold, _) => RGBColor(20, 130, 60),
        (MarkerKind::Resonance, _) => RGBColor(170, 90, 0),
        (MarkerKind::Disturbance, _) => RGBColor(120, 50, 160),
        (MarkerKind::Modulator, _) => MODULATOR_MARK,
    }
}

const CURVE: RGBColor = RGBColor(20, 80, 200);
const FULL_CURVE: RGBColor = RGBColor(30, 30, 30);
const BAND_FILL: RGBColor = RGBColor(200, 235, 200);
const IMAGE_FILL: RGBColor = RGBColor(255, 222, 190);
/// One colour per rate change (the ADC first), cycled for very long chains.
const STAGE_COLOURS: [RGBColor; 5] = [
    RGBColor(230, 140, 60),
    RGBColor(70, 120, 210),
    RGBColor(160, 80, 190),
    RGBColor(20, 150, 150),
    RGBColor(200, 70, 110),
];
/// Modulator images.
const MODULATOR_COLOUR: RGBColor = RGBColor(110, 110, 110);
/// The modulator marker (darker than its images, so it reads on them).
const MODULATOR_MARK: RGBColor = RGBColor(60, 60, 60);

/// The colour of a rate change's images and fs/2 line (`None`: modulator images).
pub fn stage_colour(stage: Option<usize>) -> RGBColor {
    match stage {
        Some(k) => STAGE_COLOURS[k % STAGE_COLOURS.len()],
        None => MODULATOR_COLOUR,
    }
}

/// The hex spelling of a colour as the SVG backend writes it (`#E68C3C`), for tests.
pub fn colour_hex(c: RGBColor) -> String {
    format!("#{:02X}{:02X}{:02X}", c.0, c.1, c.2)
}
const IMAGE_TEXT: RGBColor = RGBColor(190, 100, 30);
const REQUIRED: RGBColor = RGBColor(200, 30, 30);

/// Draw the plot as SVG text.
pub fn render(d: &PlotData) -> Result<String, String> {
    let mut svg = String::new();
    draw(d, &mut svg).map_err(|e| format!("cannot draw the plot: {e}"))?;
    Ok(svg)
}

type DrawResult = Result<(), Box<dyn std::error::Error>>;

fn draw(d: &PlotData, svg: &mut String) -> DrawResult {
    // The y range: attenuation grows downwards; gains (a resonance above its
    // attenuation) show above 0 dB.
    let mut deepest = d.required_db + 30.0;
    for m in &d.markers {
        if m.attenuation_db.is_finite() && m.attenuation_db < ATTENUATION_CEILING_DB {
            deepest = deepest.max(m.attenuation_db + 20.0);
        }
        if let Some(r) = m.required_db {
            deepest = deepest.max(r + 20.0);
        }
    }
    let y_max = ((deepest / 20.0).ceil() * 20.0).clamp(60.0, ATTENUATION_CEILING_DB + 20.0);
    let highest_gain = d
        .markers
        .iter()
        .map(|m| -m.attenuation_db)
        .fold(0.0_f64, f64::max);
    let y_top = ((highest_gain + 5.0) / 10.0).ceil() * 10.0;
    let clamp = |db: f64| -> f64 {
        if db.is_nan() {
            0.0
        } else {
            -db.clamp(-y_top, y_max)
        }
    };

    // Label rows above the plot, laid out on the analytic log mapping the chart uses.
    let plot_left = (MARGIN_LEFT + Y_LABEL_AREA) as i32;
    let plot_right = (WIDTH - MARGIN_RIGHT) as i32;
    let (ln_lo, ln_hi) = (d.f_min.ln(), d.f_max.ln());
    let px = |f: f64| -> i32 {
        plot_left
            + ((f.ln() - ln_lo) / (ln_hi - ln_lo) * f64::from(plot_right - plot_left)).round()
                as i32
    };
    struct Tag {
        f: f64,
        x: i32,
        text: String,
        colour: RGBColor,
    }
    let mut tags: Vec<Tag> = d
        .markers
        .iter()
        .map(|m| Tag {
            f: m.frequency_hz,
            x: px(m.frequency_hz),
            text: m.label.clone(),
            colour: marker_colour(m),
        })
        .collect();
    tags.extend(d.images.iter().filter(|im| !im.label.is_empty()).map(|im| {
        let centre = ((im.low_hz.ln() + im.high_hz.ln()) / 2.0).exp();
        Tag {
            f: centre,
            x: px(centre),
            text: im.label.clone(),
            colour: if d.half_rates.len() > 1 || im.stage.is_none() {
                stage_colour(im.stage)
            } else {
                IMAGE_TEXT
            },
        }
    }));
    let sizes: Vec<(i32, i32)> = tags
        .iter()
        .map(|t| (t.x, text_width(&t.text, LABEL_FONT)))
        .collect();
    let places = place_labels(&sizes, MARGIN_LEFT as i32, WIDTH as i32 - 4);
    let n_rows = places.iter().map(|p| p.row + 1).max().unwrap_or(0) as i32;
    let strip = n_rows * LABEL_ROW + 10;
    let plot_top = HEADER + strip;

    // Legend entries, two columns.
    let mut legend: Vec<(Swatch, String)> = Vec::new();
    for c in &d.curves {
        legend.push((
            if c.full_chain {
                Swatch::Dashed(FULL_CURVE)
            } else {
                Swatch::Line(CURVE)
            },
            c.label.clone(),
        ));
    }
    legend.push((Swatch::Fill(BAND_FILL), d.band_label.clone()));
    for h in &d.half_rates {
        legend.push((
            Swatch::Fill(stage_colour(Some(h.stage))),
            format!(
                "{}: images k·fs ± B fold into the band; solid line fs/2",
                h.label
            ),
        ));
    }
    if d.half_rates.is_empty() && !d.images.is_empty() {
        legend.push((
            Swatch::Fill(IMAGE_FILL),
            "images k·fs ± B of the band: energy there folds into it at the ADC".to_string(),
        ));
    }
    if d.images.iter().any(|im| im.stage.is_none()) {
        legend.push((
            Swatch::Fill(MODULATOR_COLOUR),
            "modulator images k·f_mod ± B: only the analog chain protects there".to_string(),
        ));
    }
    legend.push((Swatch::Dashed(REQUIRED), d.required_label.clone()));
    if d.markers.iter().any(|m| m.kind == MarkerKind::Fold) {
        legend.push((
            Swatch::Dot(RGBColor(20, 130, 60)),
            "worst folding point of each rate change (red: too little attenuation)".to_string(),
        ));
    }
    if d.markers.iter().any(|m| m.kind == MarkerKind::Modulator) {
        legend.push((
            Swatch::Square(MODULATOR_MARK),
            "worst modulator image: what the analog chain alone gives there (red: too little)"
                .to_string(),
        ));
    }
    if d.markers.iter().any(|m| m.kind == MarkerKind::Resonance) {
        legend.push((
            Swatch::Triangle(RGBColor(170, 90, 0)),
            "sensor resonance, at its net attenuation (the chain's less its gain)".to_string(),
        ));
    }
    if d.markers.iter().any(|m| m.kind == MarkerKind::Disturbance) {
        legend.push((
            Swatch::Cross(RGBColor(120, 50, 160)),
            "disturbance tone (red: folds into the band with too little attenuation)".to_string(),
        ));
    }
    let legend_rows = legend.len().div_ceil(2) as i32;
    let legend_row = 22;
    let legend_top = plot_top + PLOT_HEIGHT as i32 + X_LABEL_AREA as i32 + 8;
    let notes_end = legend_top + legend_rows * legend_row + 10 + d.notes.len() as i32 * 20 + 6;
    let phase_top = notes_end + 10;
    let height = match &d.phase {
        Some(p) => phase_top + PHASE_HEIGHT as i32 + 30 + p.curves.len() as i32 * 22 + 10,
        None => notes_end,
    };

    let root = SVGBackend::with_string(svg, (WIDTH, height as u32)).into_drawing_area();
    root.fill(&WHITE)?;
    let title_font = (FONT, 26.0).into_font().style(FontStyle::Bold);
    root.draw(&Text::new(
        d.title.clone(),
        (WIDTH as i32 / 2, 12),
        title_font
            .color(&BLACK)
            .pos(Pos::new(HPos::Center, VPos::Top)),
    ))?;
    root.draw(&Text::new(
        d.subtitle.clone(),
        (WIDTH as i32 / 2, 46),
        (FONT, 18.0)
            .into_font()
            .color(&RGBColor(60, 60, 60))
            .pos(Pos::new(HPos::Center, VPos::Top)),
    ))?;

    let chart_area = root
        .clone()
        .shrink((0, plot_top as u32), (WIDTH, PLOT_HEIGHT + X_LABEL_AREA));
    let mut chart = ChartBuilder::on(&chart_area)
        .margin_left(MARGIN_LEFT)
        .margin_right(MARGIN_RIGHT)
        .x_label_area_size(X_LABEL_AREA)
        .y_label_area_size(Y_LABEL_AREA)
        .build_cartesian_2d((d.f_min..d.f_max).log_scale(), -y_max..y_top)?;
    chart
        .configure_mesh()
        .x_labels(((d.f_max / d.f_min).log10().ceil() as usize + 1).min(12))
        .y_labels(((y_max + y_top) / 20.0) as usize + 1)
        .y_max_light_lines(1)
        .x_label_formatter(&|f| format_hz(*f))
        .y_label_formatter(&|y| format!("{:.0}", if *y == 0.0 { 0.0 } else { -*y }))
        .x_desc("frequency")
        .y_desc("attenuation (dB)")
        .label_style((FONT, 16.0))
        .axis_desc_style((FONT, 17.0))
        .light_line_style(RGBColor(235, 235, 235))
        .bold_line_style(RGBColor(200, 200, 200))
        .draw()?;

    // Shaded areas: images first (each rate change in its own colour when there are
    // several), the band on top.
    let several = d.half_rates.len() > 1;
    for im in &d.images {
        let fill = match im.stage {
            Some(_) if !several => IMAGE_FILL.mix(0.55),
            None => MODULATOR_COLOUR.mix(0.5),
            other => stage_colour(other).mix(0.28),
        };
        chart.draw_series(std::iter::once(Rectangle::new(
            [
                (im.low_hz.max(d.f_min), -y_max),
                (im.high_hz.min(d.f_max), y_top),
            ],
            fill.filled(),
        )))?;
    }
    // fs/2 of every rate change: a solid line in the stage's colour.
    for h in &d.half_rates {
        if h.frequency_hz > d.f_min && h.frequency_hz < d.f_max {
            chart.draw_series(LineSeries::new(
                vec![(h.frequency_hz, y_top), (h.frequency_hz, -y_max)],
                stage_colour(Some(h.stage)).stroke_width(2),
            ))?;
        }
    }
    chart.draw_series(std::iter::once(Rectangle::new(
        [(d.f_min, -y_max), (d.band_hz.min(d.f_max), y_top)],
        BAND_FILL.mix(0.6).filled(),
    )))?;

    // The required rejection.
    chart.draw_series(DashedLineSeries::new(
        vec![(d.f_min, -d.required_db), (d.f_max, -d.required_db)],
        10,
        6,
        REQUIRED.stroke_width(2),
    ))?;
    // 0 dB.
    chart.draw_series(LineSeries::new(
        vec![(d.f_min, 0.0), (d.f_max, 0.0)],
        RGBColor(120, 120, 120).stroke_width(1),
    ))?;

    // Vertical marker lines.
    for m in &d.markers {
        let c = marker_colour(m);
        chart.draw_series(DashedLineSeries::new(
            vec![(m.frequency_hz, y_top), (m.frequency_hz, -y_max)],
            4,
            4,
            c.mix(0.8).stroke_width(1),
        ))?;
    }

    // The curves.
    for c in &d.curves {
        for run in visible_runs(&c.points, y_max) {
            let pts: Vec<(f64, f64)> = run.iter().map(|&(f, a)| (f, clamp(a))).collect();
            if c.full_chain {
                chart.draw_series(DashedLineSeries::new(pts, 8, 5, FULL_CURVE.stroke_width(2)))?;
            } else {
                chart.draw_series(LineSeries::new(pts, CURVE.stroke_width(3)))?;
            }
        }
    }

    // Marker symbols at their attenuation.
    for m in &d.markers {
        let c = marker_colour(m);
        let at = (m.frequency_hz, clamp(m.attenuation_db));
        match m.kind {
            MarkerKind::Fold => {
                chart.draw_series(std::iter::once(Circle::new(at, 6, c.filled())))?;
            }
            MarkerKind::Resonance => {
                chart.draw_series(std::iter::once(TriangleMarker::new(at, 8, c.filled())))?;
            }
            MarkerKind::Disturbance => {
                chart.draw_series(std::iter::once(Cross::new(at, 7, c.stroke_width(3))))?;
            }
            MarkerKind::Modulator => {
                let (x, y) = chart.backend_coord(&at);
                root.draw(&Rectangle::new(
                    [(x - 6, y - 6), (x + 6, y + 6)],
                    c.filled(),
                ))?;
            }
        }
    }

    // A marker's own requirement: a short bar with its value.
    for m in &d.markers {
        if let Some(r) = m.required_db {
            let c = marker_colour(m);
            let (x, y) = chart.backend_coord(&(m.frequency_hz, -r));
            root.draw(&PathElement::new(
                vec![(x - 22, y), (x + 22, y)],
                c.stroke_width(3),
            ))?;
            root.draw(&Text::new(
                format!("needs {}", crate::words::db_text(r)),
                (x + 26, y),
                (FONT, LABEL_FONT)
                    .into_font()
                    .color(&c)
                    .pos(Pos::new(HPos::Left, VPos::Center)),
            ))?;
        }
    }

    // Labels in the strip, with leader lines to the top of the plot.
    let (x_range, y_range) = chart.plotting_area().get_pixel_range();
    let bottom = y_range.end;

    // Tick labels at 2 and 5 times each decade, where a decade is wide enough.
    let decades = (d.f_max / d.f_min).log10();
    if f64::from(x_range.end - x_range.start) / decades >= 200.0 {
        let minor = (FONT, 14.0).into_font().color(&RGBColor(110, 110, 110));
        let mut p = 10f64.powf(d.f_min.log10().floor());
        while p <= d.f_max {
            for m in [2.0, 5.0] {
                let f = p * m;
                if f > d.f_min && f < d.f_max {
                    let (x, _) = chart.backend_coord(&(f, -y_max));
                    root.draw(&PathElement::new(
                        vec![(x, bottom), (x, bottom + 4)],
                        RGBColor(110, 110, 110).stroke_width(1),
                    ))?;
                    root.draw(&Text::new(
                        format_hz(f),
                        (x, bottom + 8),
                        minor.clone().pos(Pos::new(HPos::Center, VPos::Top)),
                    ))?;
                }
            }
            p *= 10.0;
        }
    }

    // The band's name inside its shading, at the bottom.
    let (bx0, _) = chart.backend_coord(&(d.f_min, 0.0));
    let (bx1, _) = chart.backend_coord(&(d.band_hz.min(d.f_max), 0.0));
    let band_text = d.band_label.clone();
    if bx1 - bx0 > text_width(&band_text, LABEL_FONT) + 8 {
        root.draw(&Text::new(
            band_text,
            ((bx0 + bx1) / 2, bottom - 8),
            (FONT, LABEL_FONT)
                .into_font()
                .color(&RGBColor(40, 110, 40))
                .pos(Pos::new(HPos::Center, VPos::Bottom)),
        ))?;
    }
    let top = y_range.start;
    let exact_px = |f: f64| chart.backend_coord(&(f, y_top)).0;
    let font = (FONT, LABEL_FONT).into_font();
    for (t, p) in tags.iter().zip(&places) {
        // The chart's own mapping, a pixel or so from the analytic one used for layout.
        let x = exact_px(t.f).clamp(x_range.start, x_range.end);
        let y = top - 6 - p.row as i32 * LABEL_ROW - LABEL_ROW / 2;
        root.draw(&PathElement::new(
            vec![(x, y + 6), (x, top)],
            t.colour.mix(0.7).stroke_width(1),
        ))?;
        let (tx, h) = if p.right_anchored {
            (x - 4, HPos::Right)
        } else {
            (x + 4, HPos::Left)
        };
        root.draw(&Text::new(
            t.text.clone(),
            (tx, y),
            font.clone().color(&t.colour).pos(Pos::new(h, VPos::Center)),
        ))?;
    }

    // A value at the required line's right end.
    let (rx, ry) = chart.backend_coord(&(d.f_max, -d.required_db));
    root.draw(&Text::new(
        crate::words::db_text(d.required_db),
        (rx - 4, ry - 4),
        (FONT, LABEL_FONT)
            .into_font()
            .color(&REQUIRED)
            .pos(Pos::new(HPos::Right, VPos::Bottom)),
    ))?;

    // Legend, below the axis title.
    draw_legend(&root, &legend, legend_top)?;
    for (i, n) in d.notes.iter().enumerate() {
        root.draw(&Text::new(
            n.clone(),
            (
                (MARGIN_LEFT + Y_LABEL_AREA) as i32,
                legend_top + legend_rows * legend_row + 10 + i as i32 * 20,
            ),
            (FONT, LABEL_FONT)
                .into_font()
                .color(&RGBColor(90, 90, 90))
                .pos(Pos::new(HPos::Left, VPos::Top)),
        ))?;
    }
    if let Some(p) = &d.phase {
        draw_phase(&root, p, phase_top)?;
    }
    root.present()?;
    Ok(())
}

const PHASE_HEIGHT: u32 = 260;
const PHASE_COLOURS: [RGBColor; 4] = [
    RGBColor(20, 80, 200),
    RGBColor(200, 90, 20),
    RGBColor(30, 140, 60),
    RGBColor(150, 60, 170),
];

/// The group panel: phase (deg) against linear frequency over the common band.
fn draw_phase(root: &DrawingArea<SVGBackend, Shift>, p: &PhasePanel, top: i32) -> DrawResult {
    let (lo, hi) = p
        .curves
        .iter()
        .flat_map(|c| c.1.iter().map(|q| q.1))
        .fold((0.0_f64, 0.0_f64), |(lo, hi), v| (lo.min(v), hi.max(v)));
    let pad = ((hi - lo) * 0.08).max(1.0);
    root.draw(&Text::new(
        p.title.clone(),
        (WIDTH as i32 / 2, top),
        (FONT, 18.0)
            .into_font()
            .color(&BLACK)
            .pos(Pos::new(HPos::Center, VPos::Top)),
    ))?;
    let area = root
        .clone()
        .shrink((0, (top + 26) as u32), (WIDTH, PHASE_HEIGHT));
    let mut chart = ChartBuilder::on(&area)
        .margin_left(MARGIN_LEFT)
        .margin_right(MARGIN_RIGHT)
        .x_label_area_size(X_LABEL_AREA)
        .y_label_area_size(Y_LABEL_AREA)
        .build_cartesian_2d(0.0..p.band_hz, (lo - pad)..(hi + pad))?;
    chart
        .configure_mesh()
        .x_labels(6)
        .y_labels(6)
        .x_label_formatter(&|f| format_hz(*f))
        .y_label_formatter(&|y| crate::words::sig6((y * 10.0).round() / 10.0))
        .x_desc("frequency")
        .y_desc("phase (deg)")
        .label_style((FONT, 16.0))
        .axis_desc_style((FONT, 17.0))
        .light_line_style(RGBColor(235, 235, 235))
        .bold_line_style(RGBColor(200, 200, 200))
        .draw()?;
    for (i, (_, pts)) in p.curves.iter().enumerate() {
        let c = PHASE_COLOURS[i % PHASE_COLOURS.len()];
        chart.draw_series(LineSeries::new(
            pts.clone(),
            c.stroke_width(if i == 0 { 3 } else { 2 }),
        ))?;
    }
    let legend: Vec<(Swatch, String)> = p
        .curves
        .iter()
        .enumerate()
        .map(|(i, (l, _))| {
            (
                Swatch::Line(PHASE_COLOURS[i % PHASE_COLOURS.len()]),
                l.clone(),
            )
        })
        .collect();
    draw_legend(root, &legend, top + 26 + PHASE_HEIGHT as i32 + 4)?;
    Ok(())
}

/// The stretches of a curve that lie within the plotted depth, each extended by one
/// point past the bottom edge so that the line runs off the plot instead of stopping
/// short of it (or running along the bottom).
fn visible_runs(points: &[(f64, f64)], y_max: f64) -> Vec<Vec<(f64, f64)>> {
    let inside = |a: f64| a <= y_max;
    let mut runs = Vec::new();
    let mut run: Vec<(f64, f64)> = Vec::new();
    for (i, &p) in points.iter().enumerate() {
        if inside(p.1) {
            if run.is_empty() && i > 0 {
                run.push(points[i - 1]);
            }
            run.push(p);
        } else if !run.is_empty() {
            run.push(p);
            runs.push(std::mem::take(&mut run));
        }
    }
    if !run.is_empty() {
        runs.push(run);
    }
    runs
}

#[derive(Clone, Copy)]
enum Swatch {
    Line(RGBColor),
    Dashed(RGBColor),
    Fill(RGBColor),
    Dot(RGBColor),
    Triangle(RGBColor),
    Cross(RGBColor),
    Square(RGBColor),
}

fn draw_legend(
    root: &DrawingArea<SVGBackend, Shift>,
    entries: &[(Swatch, String)],
    top: i32,
) -> DrawResult {
    let rows = entries.len().div_ceil(2);
    let col_x = [(MARGIN_LEFT + Y_LABEL_AREA) as i32, (WIDTH / 2) as i32 + 20];
    let font = (FONT, LABEL_FONT).into_font().color(&RGBColor(30, 30, 30));
    for (i, (sw, text)) in entries.iter().enumerate() {
        let (col, row) = (i / rows, i % rows);
        let x = col_x[col.min(1)];
        let y = top + row as i32 * 22 + 10;
        match *sw {
            Swatch::Line(c) => {
                root.draw(&PathElement::new(
                    vec![(x, y), (x + 28, y)],
                    c.stroke_width(3),
                ))?;
            }
            Swatch::Dashed(c) => {
                for k in 0..3 {
                    let x0 = x + k * 11;
                    root.draw(&PathElement::new(
                        vec![(x0, y), (x0 + 7, y)],
                        c.stroke_width(2),
                    ))?;
                }
            }
            Swatch::Fill(c) => {
                root.draw(&Rectangle::new([(x, y - 6), (x + 28, y + 6)], c.filled()))?;
            }
            Swatch::Dot(c) => {
                root.draw(&Circle::new((x + 14, y), 6, c.filled()))?;
            }
            Swatch::Triangle(c) => {
                root.draw(&TriangleMarker::new((x + 14, y), 8, c.filled()))?;
            }
            Swatch::Cross(c) => {
                root.draw(&Cross::new((x + 14, y), 7, c.stroke_width(3)))?;
            }
            Swatch::Square(c) => {
                root.draw(&Rectangle::new(
                    [(x + 8, y - 6), (x + 20, y + 6)],
                    c.filled(),
                ))?;
            }
        }
        root.draw(&Text::new(
            text.clone(),
            (x + 38, y),
            font.clone().pos(Pos::new(HPos::Left, VPos::Center)),
        ))?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn labels_never_overlap_and_leaders_never_cross_text() {
        // Crowded: a cluster near the right edge, two labels at the same x, a long one.
        let items = [
            (900, 150),
            (903, 60),
            (1000, 220),
            (1100, 60),
            (1150, 60),
            (1180, 80),
            (300, 120),
            (310, 300),
            (1180, 40),
        ];
        let placed = place_labels(&items, 10, 1196);
        assert_eq!(placed.len(), items.len());
        for (i, a) in placed.iter().enumerate() {
            assert_eq!(a.x, items[i].0, "label {i} keeps its leader");
            assert!(a.left >= 10 && a.right <= 1196, "label {i} inside: {a:?}");
            for b in &placed[i + 1..] {
                assert!(compatible(a, b), "{a:?} and {b:?}");
            }
        }
        assert!(placed.iter().map(|p| p.row).max().unwrap() < MAX_ROWS - 1);
    }

    #[test]
    fn a_lone_label_takes_the_row_next_to_the_plot() {
        let placed = place_labels(&[(500, 100)], 10, 1196);
        assert_eq!(placed[0].row, 0);
        assert!(!placed[0].right_anchored);
        // Too close to the right edge for its text: it ends at its leader instead.
        let placed = place_labels(&[(1190, 100)], 10, 1196);
        assert!(placed[0].right_anchored);
        assert_eq!(placed[0].right, 1190);
    }

    #[test]
    fn curves_leave_the_plot_instead_of_running_along_its_bottom() {
        let pts = [
            (1.0, 0.0),
            (2.0, 50.0),
            (3.0, 200.0),
            (4.0, f64::INFINITY),
            (5.0, 90.0),
        ];
        let runs = visible_runs(&pts, 100.0);
        assert_eq!(runs.len(), 2);
        assert_eq!(runs[0], vec![(1.0, 0.0), (2.0, 50.0), (3.0, 200.0)]);
        assert_eq!(runs[1], vec![(4.0, f64::INFINITY), (5.0, 90.0)]);
    }

    #[test]
    fn the_target_must_be_an_svg_file_name() {
        assert!(check_target(Path::new("out.svg")).is_ok());
        assert!(check_target(Path::new("OUT.SVG")).is_ok());
        assert!(check_target(Path::new("rig.yaml")).is_err());
        assert!(check_target(Path::new("plot")).is_err());
    }
}
