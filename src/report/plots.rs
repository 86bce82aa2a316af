//! The plots, drawn as SVG by plotters: driver levels per scenario, the level change, the
//! input impedance with the rated-impedance floor, its phase, the tolerance band and the
//! acoustic sum.
//!
//! Made to be read in print and in greyscale: scenarios differ by line pattern (as designed
//! long dashes, as found short dashes, as left solid), drivers by colours whose lightness
//! rises with the driver's frequency (darkest for the woofer), and reference lines are thin,
//! grey and dotted, labelled above the line on a white ground so no trace strikes them
//! through. The text is set in Libertinus Serif, the report's body font (shipped with the
//! Typst engine's fonts), so plots and page match. The legend sits in its own strip below
//! the chart, as many rows as its entries need, so it never covers data or runs off the
//! edge. A trace below the axis floor is broken, not drawn along the bottom edge.

use plotters::coord::Shift;
use plotters::prelude::*;

use super::axes::{log_ticks, range};
pub use super::captions::{caption, set_caption};
use crate::analysis::pair::SetFindings;
use crate::analysis::{frequency_order, Findings, Outcome};
use crate::model::{Job, PlotKind, Scenario};

/// The font family the SVG text asks for: the report's body font.
pub const FONT: &str = "Libertinus Serif";
const W: u32 = 900;
const CHART_H: u32 = 420;
const LEGEND_ROW: u32 = 22;

const NAVY: RGBColor = RGBColor(0x17, 0x30, 0x4f);
const BRICK: RGBColor = RGBColor(0xc0, 0x3c, 0x30);
const GREEN: RGBColor = RGBColor(0x3a, 0x8c, 0x5c);
const GOLD: RGBColor = RGBColor(0xc0, 0x8a, 0x00);
const PURPLE: RGBColor = RGBColor(0x7b, 0x4f, 0x9d);
const REFERENCE_GREY: RGBColor = RGBColor(0x99, 0x99, 0x99);

/// Colours for `n` drivers in rising frequency, darkest first, so they stay apart in grey
/// (relative luminance: navy 0.03, purple 0.12, brick 0.15, green 0.20, gold 0.29), and
/// every one at least 3:1 against the white page.
fn palette(n: usize) -> Vec<RGBColor> {
    match n {
        0 | 1 => vec![NAVY],
        2 => vec![NAVY, GOLD],
        3 => vec![NAVY, BRICK, GOLD],
        4 => vec![NAVY, PURPLE, GREEN, GOLD],
        _ => [NAVY, PURPLE, BRICK, GREEN, GOLD].iter().cycle().take(n).cloned().collect(),
    }
}

/// Each driver's colour, in network order.
fn driver_colours(f: &Findings) -> Vec<RGBColor> {
    let order = frequency_order(&f.bands);
    let p = palette(order.len());
    let mut out = vec![NAVY; order.len()];
    for (rank, &d) in order.iter().enumerate() {
        out[d] = p[rank];
    }
    out
}

#[derive(Clone, Copy, PartialEq)]
enum Pattern {
    Solid,
    Long,
    Short,
    Dot,
    Sparse,
}

impl Pattern {
    /// Dash and gap lengths in pixels; None for a solid line.
    fn dashes(self) -> Option<(u32, u32)> {
        match self {
            Pattern::Solid => None,
            Pattern::Long => Some((14, 6)),
            Pattern::Short => Some((6, 4)),
            Pattern::Dot => Some((2, 4)),
            Pattern::Sparse => Some((6, 12)),
        }
    }
}

/// The pattern of the k-th cabinet of a pair or set (long dashes stay the design's).
fn cabinet_pattern(k: usize) -> Pattern {
    [Pattern::Solid, Pattern::Short, Pattern::Dot, Pattern::Sparse][k % 4]
}

fn pattern(s: Scenario) -> Pattern {
    match s {
        Scenario::AsDesigned => Pattern::Long,
        Scenario::AsFound => Pattern::Short,
        Scenario::AsLeft => Pattern::Solid,
    }
}

