//! The plots, drawn as SVG by plotters: driver levels per scenario, the level change, the
//! input impedance with the rated-impedance floor, the tolerance band and the acoustic sum.
//!
//! Scenarios differ by line pattern (as designed long dashes, as found short dashes, as left
//! solid) and drivers by colour of distinct lightness, so the plots read in greyscale. The
//! legend sits in its own strip below the chart, so it never covers data.

use plotters::coord::Shift;
use plotters::prelude::*;

use crate::analysis::Findings;
use crate::model::{Job, Scenario};

/// The font family the SVG text asks for; the report and PNG output provide it.
pub const FONT: &str = "DejaVu Sans Mono";
const W: u32 = 900;
const H: u32 = 460;
const LEGEND_H: u32 = 60;

/// Driver colours: dark blue, orange, green, purple, red; distinct in lightness as well as hue.
const COLOURS: [RGBColor; 5] = [RGBColor(0x1b, 0x36, 0x5d), RGBColor(0xd0, 0x7a, 0x1c), RGBColor(0x3f, 0x8a, 0x4a), RGBColor(0x7a, 0x4e, 0x9a), RGBColor(0xb0, 0x2a, 0x2a)];

#[derive(Clone, Copy)]
enum Pattern {
    Solid,
    Long,
    Short,
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

type DrawResult = Result<(), Box<dyn std::error::Error>>;

fn draw_curve<DB: DrawingBackend, CT: plotters::coord::CoordTranslate<From = (f64, f64)>>(
    chart: &mut ChartContext<DB, CT>,
    c: &Curve,
) -> Result<(), DrawingAreaErrorKind<DB::ErrorType>> {
    let style = ShapeStyle::from(&c.colour).stroke_width(2);
    match c.pattern {
        Pattern::Solid => chart.draw_series(LineSeries::new(c.points.iter().cloned(), style)).map(|_| ()),
        Pattern::Long => chart.draw_series(DashedLineSeries::new(c.points.iter().cloned(), 10, 6, style)).map(|_| ()),
        Pattern::Short => chart.draw_series(DashedLineSeries::new(c.points.iter().cloned(), 3, 4, style)).map(|_| ()),
    }
}

fn legend(area: &DrawingArea<SVGBackend, Shift>, items: &[(String, RGBColor, Pattern)]) -> DrawResult {
    let per_row = 3usize;
    let col_w = (W as i32 - 80) / per_row as i32;
    for (i, (label, colour, pat)) in items.iter().enumerate() {
        let x = 70 + (i % per_row) as i32 * col_w;
        let y = 14 + (i / per_row) as i32 * 20;
        let style = ShapeStyle::from(colour).stroke_width(2);
        let segs: Vec<(i32, i32)> = match pat {
            Pattern::Solid => vec![(0, 36)],
            Pattern::Long => vec![(0, 10), (16, 26), (32, 36)],
            Pattern::Short => vec![(0, 3), (7, 10), (14, 17), (21, 24), (28, 31)],
        };
        for (a, b) in segs {
            area.draw(&PathElement::new(vec![(x + a, y), (x + b, y)], style))?;
        }
        area.draw(&Text::new(label.clone(), (x + 44, y - 7), (FONT, 13).into_font().color(&BLACK)))?;
    }
    Ok(())
}

fn log_chart(title: &str, y_label: &str, x: (f64, f64), y: (f64, f64), curves: &[Curve], hlines: &[(f64, String)], bands: &[Shaded]) -> Result<String, Box<dyn std::error::Error>> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (W, H)).into_drawing_area();
        root.fill(&WHITE)?;
        let (top, bottom) = root.split_vertically(H - LEGEND_H);
        let mut chart = ChartBuilder::on(&top)
            .caption(title, (FONT, 17).into_font())
            .margin(12)
            .x_label_area_size(42)
            .y_label_area_size(62)
            .build_cartesian_2d((x.0..x.1).log_scale(), y.0..y.1)?;
        chart
            .configure_mesh()
            .x_desc("frequency (Hz)")
            .y_desc(y_label)
            .label_style((FONT, 12))
            .axis_desc_style((FONT, 13))
            .x_label_formatter(&|v| if *v >= 1000.0 { format!("{}k", crate::units::trim_number(v / 1000.0, 3)) } else { crate::units::trim_number(*v, 3) })
            .y_label_formatter(&|v| crate::units::trim_number(*v, 3))
            .light_line_style(RGBColor(0xe4, 0xe4, 0xe4))
            .bold_line_style(RGBColor(0xc8, 0xc8, 0xc8))
            .draw()?;
        for (pts, colour) in bands {
            let fill = colour.mix(0.18);
            let mut poly: Vec<(f64, f64)> = pts.iter().map(|(f, lo, _)| (*f, *lo)).collect();
            poly.extend(pts.iter().rev().map(|(f, _, hi)| (*f, *hi)));
            chart.draw_series(std::iter::once(Polygon::new(poly, fill.filled())))?;
        }
        for (v, label) in hlines {
            let style = ShapeStyle::from(&BLACK).stroke_width(1);
            chart.draw_series(DashedLineSeries::new(vec![(x.0, *v), (x.1, *v)], 6, 4, style))?;
            chart.draw_series(std::iter::once(Text::new(label.clone(), (x.0 * 1.15, *v + (y.1 - y.0) * 0.015), (FONT, 12).into_font().color(&BLACK))))?;
        }
        for c in curves {
            draw_curve(&mut chart, c)?;
        }
        let mut items: Vec<(String, RGBColor, Pattern)> = curves.iter().map(|c| (c.label.clone(), c.colour, c.pattern)).collect();
        items.dedup_by(|a, b| a.0 == b.0);
        legend(&bottom, &items)?;
        root.present()?;
    }
    Ok(svg)
}

