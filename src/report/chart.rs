//! One quantity over the visits as an inline SVG chart (plotters, SVG backend, no fonts needed).
//!
//! Meaning never rests on colour alone: raw readings are hollow circles, readings at 20 °C are
//! filled triangles, over-range readings are upward arrows, the limit is a dashed line with its
//! value written beside it, and every register event is a labelled vertical line.

use chrono::{Datelike, NaiveDate};
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

/// Colours from a palette that stays distinguishable with the common colour-vision deficiencies.
const INK: RGBColor = RGBColor(0x1d, 0x23, 0x2a);
const RAW: RGBColor = RGBColor(0x00, 0x5a, 0x9c);
const NORMALISED: RGBColor = RGBColor(0x8a, 0x4b, 0x00);
const LIMIT: RGBColor = RGBColor(0xb0, 0x1e, 0x1e);
const FIT: RGBColor = RGBColor(0x3c, 0x3c, 0x3c);
const EVENT: RGBColor = RGBColor(0x5b, 0x3f, 0x8c);

/// What to draw.
#[derive(Debug, Clone, Default)]
pub struct ChartSpec {
    pub title: String,
    /// Unit shown on the y axis, e.g. "Ω" or "MΩ".
    pub unit: String,
    /// Draw the y axis on a log scale (insulation resistance).
    pub log_y: bool,
    /// Readings as taken: (date, value, over-range lower bound).
    pub raw: Vec<(NaiveDate, f64, bool)>,
    /// The same readings corrected to 20 °C, where the ambient was recorded.
    pub normalised: Vec<(NaiveDate, f64)>,
    /// The limit line and its label.
    pub limit: Option<(f64, String)>,
    /// The fitted trend over the current baseline: start and end.
    pub fit: Option<[(NaiveDate, f64); 2]>,
    /// The fitted trend carried forward to where it meets the limit.
    pub projection: Option<[(NaiveDate, f64); 2]>,
    /// Register events: repairs, device changes, board replacements.
    pub events: Vec<(NaiveDate, String)>,
}

/// A date as a fractional year, the chart's x coordinate.
fn year(d: NaiveDate) -> f64 {
    let days = if d.leap_year() { 366.0 } else { 365.0 };
    d.year() as f64 + d.ordinal0() as f64 / days
}

/// Render the chart as an `<svg>` element. Plotting errors (which would be bugs) come back as a
/// short SVG that says the chart could not be drawn, never a panic.
pub fn svg(spec: &ChartSpec, width: u32, height: u32) -> String {
    let mut out = String::new();
    if draw(spec, width, height, &mut out).is_err() {
        out = format!(
            "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{width}\" height=\"40\"><text x=\"4\" y=\"20\">chart could not be drawn</text></svg>"
        );
    }
    // plotters writes an XML fragment; give it a role and a title for screen readers.
    let title = html_escape::encode_text(&spec.title).into_owned();
    out.replacen(
        "<svg ",
        &format!(
            "<svg role=\"img\" aria-label=\"{}\" ",
            html_escape::encode_double_quoted_attribute(&spec.title)
        ),
        1,
    )
    .replacen('>', &format!("><title>{title}</title>"), 1)
}

type DrawResult = Result<(), Box<dyn std::error::Error>>;