struct Curve {
    label: String,
    colour: RGBColor,
    pattern: Pattern,
    points: Vec<(f64, f64)>,
}

/// A shaded band: (frequency, low, high) points and its colour.
type Shaded = (Vec<(f64, f64, f64)>, RGBColor);

/// A horizontal reference line and its label.
struct Reference {
    at: f64,
    label: String,
}

type DrawResult = Result<(), Box<dyn std::error::Error>>;

/// A chart: its title, axis label, ranges and what it shows.
struct Chart<'a> {
    title: &'a str,
    y_label: &'a str,
    x: (f64, f64),
    y: (f64, f64),
    curves: Vec<Curve>,
    references: Vec<Reference>,
    bands: Vec<Shaded>,
    /// Extra legend entries for the shaded bands: (label, colour).
    band_labels: Vec<(String, RGBColor)>,
    /// The y values are log10 of the quantity, labelled as the quantity (a log axis).
    y_log: bool,
}

fn style(colour: &RGBColor) -> ShapeStyle {
    ShapeStyle::from(colour).stroke_width(2)
}

/// The design's trace is drawn last, thinner and in a darker shade of its driver's colour, so
/// it shows on top of an as-left trace it coincides with instead of vanishing into it.
fn curve_style(c: &Curve) -> ShapeStyle {
    match c.pattern {
        Pattern::Long => ShapeStyle::from(&ink(c)).stroke_width(1),
        _ => style(&c.colour),
    }
}

/// A curve's colour as drawn: the design's a darker shade of its driver's.
fn ink(c: &Curve) -> RGBColor {
    match c.pattern {
        Pattern::Long => RGBColor((c.colour.0 as f64 * 0.45) as u8, (c.colour.1 as f64 * 0.45) as u8, (c.colour.2 as f64 * 0.45) as u8),
        _ => c.colour,
    }
}

/// The runs of consecutive points inside the y range: a trace leaving the chart is broken
/// there instead of being drawn along its edge.
fn runs(points: &[(f64, f64)], y: (f64, f64)) -> Vec<Vec<(f64, f64)>> {
    let mut out = Vec::new();
    let mut run = Vec::new();
    for &(f, v) in points {
        if v.is_finite() && v >= y.0 && v <= y.1 {
            run.push((f, v));
        } else if !run.is_empty() {
            out.push(std::mem::take(&mut run));
        }
    }
    if !run.is_empty() {
        out.push(run);
    }
    out
}

fn draw_curve<DB: DrawingBackend, CT: plotters::coord::CoordTranslate<From = (f64, f64)>>(
    chart: &mut ChartContext<DB, CT>,
    c: &Curve,
    y: (f64, f64),
) -> Result<(), DrawingAreaErrorKind<DB::ErrorType>> {
    for run in runs(&c.points, y) {
        match c.pattern.dashes() {
            None => chart.draw_series(LineSeries::new(run, curve_style(c))).map(|_| ())?,
            Some((dash, gap)) => chart.draw_series(DashedLineSeries::new(run, dash, gap, curve_style(c))).map(|_| ())?,
        }
    }
    Ok(())
}

/// A legend entry's sample: the pattern as drawn on the chart, or a shaded swatch.
enum Sample {
    Line(Pattern),
    Swatch,
    Reference,
}

/// Text width estimate for the legend layout (Libertinus Serif at `size` px averages under
/// half an em a character).
fn text_w(s: &str, size: u32) -> i32 {
    (s.chars().count() as f64 * size as f64 * 0.5).ceil() as i32
}

const LEGEND_FONT: u32 = 14;
const SAMPLE_W: i32 = 40;

/// Legend entries laid out left to right in equal columns, as many per row as fit.
fn legend_layout(items: &[(String, RGBColor, Sample)]) -> (usize, i32) {
    let widest = items.iter().map(|(l, _, _)| text_w(l, LEGEND_FONT)).max().unwrap_or(0) + SAMPLE_W + 28;
    let per_row = ((W as i32 - 60) / widest.max(1)).clamp(1, 4) as usize;
    (per_row, (W as i32 - 60) / per_row as i32)
}

