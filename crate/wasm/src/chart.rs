//! Charts on canvas with plotters-canvas. Each `draw_*` takes a canvas and a plain spec object and
//! returns the plot area's pixel geometry so the page can map a click to a bar or a point.

use plotters::coord::Shift;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use plotters::prelude::*;
use plotters_canvas::CanvasBackend;
use serde::{Deserialize, Serialize};
use wasm_bindgen::prelude::*;
use web_sys::HtmlCanvasElement;

// Our palette (see web/style.css): ink, paper, slate-teal bars, amber band, rust flags.
const INK: RGBColor = RGBColor(0x1f, 0x2a, 0x30);
const GRID: RGBColor = RGBColor(0xd9, 0xd4, 0xc7);
const BAR: RGBColor = RGBColor(0x3d, 0x7a, 0x78);
const BAR_FLAG1: RGBColor = RGBColor(0xd0, 0x8a, 0x2e);
const BAR_FLAG2: RGBColor = RGBColor(0xa8, 0x3c, 0x2a);
const EXPECT: RGBColor = RGBColor(0x1f, 0x2a, 0x30);
const BAND: RGBColor = RGBColor(0xe9, 0xc4, 0x6a);

#[derive(Serialize)]
pub struct Geometry {
    pub left: i32,
    pub right: i32,
    pub top: i32,
    pub bottom: i32,
    pub x_min: f64,
    pub x_max: f64,
    pub y_min: f64,
    pub y_max: f64,
    pub log_x: bool,
}

fn js_err(e: impl std::fmt::Display) -> JsValue {
    JsValue::from_str(&e.to_string())
}

fn backend(canvas: HtmlCanvasElement) -> Result<DrawingArea<CanvasBackend, Shift>, JsValue> {
    let b = CanvasBackend::with_canvas_object(canvas).ok_or_else(|| js_err("no 2d canvas context"))?;
    let root = b.into_drawing_area();
    root.fill(&WHITE).map_err(js_err)?;
    Ok(root)
}

fn geometry<DB: DrawingBackend, X: Ranged<ValueType = f64>, Y: Ranged<ValueType = f64>>(
    chart: &ChartContext<DB, Cartesian2d<X, Y>>,
    xr: (f64, f64),
    yr: (f64, f64),
    log_x: bool,
) -> Geometry {
    let (xs, ys) = chart.plotting_area().get_pixel_range();
    Geometry {
        left: xs.start,
        right: xs.end,
        top: ys.start,
        bottom: ys.end,
        x_min: xr.0,
        x_max: xr.1,
        y_min: yr.0,
        y_max: yr.1,
        log_x,
    }
}

#[derive(Deserialize)]
pub struct DigitSpec {
    pub title: String,
    /// Digit value of the first bin (1, 0, 10, 100 ...).
    pub first_bin: u32,
    pub observed: Vec<f64>,
    pub expected: Vec<f64>,
    #[serde(default)]
    pub band_lo: Vec<f64>,
    #[serde(default)]
    pub band_hi: Vec<f64>,
    /// 0 none, 1 |Z| > 1.96, 2 |Z| > 2.576.
    #[serde(default)]
    pub flags: Vec<u8>,
    #[serde(default = "one")]
    pub scale: f64,
    #[serde(default)]
    pub x_label: String,
    #[serde(default)]
    pub y_label: String,
    /// Highlight one bin (selected for drill-down), by index.
    #[serde(default)]
    pub selected: Option<usize>,
}

fn one() -> f64 {
    1.0
}