fn range(values: impl Iterator<Item = f64>, pad: f64, min_span: f64) -> (f64, f64) {
    let (lo, hi) = values.filter(|v| v.is_finite()).fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| (a.min(v), b.max(v)));
    if !lo.is_finite() {
        return (-1.0, 1.0);
    }
    let span = (hi - lo).max(min_span);
    let mid = (hi + lo) / 2.0;
    (mid - span / 2.0 - pad, mid + span / 2.0 + pad)
}

/// Every plot this job supports, as (name, SVG text), in report order.
pub fn all(job: &Job, f: &Findings) -> Vec<(&'static str, String)> {
    let mut out = Vec::new();
    let mut push = |name: &'static str, r: Result<String, Box<dyn std::error::Error>>| {
        if let Ok(svg) = r {
            out.push((name, svg));
        }
    };
    push("response", response(job, f));
    push("change", change(job, f));
    push("impedance", impedance(job, f));
    push("phase", phase(f));
    if f.tolerance.is_some() {
        push("tolerance", tolerance(f));
    }
    if f.acoustic.is_some() {
        push("acoustic", acoustic(f));
    }
    out
}

fn xr(f: &Findings) -> (f64, f64) {
    (f.freqs[0], *f.freqs.last().unwrap_or(&f.freqs[0]) * 1.0001)
}

fn response(job: &Job, f: &Findings) -> Result<String, Box<dyn std::error::Error>> {
    let mut curves = Vec::new();
    for (di, d) in job.network.drivers.iter().enumerate() {
        for s in &f.scenes {
            let Some(k) = s.driver_index(&d.name) else { continue };
            curves.push(Curve {
                label: format!("{} {}", d.name, s.scenario.label()),
                colour: COLOURS[di % COLOURS.len()],
                pattern: pattern(s.scenario),
                points: f.freqs.iter().cloned().zip(s.db[k].iter().cloned()).collect(),
            });
        }
    }
    let max = peak(&curves);
    log_chart("Driver levels (dB re amplifier EMF)", "level (dB)", xr(f), (max - 40.0, max + 4.0), &curves, &[], &[])
}

fn change(job: &Job, f: &Findings) -> Result<String, Box<dyn std::error::Error>> {
    let mut curves = Vec::new();
    for (di, d) in job.network.drivers.iter().enumerate() {
        let band = &f.bands[di];
        for s in &f.scenes[1..] {
            let Some(k) = s.driver_index(&d.name) else { continue };
            let pts = band.idx.iter().map(|&i| (f.freqs[i], s.db[k][i] - f.scenes[0].db[di][i])).collect();
            curves.push(Curve { label: format!("{} {} - designed", d.name, s.scenario.label()), colour: COLOURS[di % COLOURS.len()], pattern: pattern(s.scenario), points: pts });
        }
    }
    let (lo, hi) = range(curves.iter().flat_map(|c| c.points.iter().map(|p| p.1)), 0.3, 2.0);
    log_chart("Level change against the original design, over each driver's band", "difference (dB)", xr(f), (lo, hi), &curves, &[(0.0, "as designed".into())], &[])
}