fn legend_rows(n: usize, per_row: usize) -> u32 {
    n.div_ceil(per_row.max(1)) as u32
}

fn legend(area: &DrawingArea<SVGBackend, Shift>, items: &[(String, RGBColor, Sample)], per_row: usize, col_w: i32) -> DrawResult {
    for (i, (label, colour, sample)) in items.iter().enumerate() {
        let x = 40 + (i % per_row) as i32 * col_w;
        let y = 14 + (i / per_row) as i32 * LEGEND_ROW as i32;
        match sample {
            Sample::Line(pat) => {
                let width = if *pat == Pattern::Long { 1 } else { 2 };
                let segs: Vec<(i32, i32)> = match pat.dashes() {
                    None => vec![(0, SAMPLE_W)],
                    Some((dash, gap)) => {
                        let step = (dash + gap) as i32;
                        (0..).map(|k| k * step).take_while(|a| a + dash as i32 <= SAMPLE_W).map(|a| (a, a + dash as i32)).collect()
                    }
                };
                for (a, b) in segs {
                    area.draw(&PathElement::new(vec![(x + a, y), (x + b, y)], ShapeStyle::from(colour).stroke_width(width)))?;
                }
            }
            Sample::Swatch => area.draw(&Rectangle::new([(x, y - 6), (x + SAMPLE_W, y + 6)], colour.mix(0.22).filled()))?,
            Sample::Reference => {
                for k in 0..10 {
                    area.draw(&PathElement::new(vec![(x + k * 4, y), (x + k * 4 + 1, y)], ShapeStyle::from(&REFERENCE_GREY).stroke_width(1)))?;
                }
            }
        }
        area.draw(&Text::new(label.clone(), (x + SAMPLE_W + 8, y - 8), (FONT, LEGEND_FONT).into_font().color(&BLACK)))?;
    }
    Ok(())
}