fn draw(spec: &ChartSpec, width: u32, height: u32, out: &mut String) -> DrawResult {
    let mut xs: Vec<f64> = spec.raw.iter().map(|p| year(p.0)).collect();
    xs.extend(spec.events.iter().map(|e| year(e.0)));
    let mut ys: Vec<f64> = spec.raw.iter().map(|p| p.1).collect();
    ys.extend(spec.normalised.iter().map(|p| p.1));
    if let Some((l, _)) = &spec.limit {
        ys.push(*l);
    }
    for line in spec.fit.iter().chain(spec.projection.iter()) {
        for (d, v) in line {
            xs.push(year(*d));
            ys.push(*v);
        }
    }
    let ys: Vec<f64> = ys
        .into_iter()
        .filter(|v| v.is_finite() && (!spec.log_y || *v > 0.0))
        .collect();
    if xs.is_empty() || ys.is_empty() {
        return Err("nothing to draw".into());
    }
    let (x0, x1) = span(&xs, 0.6);
    let ymax = ys.iter().cloned().fold(f64::MIN, f64::max);
    let ymin = ys.iter().cloned().fold(f64::MAX, f64::min);

    let root = SVGBackend::with_string(out, (width, height)).into_drawing_area();
    root.fill(&WHITE)?;
    // The key sits in its own strip under the plot, so it never hides a reading.
    let items = legend_items(spec);
    let rows = legend_rows(&items, width);
    let strip = (rows.len() as u32 * LEGEND_ROW + 6).min(height / 2);
    let (plot, key) = root.split_vertically(height - strip);
    draw_legend(&key, &rows)?;
    let mut builder = ChartBuilder::on(&plot);
    builder
        .margin(12)
        .margin_top(8)
        .x_label_area_size(28)
        .y_label_area_size(52);

    if spec.log_y {
        let lo = (ymin / 3.0).max(0.01);
        let hi = ymax * 3.0;
        let mut chart = builder.build_cartesian_2d(x0..x1, (lo..hi).log_scale())?;
        chart
            .configure_mesh()
            .light_line_style(TRANSPARENT)
            .bold_line_style(RGBColor(0xe4, 0xe6, 0xea))
            .x_labels(8)
            .x_label_formatter(&|x| format!("{:.0}", x.floor()))
            .y_desc(spec.unit.as_str())
            .y_label_formatter(&|y| log_label(*y))
            .label_style(("sans-serif", 12).into_font().color(&INK))
            .draw()?;
        series(&mut chart, spec, (lo, hi))?;
    } else {
        let pad = ((ymax - ymin).abs() * 0.15).max(0.02);
        let lo = (ymin - pad).max(0.0);
        // Headroom above the highest line for the limit and event labels.
        let hi = ymax + pad * 1.6;
        let mut chart = builder.build_cartesian_2d(x0..x1, lo..hi)?;
        chart
            .configure_mesh()
            .light_line_style(TRANSPARENT)
            .bold_line_style(RGBColor(0xe4, 0xe6, 0xea))
            .x_labels(8)
            .x_label_formatter(&|x| format!("{:.0}", x.floor()))
            .y_desc(spec.unit.as_str())
            .y_label_formatter(&|y| format!("{y:.2}"))
            .label_style(("sans-serif", 12).into_font().color(&INK))
            .draw()?;
        series(&mut chart, spec, (lo, hi))?;
    }
    root.present()?;
    Ok(())
}

fn span(xs: &[f64], pad: f64) -> (f64, f64) {
    let lo = xs.iter().cloned().fold(f64::MAX, f64::min);
    let hi = xs.iter().cloned().fold(f64::MIN, f64::max);
    if (hi - lo).abs() < 1.0 {
        (lo - 1.0, hi + 1.0)
    } else {
        (lo - pad, hi + pad)
    }
}