/// Bars of observed proportions, the expected curve, its 95 % band, flagged bins in warm colours.
#[wasm_bindgen(js_name = drawDigitChart)]
pub fn draw_digit_chart(canvas: HtmlCanvasElement, spec: JsValue) -> Result<JsValue, JsValue> {
    let s: DigitSpec = serde_wasm_bindgen::from_value(spec).map_err(js_err)?;
    let k = s.observed.len();
    if k == 0 || s.expected.len() != k {
        return Err(js_err("digit chart needs observed and expected of the same length"));
    }
    let root = backend(canvas)?;
    let px = |v: f64| (v * s.scale).round() as i32;
    let ymax = s
        .observed
        .iter()
        .chain(s.expected.iter())
        .chain(s.band_hi.iter())
        .cloned()
        .fold(0.0f64, f64::max)
        * 1.12;
    let ymax = if ymax > 0.0 { ymax } else { 1.0 };
    let xr = (s.first_bin as f64 - 0.5, s.first_bin as f64 + k as f64 - 0.5);
    let mut chart = ChartBuilder::on(&root)
        .caption(&s.title, ("sans-serif", px(15.0)).into_font().color(&INK))
        .margin(px(8.0))
        .x_label_area_size(px(34.0))
        .y_label_area_size(px(52.0))
        .build_cartesian_2d(xr.0..xr.1, 0.0..ymax)
        .map_err(js_err)?;
    let label_every = if k > 50 { 10 } else if k > 12 { 5 } else { 1 };
    let first = s.first_bin;
    chart
        .configure_mesh()
        .disable_x_mesh()
        .max_light_lines(0)
        .bold_line_style(GRID)
        .axis_style(INK)
        .x_labels(k.min(12).max(2))
        .x_label_formatter(&|v| {
            let d = v.round() as i64;
            if (d - first as i64) % label_every as i64 == 0 { format!("{d}") } else { String::new() }
        })
        .y_label_formatter(&|v| format!("{:.1} %", v * 100.0))
        .x_desc(s.x_label.as_str())
        .y_desc(s.y_label.as_str())
        .label_style(("sans-serif", px(11.0)).into_font().color(&INK))
        .draw()
        .map_err(js_err)?;
    // Band: a shaded rectangle per bin.
    if s.band_lo.len() == k && s.band_hi.len() == k {
        chart
            .draw_series((0..k).map(|i| {
                let x = first as f64 + i as f64;
                Rectangle::new([(x - 0.5, s.band_lo[i]), (x + 0.5, s.band_hi[i])], BAND.mix(0.35).filled())
            }))
            .map_err(js_err)?;
    }
    chart
        .draw_series((0..k).map(|i| {
            let x = first as f64 + i as f64;
            let c = match s.flags.get(i).copied().unwrap_or(0) {
                2 => BAR_FLAG2,
                1 => BAR_FLAG1,
                _ => BAR,
            };
            let w = if k > 50 { 0.36 } else { 0.32 };
            let style = if s.selected == Some(i) { INK.filled() } else { c.filled() };
            Rectangle::new([(x - w, 0.0), (x + w, s.observed[i])], style)
        }))
        .map_err(js_err)?;
    chart
        .draw_series(LineSeries::new(
            (0..k).map(|i| (first as f64 + i as f64, s.expected[i])),
            ShapeStyle { color: EXPECT.to_rgba(), filled: false, stroke_width: px(2.0).max(1) as u32 },
        ))
        .map_err(js_err)?;
    let g = geometry(&chart, xr, (0.0, ymax), false);
    root.present().map_err(js_err)?;
    crate::to_js(&g)
}

#[derive(Deserialize)]
pub struct ScatterPoint {
    pub x: f64,
    pub y: f64,
    #[serde(default)]
    pub alarm: bool,
    #[serde(default)]
    pub selected: bool,
}

#[derive(Deserialize)]
pub struct Curve {
    pub label: String,
    pub points: Vec<(f64, f64)>,
    #[serde(default)]
    pub dashed: bool,
}