fn log_chart(c: Chart) -> Result<String, Box<dyn std::error::Error>> {
    let mut items: Vec<(String, RGBColor, Sample)> = Vec::new();
    for curve in &c.curves {
        if !items.iter().any(|(l, _, _)| *l == curve.label) {
            // A trace wholly outside the axes is named as such, not left for the reader to hunt.
            let below = curve.points.iter().all(|p| !p.1.is_finite() || p.1 < c.y.0);
            let label = match runs(&curve.points, c.y).is_empty() {
                true if !curve.label.ends_with("silent") => format!("{} ({} the chart)", curve.label, if below { "all below" } else { "outside" }),
                _ => curve.label.clone(),
            };
            items.push((label, ink(curve), Sample::Line(curve.pattern)));
        }
    }
    for (label, colour) in &c.band_labels {
        items.push((label.clone(), *colour, Sample::Swatch));
    }
    for r in &c.references {
        if !r.label.is_empty() {
            items.push((r.label.clone(), REFERENCE_GREY, Sample::Reference));
        }
    }
    let y_log = c.y_log;
    let (per_row, col_w) = legend_layout(&items);
    let legend_h = 12 + legend_rows(items.len(), per_row) * LEGEND_ROW;
    let h = CHART_H + legend_h;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (W, h)).into_drawing_area();
        root.fill(&WHITE)?;
        let (top, bottom) = root.split_vertically(CHART_H);
        let mut chart = ChartBuilder::on(&top)
            .caption(c.title, (FONT, 19).into_font())
            .margin(12)
            .x_label_area_size(44)
            .y_label_area_size(64)
            .build_cartesian_2d((c.x.0..c.x.1).log_scale(), c.y.0..c.y.1)?;
        // A logarithmic axis (impedance) is labelled at round values of its own (4, 5, 6, 8,
        // 10 ...), never at plotters' evenly spaced logarithms (6.3, 7.9), which read as
        // figures beside the rated-impedance line.
        let log_ticks = if y_log { log_ticks(10f64.powf(c.y.0), 10f64.powf(c.y.1)) } else { Vec::new() };
        chart
            .configure_mesh()
            .x_desc("frequency (Hz)")
            .y_desc(c.y_label)
            .label_style((FONT, 14))
            .axis_desc_style((FONT, 15))
            .x_label_formatter(&|v| if *v >= 1000.0 { format!("{}k", crate::units::trim_number(v / 1000.0, 3)) } else { crate::units::trim_number(*v, 3) })
            .y_label_formatter(&|v| crate::units::trim_number(if v.abs() < 1e-9 { 0.0 } else { *v }, 3))
            .y_labels(if y_log { 0 } else { 10 })
            .light_line_style(RGBColor(0xec, 0xec, 0xec))
            .bold_line_style(RGBColor(0xd4, 0xd4, 0xd4))
            .draw()?;
        for t in &log_ticks {
            let y = t.log10();
            chart.draw_series(LineSeries::new(vec![(c.x.0, y), (c.x.1, y)], ShapeStyle::from(&RGBColor(0xd4, 0xd4, 0xd4)).stroke_width(1)))?;
            let (px, py) = chart.backend_coord(&(c.x.0, y));
            let style = TextStyle::from((FONT, 14).into_font())
                .pos(plotters::style::text_anchor::Pos::new(plotters::style::text_anchor::HPos::Right, plotters::style::text_anchor::VPos::Center));
            top.draw(&Text::new(crate::units::trim_number(*t, 3), (px - 6, py), style))?;
        }
        for (pts, colour) in &c.bands {
            let mut poly: Vec<(f64, f64)> = pts.iter().map(|(f, lo, _)| (*f, lo.clamp(c.y.0, c.y.1))).collect();
            poly.extend(pts.iter().rev().map(|(f, _, hi)| (*f, hi.clamp(c.y.0, c.y.1))));
            chart.draw_series(std::iter::once(Polygon::new(poly, colour.mix(0.22).filled())))?;
        }
        for r in &c.references {
            chart.draw_series(DashedLineSeries::new(vec![(c.x.0, r.at), (c.x.1, r.at)], 1, 4, ShapeStyle::from(&REFERENCE_GREY).stroke_width(1)))?;
        }
        for curve in c.curves.iter().filter(|k| k.pattern != Pattern::Long).chain(c.curves.iter().filter(|k| k.pattern == Pattern::Long)) {
            draw_curve(&mut chart, curve, c.y)?;
        }
        legend(&bottom, &items, per_row, col_w)?;
        root.present()?;
    }
    Ok(svg)
}

/// Every plot this job supports, as (kind, SVG text), in report order.
pub fn all(job: &Job, f: &Findings) -> Vec<(PlotKind, String)> {
    let mut out = Vec::new();
    let mut push = |kind: PlotKind, r: Result<String, Box<dyn std::error::Error>>| {
        if let Ok(svg) = r {
            out.push((kind, svg));
        }
    };
    push(PlotKind::Response, response(job, f));
    push(PlotKind::Change, change(job, f));
    push(PlotKind::Impedance, impedance(job, f));
    push(PlotKind::Phase, phase(job, f));
    if f.tolerance.is_some() {
        push(PlotKind::Tolerance, tolerance(f));
    }
    if f.acoustic.is_some() {
        push(PlotKind::Acoustic, acoustic(job, f));
    }
    if !f.confirmation.is_empty() {
        push(PlotKind::Terminals, terminals(job, f));
    }
    out
}