/// One curve per scenario of a quantity of the input impedance.
fn impedance_curves(f: &Findings, what: &str, colour: RGBColor, value: impl Fn(&num_complex::Complex64) -> f64) -> Vec<Curve> {
    f.scenes
        .iter()
        .map(|s| Curve {
            label: format!("{what} {}", s.scenario.label()),
            colour,
            pattern: pattern(s.scenario),
            points: f.freqs.iter().cloned().zip(s.z.iter().map(&value)).collect(),
        })
        .collect()
}

/// The highest value any curve reaches.
fn peak(curves: &[Curve]) -> f64 {
    curves.iter().flat_map(|c| c.points.iter().map(|p| p.1)).fold(f64::NEG_INFINITY, f64::max)
}

fn impedance(job: &Job, f: &Findings) -> Result<String, Box<dyn std::error::Error>> {
    let curves = impedance_curves(f, "|Z|", COLOURS[0], |z| z.norm());
    let rated = job.rated_impedance_ohm();
    let floor = crate::analysis::load::rated_floor(rated);
    let (_, hi) = range(curves.iter().flat_map(|c| c.points.iter().map(|p| p.1)), 0.0, 1.0);
    log_chart(
        "Input impedance magnitude at the amplifier terminals",
        "|Z| (ohm)",
        xr(f),
        (0.0, (hi * 1.1).max(floor * 1.5)),
        &curves,
        &[(floor, format!("80 % of rated {} ohm = {} ohm (IEC 60268-5)", crate::units::trim_number(rated, 3), crate::units::trim_number(floor, 3)))],
        &[],
    )
}

fn phase(f: &Findings) -> Result<String, Box<dyn std::error::Error>> {
    let curves = impedance_curves(f, "phase", COLOURS[1], |z| z.arg().to_degrees());
    log_chart("Input impedance phase", "phase (degrees)", xr(f), (-90.0, 90.0), &curves, &[(0.0, String::new())], &[])
}

fn tolerance(f: &Findings) -> Result<String, Box<dyn std::error::Error>> {
    let t = f.tolerance.as_ref().ok_or("no tolerance runs")?;
    let mut bands = Vec::new();
    let mut curves = Vec::new();
    for (di, (name, lo, hi)) in t.curves.iter().enumerate() {
        let colour = COLOURS[di % COLOURS.len()];
        bands.push((t.curve_hz.iter().zip(lo.iter().zip(hi)).map(|(f, (a, b))| (*f, *a, *b)).collect(), colour));
        if let Some(k) = f.scenes[2].driver_index(name) {
            curves.push(Curve {
                label: format!("{name} as left, nominal parts (band: 5-95 %)"),
                colour,
                pattern: Pattern::Solid,
                points: f.freqs.iter().cloned().zip(f.scenes[2].db[k].iter().cloned()).collect(),
            });
        }
    }
    let max = peak(&curves);
    log_chart(&format!("Spread of driver levels from part tolerances ({} runs)", t.runs), "level (dB)", xr(f), (max - 30.0, max + 4.0), &curves, &[], &bands)
}

fn acoustic(f: &Findings) -> Result<String, Box<dyn std::error::Error>> {
    let a = f.acoustic.as_ref().ok_or("no acoustic sum")?;
    let curves: Vec<Curve> = Scenario::ALL
        .iter()
        .zip(a)
        .map(|(s, v)| Curve { label: format!("sum {}", s.label()), colour: COLOURS[2], pattern: pattern(*s), points: f.freqs.iter().cloned().zip(v.iter().cloned()).collect() })
        .collect();
    let max = peak(&curves);
    log_chart("Acoustic sum from the drivers' measured responses (dB SPL at 2.83 V, 1 m)", "SPL (dB)", xr(f), (max - 40.0, max + 5.0), &curves, &[], &[])
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