fn series<'a, X, Y>(
    chart: &mut ChartContext<'a, SVGBackend<'a>, Cartesian2d<X, Y>>,
    spec: &ChartSpec,
    (lo, hi): (f64, f64),
) -> DrawResult
where
    X: plotters::coord::ranged1d::Ranged<ValueType = f64>,
    Y: plotters::coord::ranged1d::Ranged<ValueType = f64>,
{
    let label = ("sans-serif", 12).into_font().color(&INK);
    for (d, text) in &spec.events {
        let x = year(*d);
        chart.draw_series(std::iter::once(PathElement::new(
            vec![(x, lo), (x, hi)],
            EVENT.stroke_width(2),
        )))?;
        chart.draw_series(std::iter::once(Text::new(
            format!(" {text}"),
            (x, lo + (hi - lo) * 0.97),
            label
                .clone()
                .color(&EVENT)
                .pos(Pos::new(HPos::Left, VPos::Top)),
        )))?;
    }
    if let Some((value, text)) = &spec.limit {
        let xr = chart.x_range();
        chart.draw_series(DashedLineSeries::new(
            vec![(xr.start, *value), (xr.end, *value)],
            6,
            4,
            LIMIT.stroke_width(2),
        ))?;
        chart.draw_series(std::iter::once(Text::new(
            text.clone(),
            (xr.start + (xr.end - xr.start) * 0.01, *value),
            label
                .clone()
                .color(&LIMIT)
                .pos(Pos::new(HPos::Left, VPos::Bottom)),
        )))?;
    }
    if let Some([a, b]) = &spec.fit {
        chart.draw_series(LineSeries::new(
            vec![(year(a.0), a.1), (year(b.0), b.1)],
            FIT.stroke_width(2),
        ))?;
    }
    if let Some([a, b]) = &spec.projection {
        chart.draw_series(DashedLineSeries::new(
            vec![(year(a.0), a.1), (year(b.0), b.1)],
            3,
            3,
            FIT.stroke_width(2),
        ))?;
    }
    let plain: Vec<(f64, f64)> = spec
        .raw
        .iter()
        .filter(|p| !p.2)
        .map(|p| (year(p.0), p.1))
        .collect();
    chart.draw_series(
        plain
            .iter()
            .map(|&(x, y)| Circle::new((x, y), 5, RAW.stroke_width(2))),
    )?;
    let over: Vec<(f64, f64)> = spec
        .raw
        .iter()
        .filter(|p| p.2)
        .map(|p| (year(p.0), p.1))
        .collect();
    if !over.is_empty() {
        chart.draw_series(
            over.iter()
                .map(|&(x, y)| TriangleMarker::new((x, y), 7, RAW.stroke_width(2))),
        )?;
    }
    if !spec.normalised.is_empty() {
        chart.draw_series(
            spec.normalised
                .iter()
                .map(|&(d, y)| Cross::new((year(d), y), 5, NORMALISED.stroke_width(2))),
        )?;
    }
    Ok(())
}

/// A y label on a log axis: "0.5", "2", "200", never "1000.0".
fn log_label(y: f64) -> String {
    if y >= 10.0 {
        format!("{y:.0}")
    } else if y >= 1.0 {
        format!("{y:.1}").trim_end_matches(".0").to_string()
    } else {
        format!("{y:.2}")
    }
}

/// One entry of the key under the chart.
#[derive(Clone, Copy)]
enum Marker {
    Raw,
    Normalised,
    OverRange,
    Limit,
    Fit,
    Projection,
    Event,
}

const LEGEND_ROW: u32 = 20;

fn legend_items(spec: &ChartSpec) -> Vec<(Marker, &'static str)> {
    let mut v = Vec::new();
    if spec.raw.iter().any(|p| !p.2) {
        v.push((Marker::Raw, "as measured"));
    }
    if !spec.normalised.is_empty() {
        v.push((Marker::Normalised, "corrected to 20 °C"));
    }
    if spec.raw.iter().any(|p| p.2) {
        v.push((Marker::OverRange, "over range (at least this)"));
    }
    if spec.limit.is_some() {
        v.push((Marker::Limit, "limit"));
    }
    if spec.fit.is_some() {
        v.push((Marker::Fit, "fitted trend"));
    }
    if spec.projection.is_some() {
        v.push((Marker::Projection, "projection to the limit"));
    }
    if !spec.events.is_empty() {
        v.push((Marker::Event, "register event"));
    }
    v
}