/// Each sweep at the terminals (dots) against the prediction for its scenario.
fn terminals(job: &Job, f: &Findings) -> Result<String, Box<dyn std::error::Error>> {
    let mut curves = Vec::new();
    let (mut lo, mut hi) = (f64::INFINITY, 0.0f64);
    for c in &f.confirmation {
        // Told apart by pattern, so they read in greyscale: measured as found dots, as left
        // sparse dashes; predicted as found short dashes, as left solid.
        let (predicted, measured) = if c.scenario == crate::model::Scenario::AsLeft { (Pattern::Solid, Pattern::Sparse) } else { (Pattern::Short, Pattern::Dot) };
        curves.push(Curve { label: format!("measured {}", c.scenario.label()), colour: BRICK, pattern: measured, points: c.curves.iter().map(|p| (p[0], p[1].log10())).collect() });
        // With nothing read on the bench, the calculated speaker as found is the design.
        let calculated = if c.scenario == crate::model::Scenario::AsFound && !job.read_on_bench() {
            "calculated from the design (nothing read)".to_string()
        } else {
            format!("calculated {}", c.scenario.label())
        };
        curves.push(Curve { label: calculated, colour: NAVY, pattern: predicted, points: c.curves.iter().map(|p| (p[0], p[3].log10())).collect() });
        lo = lo.min(c.from_hz);
        hi = hi.max(c.to_hz);
    }
    // Worded for every reader: the owner's report shows it too.
    impedance_chart(job, "Impedance at the speaker's terminals: measured against calculated", "impedance (Ω)", (lo, hi * 1.0001), curves)
}

/// Every plot a job of one cabinet or several supports.
pub fn all_outcome(job: &Job, o: &Outcome) -> Vec<(PlotKind, String)> {
    match o {
        Outcome::One(f) => all(job, f),
        Outcome::Set(set) => all_set(job, set),
    }
}

/// A pair's or set's plots: the cabinets overlaid, told apart by line pattern.
pub fn all_set(job: &Job, set: &SetFindings) -> Vec<(PlotKind, String)> {
    let mut out = Vec::new();
    // With no work done the speaker "as left" is the speaker as found: no plot claims otherwise.
    let worked = job.work_done();
    for (kind, r) in [
        (PlotKind::PairFound, set_change(job, set, Scenario::AsFound)),
        (PlotKind::PairLeft, set_change(job, set, Scenario::AsLeft)),
        (PlotKind::Impedance, set_impedance(job, set, worked)),
    ] {
        // Nor, with nothing read before the work in any cabinet, does one claim an "as found"
        // (it would be the design's curve under that name).
        if (kind == PlotKind::PairLeft && !worked) || (kind == PlotKind::PairFound && !set.read_on_bench()) {
            continue;
        }
        if let Ok(svg) = r {
            out.push((kind, svg));
        }
    }
    out
}

/// Each cabinet's driver levels against the original design over each driver's band.
fn set_change(job: &Job, set: &SetFindings, scenario: Scenario) -> Result<String, Box<dyn std::error::Error>> {
    let first = &set.cabinets.first().ok_or("no cabinets")?.findings;
    let colours = driver_colours(first);
    let mut curves = Vec::new();
    for (di, d) in job.network.drivers.iter().enumerate() {
        for (k, c) in set.cabinets.iter().enumerate() {
            let f = &c.findings;
            let s = &f.scenes[scenario];
            let Some(j) = s.driver_index(&d.name) else { continue };
            let (a, b) = compared(f, di, s, j);
            let pts = f.bands[di].idx.iter().map(|&i| (f.freqs[i], b[i] - a[i])).collect();
            curves.push(Curve { label: format!("{} cabinet {}", d.name, c.name), colour: colours[di], pattern: cabinet_pattern(k), points: pts });
        }
    }
    let title = format!("Each cabinet {} against the original design, over each driver's band", scenario.label());
    difference_chart(&title, xr(first), curves)
}

/// A chart of level differences from the original design, 0 dB marked. Faults (tens of dB
/// down) would flatten every other trace: the axis stops at -12 dB and breaks what falls
/// below.
fn difference_chart(title: &str, x: (f64, f64), curves: Vec<Curve>) -> Result<String, Box<dyn std::error::Error>> {
    let (lo, hi) = range(curves.iter().flat_map(|c| c.points.iter().map(|p| p.1)).filter(|v| *v > -12.0), 2.0);
    log_chart(Chart {
        title,
        y_label: "difference (dB)",
        x,
        y: (lo.min(-1.0), hi.max(1.0)),
        curves,
        references: vec![Reference { at: 0.0, label: String::new() }],
        bands: vec![],
        band_labels: vec![],
        y_log: false,
    })
}