#[derive(Deserialize)]
pub struct ScatterSpec {
    pub title: String,
    pub points: Vec<ScatterPoint>,
    #[serde(default)]
    pub curves: Vec<Curve>,
    #[serde(default)]
    pub log_x: bool,
    #[serde(default = "one")]
    pub scale: f64,
    #[serde(default)]
    pub x_label: String,
    #[serde(default)]
    pub y_label: String,
    #[serde(default)]
    pub y_min: Option<f64>,
    #[serde(default)]
    pub y_max: Option<f64>,
    /// Draw points joined as a line (evidence over time) instead of dots.
    #[serde(default)]
    pub as_line: bool,
    /// Horizontal reference lines: (y, label).
    #[serde(default)]
    pub h_lines: Vec<(f64, String)>,
    /// Vertical markers: (x, label).
    #[serde(default)]
    pub v_lines: Vec<(f64, String)>,
    /// Put the curves' legend in the lower right corner (default: upper right).
    #[serde(default)]
    pub legend_lower: bool,
    /// x values are days since 1970-01-01: label as dates.
    #[serde(default)]
    pub x_dates: bool,
}

/// Points (or a line) with optional curves and reference lines; x may be log-scaled or dates.
#[wasm_bindgen(js_name = drawScatter)]
pub fn draw_scatter(canvas: HtmlCanvasElement, spec: JsValue) -> Result<JsValue, JsValue> {
    let mut s: ScatterSpec = serde_wasm_bindgen::from_value(spec).map_err(js_err)?;
    // Non-finite values (an evidence of zero is -inf on a log scale) are left out of the picture.
    s.points.retain(|p| p.x.is_finite() && p.y.is_finite());
    for c in &mut s.curves {
        c.points.retain(|p| p.0.is_finite() && p.1.is_finite());
    }
    s.h_lines.retain(|h| h.0.is_finite());
    let root = backend(canvas)?;
    let px = |v: f64| (v * s.scale).round() as i32;
    let tx = |x: f64| if s.log_x { x.max(1e-9).log10() } else { x };
    let xs = s
        .points
        .iter()
        .map(|p| p.x)
        .chain(s.curves.iter().flat_map(|c| c.points.iter().map(|p| p.0)))
        .chain(s.v_lines.iter().map(|v| v.0).filter(|x| x.is_finite()));
    let ys = s
        .points
        .iter()
        .map(|p| p.y)
        .chain(s.curves.iter().flat_map(|c| c.points.iter().map(|p| p.1)))
        .chain(s.h_lines.iter().map(|h| h.0));
    let (mut x0, mut x1) = xs.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| (a.min(tx(v)), b.max(tx(v))));
    let (mut y0, mut y1) = ys.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| (a.min(v), b.max(v)));
    if !x0.is_finite() {
        x0 = 0.0;
        x1 = 1.0;
    }
    if !y0.is_finite() {
        y0 = 0.0;
        y1 = 1.0;
    }
    if x1 <= x0 {
        x1 = x0 + 1.0;
    }
    let pad = (x1 - x0) * 0.03;
    x0 -= pad;
    x1 += pad;
    let y0 = s.y_min.unwrap_or(y0.min(0.0));
    let y1 = s.y_max.unwrap_or(y1 + (y1 - y0).abs() * 0.08).max(y0 + 1e-12);
    let mut chart = ChartBuilder::on(&root)
        .caption(&s.title, ("sans-serif", px(15.0)).into_font().color(&INK))
        .margin(px(10.0))
        .x_label_area_size(px(34.0))
        .y_label_area_size(px(58.0))
        .build_cartesian_2d(x0..x1, y0..y1)
        .map_err(js_err)?;
    let log_x = s.log_x;
    let x_dates = s.x_dates;
    chart
        .configure_mesh()
        .max_light_lines(0)
        .bold_line_style(GRID)
        .axis_style(INK)
        .x_label_formatter(&|v| {
            if log_x {
                let n = 10f64.powf(*v);
                if n >= 1000.0 { format!("{:.0}k", n / 1000.0) } else { format!("{:.0}", n) }
            } else if x_dates {
                let (y, m, _) = digitdrift_core::intake::civil_from_days(v.round() as i32);
                format!("{y}-{m:02}")
            } else {
                // Rounded so that steps like 0.1 + 0.2 do not print as 0.30000000000000004.
                format!("{}", (v * 1e6).round() / 1e6)
            }
        })
        .x_desc(s.x_label.as_str())
        .y_desc(s.y_label.as_str())
        .label_style(("sans-serif", px(11.0)).into_font().color(&INK))
        .draw()
        .map_err(js_err)?;
    let curve_colors = [BAR_FLAG2, BAR_FLAG1, BAR, INK];
    for (ci, c) in s.curves.iter().enumerate() {
        let col = curve_colors[ci % curve_colors.len()];
        let style = ShapeStyle { color: col.to_rgba(), filled: false, stroke_width: px(2.0).max(1) as u32 };
        let pts: Vec<(f64, f64)> = c.points.iter().map(|&(x, y)| (tx(x), y)).collect();
        if c.dashed {
            chart
                .draw_series(pts.windows(2).enumerate().filter(|(i, _)| i % 2 == 0).map(|(_, w)| PathElement::new(vec![w[0], w[1]], style)))
                .map_err(js_err)?
                .label(c.label.as_str())
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], style));
        } else {
            chart
                .draw_series(LineSeries::new(pts, style))
                .map_err(js_err)?
                .label(c.label.as_str())
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], style));
        }
    }
    for (y, label) in &s.h_lines {
        let style = ShapeStyle { color: BAR_FLAG2.to_rgba(), filled: false, stroke_width: px(1.5).max(1) as u32 };
        chart.draw_series(LineSeries::new(vec![(x0, *y), (x1, *y)], style)).map_err(js_err)?;
        chart
            .draw_series(std::iter::once(Text::new(label.clone(), (x0 + (x1 - x0) * 0.01, *y), ("sans-serif", px(11.0)).into_font().color(&BAR_FLAG2))))
            .map_err(js_err)?;
    }
    for (x, label) in &s.v_lines {
        let style = ShapeStyle { color: BAR_FLAG2.to_rgba(), filled: false, stroke_width: px(1.5).max(1) as u32 };
        let xv = tx(*x);
        chart.draw_series(LineSeries::new(vec![(xv, y0), (xv, y1)], style)).map_err(js_err)?;
        // near the right edge the label goes to the left of its line, so that it is not cut off
        let right = (xv - x0) / (x1 - x0) > 0.85;
        let font = ("sans-serif", px(11.0)).into_font().color(&BAR_FLAG2);
        let (at, font) = if right {
            ((xv - (x1 - x0) * 0.01, y1 - (y1 - y0) * 0.02), font.pos(Pos::new(HPos::Right, VPos::Top)))
        } else {
            ((xv, y1 - (y1 - y0) * 0.02), font)
        };
        chart.draw_series(std::iter::once(Text::new(label.clone(), at, font))).map_err(js_err)?;
    }
    if s.as_line {
        let style = ShapeStyle { color: BAR.to_rgba(), filled: false, stroke_width: px(2.0).max(1) as u32 };
        chart.draw_series(LineSeries::new(s.points.iter().map(|p| (tx(p.x), p.y)), style)).map_err(js_err)?;
    } else {
        let r = px(3.5).max(2);
        chart
            .draw_series(s.points.iter().map(|p| {
                let c = if p.alarm { BAR_FLAG2 } else { BAR };
                let style = if p.selected { INK.filled() } else { c.mix(0.85).filled() };
                Circle::new((tx(p.x), p.y), if p.selected { r + 2 } else { r }, style)
            }))
            .map_err(js_err)?;
    }
    if !s.curves.is_empty() {
        chart
            .configure_series_labels()
            .position(if s.legend_lower { SeriesLabelPosition::LowerRight } else { SeriesLabelPosition::UpperRight })
            .background_style(WHITE.mix(0.85))
            .border_style(GRID)
            .label_font(("sans-serif", px(11.0)).into_font().color(&INK))
            .draw()
            .map_err(js_err)?;
    }
    let g = geometry(&chart, (x0, x1), (y0, y1), log_x);
    root.present().map_err(js_err)?;
    crate::to_js(&g)
}