/// Lay the key out in rows that fit the width. Text width is estimated (no font metrics in
/// the SVG backend): about 0.55 em a character at 12 px.
fn legend_rows(
    items: &[(Marker, &'static str)],
    width: u32,
) -> Vec<Vec<(i32, Marker, &'static str)>> {
    let mut rows: Vec<Vec<(i32, Marker, &'static str)>> = vec![Vec::new()];
    let mut x = 60;
    for &(m, text) in items {
        let w = 30 + (text.chars().count() as i32 * 66) / 10 + 18;
        if x + w > width as i32 - 8 && x > 60 {
            rows.push(Vec::new());
            x = 60;
        }
        if let Some(r) = rows.last_mut() {
            r.push((x, m, text));
        }
        x += w;
    }
    rows.retain(|r| !r.is_empty());
    rows
}

/// `n` legend dashes of `len` pixels every `step` pixels, from `(x, y)`.
fn dashes(
    area: &DrawingArea<SVGBackend<'_>, plotters::coord::Shift>,
    (x, y): (i32, i32),
    n: i32,
    len: i32,
    step: i32,
    colour: RGBColor,
) -> DrawResult {
    for k in 0..n {
        let a = x + k * step;
        area.draw(&PathElement::new(
            vec![(a, y), (a + len, y)],
            colour.stroke_width(2),
        ))?;
    }
    Ok(())
}

fn draw_legend(
    area: &DrawingArea<SVGBackend<'_>, plotters::coord::Shift>,
    rows: &[Vec<(i32, Marker, &'static str)>],
) -> DrawResult {
    let font = ("sans-serif", 12).into_font().color(&INK);
    for (i, row) in rows.iter().enumerate() {
        let y = 4 + i as i32 * LEGEND_ROW as i32 + LEGEND_ROW as i32 / 2;
        for &(x, m, text) in row {
            let cx = x + 12;
            match m {
                Marker::Raw => area.draw(&Circle::new((cx, y), 5, RAW.stroke_width(2)))?,
                Marker::Normalised => {
                    area.draw(&Cross::new((cx, y), 5, NORMALISED.stroke_width(2)))?
                }
                Marker::OverRange => {
                    area.draw(&TriangleMarker::new((cx, y), 7, RAW.stroke_width(2)))?
                }
                Marker::Limit => dashes(area, (x, y), 3, 6, 9, LIMIT)?,
                Marker::Fit => area.draw(&PathElement::new(
                    vec![(x, y), (x + 24, y)],
                    FIT.stroke_width(2),
                ))?,
                Marker::Projection => dashes(area, (x, y), 4, 3, 6, FIT)?,
                Marker::Event => area.draw(&PathElement::new(
                    vec![(cx, y - 7), (cx, y + 7)],
                    EVENT.stroke_width(2),
                ))?,
            }
            area.draw(&Text::new(
                text,
                (x + 30, y),
                font.clone().pos(Pos::new(HPos::Left, VPos::Center)),
            ))?;
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn d(s: &str) -> NaiveDate {
        s.parse().unwrap()
    }

    #[test]
    fn draws_every_layer_as_xml() {
        let spec = ChartSpec {
            title: "Circuit 1 <sockets> R1+R2".into(),
            unit: "Ω".into(),
            raw: vec![
                (d("2010-01-05"), 0.40, false),
                (d("2015-07-01"), 0.55, false),
            ],
            normalised: vec![(d("2010-01-05"), 0.43), (d("2015-07-01"), 0.54)],
            limit: Some((1.16, "limit 1.16 Ω".into())),
            fit: Some([(d("2010-01-05"), 0.43), (d("2015-07-01"), 0.54)]),
            projection: Some([(d("2015-07-01"), 0.54), (d("2030-01-01"), 1.16)]),
            events: vec![(d("2012-03-03"), "device changed".into())],
            log_y: false,
        };
        let s = svg(&spec, 640, 280);
        assert!(s.starts_with("<svg role=\"img\""), "{}", &s[..80]);
        assert!(s.contains("<title>Circuit 1 &lt;sockets&gt; R1+R2</title>"));
        assert!(s.contains("limit 1.16"));
        assert!(s.contains("device changed"));
        assert!(s.contains("corrected to 20"));
    }

    #[test]
    fn log_scale_and_over_range() {
        let spec = ChartSpec {
            title: "IR".into(),
            unit: "MΩ".into(),
            log_y: true,
            raw: vec![
                (d("2010-01-05"), 200.0, true),
                (d("2020-01-01"), 2.0, false),
            ],
            limit: Some((1.0, "minimum 1.0 MΩ".into())),
            ..Default::default()
        };
        let s = svg(&spec, 640, 280);
        assert!(s.contains("over range"));
        assert!(!s.contains("could not be drawn"));
    }

    #[test]
    fn empty_chart_says_so() {
        let s = svg(&ChartSpec::default(), 640, 280);
        assert!(s.contains("could not be drawn"));
    }
}