/// The design's and a scene's curves of driver `di` (index `k` in the scene) to compare:
/// acoustic output where both know it, as the levels table compares, else voltage.
fn compared<'a>(f: &'a Findings, di: usize, s: &'a crate::analysis::Scene, k: usize) -> (&'a [f64], &'a [f64]) {
    match (&f.scenes.as_designed.spl[di], &s.spl[k]) {
        (Some(a), Some(b)) => (a, b),
        _ => (&f.scenes.as_designed.db[di], &s.db[k]),
    }
}

/// Each cabinet's impedance magnitude as left (as found, with no work done), with the design's.
fn set_impedance(job: &Job, set: &SetFindings, worked: bool) -> Result<String, Box<dyn std::error::Error>> {
    let now = if worked { "as left" } else { "as found" };
    let first = &set.cabinets.first().ok_or("no cabinets")?.findings;
    let log = |z: &num_complex::Complex64| z.norm().max(1e-3).log10();
    let mut curves: Vec<Curve> = set
        .cabinets
        .iter()
        .enumerate()
        .map(|(k, c)| Curve {
            label: format!("|Z| cabinet {} {now}", c.name),
            colour: NAVY,
            pattern: cabinet_pattern(k),
            points: c.findings.freqs.iter().cloned().zip(c.findings.scenes.as_left.z.iter().map(log)).collect(),
        })
        .collect();
    curves.push(Curve {
        label: "|Z| as designed".into(),
        colour: NAVY,
        pattern: Pattern::Long,
        points: first.freqs.iter().cloned().zip(first.scenes.as_designed.z.iter().map(log)).collect(),
    });
    impedance_chart(job, &format!("Input impedance magnitude at the amplifier terminals, each cabinet {now}"), "|Z| (Ω)", xr(first), curves)
}

/// A log |Z| chart of `curves` with the 80 % floor of the rated impedance drawn in.
fn impedance_chart(job: &Job, title: &str, y_label: &str, x: (f64, f64), curves: Vec<Curve>) -> Result<String, Box<dyn std::error::Error>> {
    let rated = job.rated_impedance_ohm();
    let floor = crate::analysis::load::rated_floor(rated);
    let (lo, hi) = range(curves.iter().flat_map(|c| c.points.iter().map(|p| p.1)), 0.3);
    log_chart(Chart {
        title,
        y_label,
        x,
        y: (lo.min(floor.log10() - 0.1), hi),
        curves,
        references: vec![Reference {
            at: floor.log10(),
            label: format!("80 % of the rated {} Ω: {} Ω, the lowest the loudspeaker standard allows", crate::units::trim_number(rated, 3), crate::units::trim_number(floor, 3)),
        }],
        bands: vec![],
        band_labels: vec![],
        y_log: true,
    })
}

fn xr(f: &Findings) -> (f64, f64) {
    (f.freqs[0], *f.freqs.last().unwrap_or(&f.freqs[0]) * 1.0001)
}

/// The highest value any curve reaches.
fn peak(curves: &[Curve]) -> f64 {
    curves.iter().flat_map(|c| c.points.iter().map(|p| p.1)).filter(|v| v.is_finite()).fold(f64::NEG_INFINITY, f64::max)
}

/// Whether a plot draws a scenario: with no work done the speaker as left is the speaker as
/// found, and no curve or legend claims otherwise.
fn shown(job: &Job, s: Scenario) -> bool {
    match s {
        Scenario::AsLeft => job.work_done(),
        // Nothing read before the work: "as found" would be the design's curve again under
        // another name (kept when there is nothing else to draw).
        Scenario::AsFound => job.read_on_bench() || !job.work_done(),
        Scenario::AsDesigned => true,
    }
}

/// A driver's curve in one scenario. A driver more than 40 dB down is a fault (silent, failed
/// or cut off), the levels table's own verdict: its legend says so where no line can be drawn.
fn driver_label(f: &Findings, driver: &str, s: Scenario) -> String {
    let silent = f.levels.iter().find(|l| l.driver == driver).is_some_and(|l| match s {
        Scenario::AsFound => l.as_found_fault,
        Scenario::AsLeft => l.as_left_fault,
        Scenario::AsDesigned => false,
    });
    format!("{driver} {}{}", s.label(), if silent { ": silent" } else { "" })
}

fn response(job: &Job, f: &Findings) -> Result<String, Box<dyn std::error::Error>> {
    let colours = driver_colours(f);
    let mut curves = Vec::new();
    for (di, d) in job.network.drivers.iter().enumerate() {
        for s in f.scenes.iter().filter(|s| shown(job, s.scenario)) {
            let Some(k) = s.driver_index(&d.name) else { continue };
            curves.push(Curve {
                label: driver_label(f, &d.name, s.scenario),
                colour: colours[di],
                pattern: pattern(s.scenario),
                points: f.freqs.iter().cloned().zip(s.db[k].iter().cloned()).collect(),
            });
        }
    }
    let max = peak(&curves);
    log_chart(Chart {
        title: "Driver levels (dB re amplifier EMF)",
        y_label: "level (dB)",
        x: xr(f),
        y: (max - 40.0, max + 4.0),
        curves,
        references: vec![],
        bands: vec![],
        band_labels: vec![],
        y_log: false,
    })
}

fn change(job: &Job, f: &Findings) -> Result<String, Box<dyn std::error::Error>> {
    let colours = driver_colours(f);
    let mut curves = Vec::new();
    for (di, d) in job.network.drivers.iter().enumerate() {
        let band = &f.bands[di];
        for s in [&f.scenes.as_found, &f.scenes.as_left].into_iter().filter(|s| shown(job, s.scenario)) {
            let Some(k) = s.driver_index(&d.name) else { continue };
            let (a, b) = compared(f, di, s, k);
            let pts = band.idx.iter().map(|&i| (f.freqs[i], b[i] - a[i])).collect();
            curves.push(Curve { label: driver_label(f, &d.name, s.scenario), colour: colours[di], pattern: pattern(s.scenario), points: pts });
        }
    }
    difference_chart("Level against the original design, over each driver's band", xr(f), curves)
}

/// One curve per scenario of a quantity of the input impedance.
fn impedance_curves(job: &Job, f: &Findings, what: &str, colour: RGBColor, value: impl Fn(&num_complex::Complex64) -> f64) -> Vec<Curve> {
    f.scenes
        .iter()
        .filter(|s| shown(job, s.scenario))
        .map(|s| Curve {
            label: format!("{what} {}", s.scenario.label()),
            colour,
            pattern: pattern(s.scenario),
            points: f.freqs.iter().cloned().zip(s.z.iter().map(&value)).collect(),
        })
        .collect()
}

fn impedance(job: &Job, f: &Findings) -> Result<String, Box<dyn std::error::Error>> {
    // A log axis: the dips that matter to an amplifier (a few ohms) stay readable beside the
    // resonance peaks (tens of ohms).
    let curves = impedance_curves(job, f, "|Z|", NAVY, |z| z.norm().max(1e-3).log10());
    impedance_chart(job, "Input impedance magnitude at the amplifier terminals", "|Z| (Ω)", xr(f), curves)
}

fn phase(job: &Job, f: &Findings) -> Result<String, Box<dyn std::error::Error>> {
    let curves = impedance_curves(job, f, "phase", BRICK, |z| z.arg().to_degrees());
    log_chart(Chart {
        title: "Input impedance phase at the amplifier terminals",
        y_label: "phase (degrees)",
        x: xr(f),
        y: (-95.0, 95.0),
        curves,
        references: vec![Reference { at: 0.0, label: String::new() }],
        bands: vec![],
        band_labels: vec![],
        y_log: false,
    })
}

fn tolerance(f: &Findings) -> Result<String, Box<dyn std::error::Error>> {
    let t = f.tolerance.as_ref().ok_or("no tolerance runs")?;
    let colours = driver_colours(f);
    let mut bands = Vec::new();
    let mut band_labels = Vec::new();
    let mut spread: Vec<f64> = Vec::new();
    for (name, lo, hi) in &t.curves {
        let (Some(di), Some(k)) = (f.scenes.as_designed.driver_index(name), f.scenes.as_left.driver_index(name)) else { continue };
        let band = &f.bands[di];
        // Each grid point against the nominal as-left level there, over the driver's band.
        let pts: Vec<(f64, f64, f64)> = t
            .curve_hz
            .iter()
            .zip(lo.iter().zip(hi))
            .filter(|(hz, _)| **hz >= band.lo_hz && **hz <= band.hi_hz)
            .filter_map(|(hz, (a, b))| {
                let i = f.freqs.iter().position(|x| x == hz)?;
                let nominal = f.scenes.as_left.db[k][i];
                Some((*hz, a - nominal, b - nominal))
            })
            .collect();
        spread.extend(pts.iter().flat_map(|p| [p.1, p.2]));
        bands.push((pts, colours[di]));
        band_labels.push((format!("{name} 5-95 %"), colours[di]));
    }
    let (lo, hi) = range(spread.into_iter(), 0.5);
    let title = format!("Spread of as-left driver levels from part tolerances ({} runs)", t.runs);
    log_chart(Chart {
        title: &title,
        y_label: "against nominal parts (dB)",
        x: xr(f),
        y: (lo, hi),
        curves: vec![],
        references: vec![Reference { at: 0.0, label: String::new() }],
        bands,
        band_labels,
        y_log: false,
    })
}

fn acoustic(job: &Job, f: &Findings) -> Result<String, Box<dyn std::error::Error>> {
    let a = f.acoustic.as_ref().ok_or("no acoustic sum")?;
    let curves: Vec<Curve> = Scenario::ALL
        .iter()
        .zip(a)
        .filter(|(s, _)| shown(job, **s))
        .map(|(s, v)| Curve { label: format!("sum {}", s.label()), colour: GREEN, pattern: pattern(*s), points: f.freqs.iter().cloned().zip(v.iter().cloned()).collect() })
        .collect();
    let max = peak(&curves);
    log_chart(Chart {
        title: "Acoustic sum from the drivers' measured responses (dB SPL at 2.83 V, 1 m)",
        y_label: "SPL (dB)",
        x: xr(f),
        y: (max - 40.0, max + 5.0),
        curves,
        references: vec![],
        bands: vec![],
        band_labels: vec![],
        y_log: false,
    })
}

/// Renders an SVG plot to PNG at 2x, with the embedded fonts (no system fonts).
pub fn svg_to_png(svg: &str) -> Result<Vec<u8>, String> {
    let mut db = resvg::usvg::fontdb::Database::new();
    for font in typst_assets::fonts() {
        db.load_font_data(font.to_vec());
    }
    let opts = resvg::usvg::Options { fontdb: std::sync::Arc::new(db), ..Default::default() };
    let tree = resvg::usvg::Tree::from_str(svg, &opts).map_err(|e| e.to_string())?;
    let size = tree.size().to_int_size();
    let mut pixmap = resvg::tiny_skia::Pixmap::new(size.width() * 2, size.height() * 2).ok_or("empty plot")?;
    pixmap.fill(resvg::tiny_skia::Color::WHITE);
    resvg::render(&tree, resvg::tiny_skia::Transform::from_scale(2.0, 2.0), &mut pixmap.as_mut());
    pixmap.encode_png().map_err(|e| e.to_string())
}

#[cfg(test)]
#[path = "plots_tests.rs"]
mod tests;
