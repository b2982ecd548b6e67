//! Hand-made SVG charts for the HTML report: estimates with their intervals,
//! paired bars (observed and predicted, base and forecast with bands) and line
//! charts (demand curves). Plain elements only, with text labels on the chart
//! and line patterns that read without colour; nothing is fetched.

use std::fmt::Write;

use super::page::esc;

/// Width of every chart in SVG units (the page scales it down to fit).
const WIDTH: f64 = 680.0;
/// Where the plotting area starts, right of the labels.
const LEFT: f64 = 190.0;
/// Where the plotting area ends, leaving room for value labels.
const RIGHT: f64 = 600.0;
/// Fills that differ in lightness as well as in hue, so grey print tells them apart.
const LIGHT_FILL: &str = "#c9c9c9";
const DARK_FILL: &str = "#2b6a8f";
/// Line colours, each with its own dash pattern and marker below.
const PALETTE: [&str; 6] = [
    "#1f4e79", "#b5412b", "#3b7d3a", "#6b4a8a", "#8a6d1f", "#333333",
];
const DASHES: [&str; 6] = ["", "7 3", "2 3", "9 3 2 3", "4 4", "12 4"];

/// A linear map from data to SVG coordinates.
#[derive(Clone, Copy, Debug)]
struct Scale {
    d0: f64,
    d1: f64,
    r0: f64,
    r1: f64,
}

impl Scale {
    fn at(&self, x: f64) -> f64 {
        if self.d1 == self.d0 {
            return self.r0;
        }
        self.r0 + (x - self.d0) / (self.d1 - self.d0) * (self.r1 - self.r0)
    }
}

/// Round tick values covering `lo..hi` (about four steps of 1, 2 or 5 × 10^k).
pub fn ticks(lo: f64, hi: f64) -> Vec<f64> {
    if !(lo.is_finite() && hi.is_finite()) || hi <= lo {
        return vec![lo];
    }
    let raw = (hi - lo) / 4.0;
    let mag = 10f64.powf(raw.log10().floor());
    let step = [1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|m| m * mag)
        .find(|s| *s >= raw)
        .unwrap_or(10.0 * mag);
    let first = (lo / step).ceil() as i64;
    let last = (hi / step).floor() as i64;
    (first..=last.max(first)).map(|k| k as f64 * step).collect()
}

/// A tick label: few digits, no trailing noise.
fn tick_label(v: f64) -> String {
    let a = v.abs();
    if a == 0.0 {
        "0".into()
    } else if !(1e-3..1e5).contains(&a) {
        format!("{v:.0e}")
    } else {
        let s = format!("{v:.4}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    }
}

/// The opening tag of a chart, with a title for screen readers and a font stack.
fn open(height: f64, title: &str) -> String {
    format!(
        "<svg xmlns=\"http://www.w3.org/2000/svg\" viewBox=\"0 0 {WIDTH} {height:.0}\" width=\"{WIDTH}\" height=\"{height:.0}\" role=\"img\" font-family=\"system-ui, 'Segoe UI', Helvetica, Arial, sans-serif\" font-size=\"12\"><title>{}</title><rect width=\"{WIDTH}\" height=\"{height:.0}\" fill=\"#ffffff\"/>",
        esc(title)
    )
}

/// Text at a point, escaped; `anchor` is start, middle or end.
fn text(s: &mut String, x: f64, y: f64, anchor: &str, extra: &str, body: &str) {
    let _ = write!(
        s,
        "<text x=\"{x:.1}\" y=\"{y:.1}\" text-anchor=\"{anchor}\"{extra}>{}</text>",
        esc(body)
    );
}

/// Vertical grid lines and labels of a horizontal axis between `top` and `bottom`.
fn x_axis(s: &mut String, sc: Scale, tick_values: &[f64], top: f64, bottom: f64) {
    for &t in tick_values {
        let x = sc.at(t);
        let stroke = if t == 0.0 { "#555" } else { "#ddd" };
        let dash = if t == 0.0 {
            " stroke-dasharray=\"3 2\""
        } else {
            ""
        };
        let _ = write!(
            s,
            "<line x1=\"{x:.1}\" y1=\"{top:.1}\" x2=\"{x:.1}\" y2=\"{bottom:.1}\" stroke=\"{stroke}\"{dash}/>"
        );
        text(
            s,
            x,
            bottom + 12.0,
            "middle",
            " fill=\"#444\" font-size=\"10\"",
            &tick_label(t),
        );
    }
}

/// One row of the interval chart: label, estimate and 95% interval (NaN: none).
#[derive(Clone, Debug)]
pub struct Interval {
    pub label: String,
    pub value: f64,
    pub low: f64,
    pub high: f64,
    pub fixed: bool,
}

/// Estimates with their 95% intervals, one panel (and one axis) per group of
/// rows, since terms are measured in different units.
pub fn intervals(title: &str, groups: &[(String, Vec<Interval>)]) -> String {
    let row_h = 18.0;
    let height: f64 = 8.0
        + groups
            .iter()
            .map(|(_, rows)| 20.0 + row_h * rows.len() as f64 + 22.0)
            .sum::<f64>();
    let mut s = open(height, title);
    let mut y = 8.0;
    for (name, rows) in groups {
        text(
            &mut s,
            8.0,
            y + 13.0,
            "start",
            " font-weight=\"bold\"",
            name,
        );
        y += 20.0;
        let finite = rows
            .iter()
            .flat_map(|r| [r.value, r.low, r.high])
            .filter(|v| v.is_finite());
        let (lo, hi) = finite.fold((0.0f64, 0.0f64), |(a, b), v| (a.min(v), b.max(v)));
        let pad = ((hi - lo) * 0.05).max(1e-12);
        let tv = ticks(lo - pad, hi + pad);
        let d0 = tv.first().copied().unwrap_or(lo).min(lo - pad);
        let d1 = tv.last().copied().unwrap_or(hi).max(hi + pad);
        let sc = Scale {
            d0,
            d1,
            r0: LEFT,
            r1: RIGHT,
        };
        let top = y;
        let bottom = y + row_h * rows.len() as f64;
        x_axis(&mut s, sc, &tv, top, bottom);
        for r in rows {
            let cy = y + row_h / 2.0;
            text(&mut s, LEFT - 8.0, cy + 4.0, "end", "", &r.label);
            if r.low.is_finite() && r.high.is_finite() {
                let (x0, x1) = (sc.at(r.low), sc.at(r.high));
                let _ = write!(
                    s,
                    "<path d=\"M{x0:.1} {:.1}v8M{x0:.1} {cy:.1}H{x1:.1}M{x1:.1} {:.1}v8\" stroke=\"#222\" stroke-width=\"1.5\" fill=\"none\"/>",
                    cy - 4.0,
                    cy - 4.0
                );
            }
            if r.value.is_finite() {
                let x = sc.at(r.value);
                let fill = if r.fixed { "#ffffff" } else { DARK_FILL };
                let _ = write!(
                    s,
                    "<circle cx=\"{x:.1}\" cy=\"{cy:.1}\" r=\"4\" fill=\"{fill}\" stroke=\"#111\"/>"
                );
            }
            let note = if r.fixed { " (fixed)" } else { "" };
            text(
                &mut s,
                RIGHT + 10.0,
                cy + 4.0,
                "start",
                " fill=\"#333\"",
                &format!("{}{note}", super::page::short(r.value)),
            );
            y += row_h;
        }
        y += 22.0;
    }
    s.push_str("</svg>");
    s
}

/// One alternative's pair of bars: the first value, the second and, when
/// there were draws, the second's 95% band.
#[derive(Clone, Debug)]
pub struct Pair {
    pub label: String,
    pub first: f64,
    pub second: f64,
    pub band: Option<(f64, f64)>,
}

/// Paired horizontal bars with the values written beside them and a legend:
/// the first of each pair light, the second dark with its band as a whisker.
pub fn pairs(title: &str, legend: (&str, &str), rows: &[Pair]) -> String {
    let row_h = 34.0;
    let height = 36.0 + row_h * rows.len() as f64 + 24.0;
    let mut s = open(height, title);
    legend_swatch(&mut s, LEFT, 14.0, LIGHT_FILL, legend.0);
    legend_swatch(&mut s, LEFT + 170.0, 14.0, DARK_FILL, legend.1);
    if rows.iter().any(|r| r.band.is_some()) {
        let _ = write!(
            s,
            "<path d=\"M{:.1} 10v8M{:.1} 14h22M{:.1} 10v8\" stroke=\"#111\" stroke-width=\"1.5\"/>",
            LEFT + 340.0,
            LEFT + 340.0,
            LEFT + 362.0
        );
        text(&mut s, LEFT + 368.0, 18.0, "start", "", "95% band");
    }
    let hi = rows
        .iter()
        .flat_map(|r| [r.first, r.second, r.band.map(|b| b.1).unwrap_or(0.0)])
        .filter(|v| v.is_finite())
        .fold(0.0f64, f64::max);
    let tv = ticks(0.0, (hi * 1.05).max(1e-9));
    let d1 = tv.last().copied().unwrap_or(1.0).max(hi * 1.05).max(1e-9);
    let sc = Scale {
        d0: 0.0,
        d1,
        r0: LEFT,
        r1: RIGHT,
    };
    let top = 32.0;
    let bottom = top + row_h * rows.len() as f64;
    x_axis(&mut s, sc, &tv, top, bottom);
    for (i, r) in rows.iter().enumerate() {
        let y = top + row_h * i as f64 + 4.0;
        text(&mut s, LEFT - 8.0, y + 17.0, "end", "", &r.label);
        bar(&mut s, sc, y, r.first, LIGHT_FILL);
        bar(&mut s, sc, y + 13.0, r.second, DARK_FILL);
        if let Some((lo, hi)) = r.band.filter(|b| b.0.is_finite() && b.1.is_finite()) {
            let (x0, x1, cy) = (sc.at(lo), sc.at(hi), y + 18.5);
            let _ = write!(
                s,
                "<path d=\"M{x0:.1} {:.1}v9M{x0:.1} {cy:.1}H{x1:.1}M{x1:.1} {:.1}v9\" stroke=\"#111\" stroke-width=\"1.5\" fill=\"none\"/>",
                cy - 4.5,
                cy - 4.5
            );
        }
    }
    s.push_str("</svg>");
    s
}

fn legend_swatch(s: &mut String, x: f64, y: f64, fill: &str, label: &str) {
    let _ = write!(
        s,
        "<rect x=\"{x:.1}\" y=\"{:.1}\" width=\"14\" height=\"10\" fill=\"{fill}\" stroke=\"#333\"/>",
        y - 5.0
    );
    text(s, x + 20.0, y + 4.0, "start", "", label);
}

/// One bar of height 11 from zero, with its value written after it.
fn bar(s: &mut String, sc: Scale, y: f64, v: f64, fill: &str) {
    if !v.is_finite() {
        return;
    }
    let w = (sc.at(v) - sc.at(0.0)).max(0.0);
    let _ = write!(
        s,
        "<rect x=\"{LEFT:.1}\" y=\"{y:.1}\" width=\"{w:.1}\" height=\"11\" fill=\"{fill}\" stroke=\"#333\" stroke-width=\"0.6\"/>"
    );
    text(
        s,
        RIGHT + 10.0,
        y + 9.5,
        "start",
        " fill=\"#333\" font-size=\"11\"",
        &format!("{v:.4}"),
    );
}

/// One line of a line chart: its name and a y value per x.
#[derive(Clone, Debug)]
pub struct Series {
    pub name: String,
    pub ys: Vec<f64>,
}

/// Lines over a shared x axis, each with its own dash pattern, marker and
/// name written at its right end; a dashed vertical line marks `mark_x`.
pub fn lines(
    title: &str,
    x_label: &str,
    y_label: &str,
    xs: &[f64],
    series: &[Series],
    mark_x: Option<f64>,
) -> String {
    let (left, right, top, bottom) = PLOT;
    let mut s = open(380.0, title);
    let finite_x = xs.iter().copied().filter(|v| v.is_finite());
    let (x0, x1) = finite_x.fold((f64::MAX, f64::MIN), |(a, b), v| (a.min(v), b.max(v)));
    let (x0, x1) = if x0 <= x1 { (x0, x1) } else { (0.0, 1.0) };
    let y_hi = series
        .iter()
        .flat_map(|sr| sr.ys.iter().copied())
        .filter(|v| v.is_finite())
        .fold(0.0f64, f64::max);
    let ty = ticks(0.0, (y_hi * 1.08).max(1e-9));
    let y1 = ty.last().copied().unwrap_or(1.0).max(y_hi * 1.08).max(1e-9);
    let sx = Scale {
        d0: x0,
        d1: x1,
        r0: left,
        r1: right,
    };
    let sy = Scale {
        d0: 0.0,
        d1: y1,
        r0: bottom,
        r1: top,
    };
    y_grid(&mut s, sy, &ty);
    x_axis(&mut s, sx, &ticks(x0, x1), PLOT.2, PLOT.3);
    if let Some(m) = mark_x.filter(|m| (x0..=x1).contains(m)) {
        today(&mut s, sx.at(m));
    }
    frame(&mut s, x_label, y_label);
    for (k, sr) in series.iter().enumerate() {
        one_line(&mut s, sx, sy, xs, sr, k, right);
    }
    s.push_str("</svg>");
    s
}

/// The plotting area of a line chart: left, right, top, bottom.
const PLOT: (f64, f64, f64, f64) = (70.0, 540.0, 20.0, 320.0);

/// Horizontal grid lines with their labels.
fn y_grid(s: &mut String, sy: Scale, ty: &[f64]) {
    let (left, right, _, _) = PLOT;
    for &t in ty {
        let y = sy.at(t);
        let _ = write!(
            s,
            "<line x1=\"{left}\" y1=\"{y:.1}\" x2=\"{right}\" y2=\"{y:.1}\" stroke=\"#ddd\"/>"
        );
        let style = " fill=\"#444\" font-size=\"10\"";
        text(s, left - 6.0, y + 4.0, "end", style, &tick_label(t));
    }
}

/// The dashed line at the data as they are.
fn today(s: &mut String, x: f64) {
    let (_, _, top, bottom) = PLOT;
    let _ = write!(s, "<line x1=\"{x:.1}\" y1=\"{top}\" x2=\"{x:.1}\" y2=\"{bottom}\" stroke=\"#111\" stroke-dasharray=\"5 3\"/>");
    text(
        s,
        x + 4.0,
        top + 10.0,
        "start",
        " font-size=\"10\"",
        "today",
    );
}

/// The frame of the plotting area and the axis titles.
fn frame(s: &mut String, x_label: &str, y_label: &str) {
    let (left, right, top, bottom) = PLOT;
    let _ = write!(
        s,
        "<rect x=\"{left}\" y=\"{top}\" width=\"{}\" height=\"{}\" fill=\"none\" stroke=\"#555\"/>",
        right - left,
        bottom - top
    );
    text(
        s,
        (left + right) / 2.0,
        bottom + 32.0,
        "middle",
        "",
        x_label,
    );
    let mid = (top + bottom) / 2.0;
    let turn = format!(" transform=\"rotate(-90 14 {mid:.1})\"");
    text(s, 14.0, mid, "middle", &turn, y_label);
}

/// One series: the polyline, a marker per point and its name at the right end.
fn one_line(s: &mut String, sx: Scale, sy: Scale, xs: &[f64], sr: &Series, k: usize, right: f64) {
    let colour = PALETTE[k % PALETTE.len()];
    let dash = DASHES[k % DASHES.len()];
    let pts: Vec<(f64, f64)> = xs
        .iter()
        .zip(&sr.ys)
        .filter(|(x, y)| x.is_finite() && y.is_finite())
        .map(|(x, y)| (sx.at(*x), sy.at(*y)))
        .collect();
    let path: Vec<String> = pts.iter().map(|(x, y)| format!("{x:.1},{y:.1}")).collect();
    let dash_attr = if dash.is_empty() {
        String::new()
    } else {
        format!(" stroke-dasharray=\"{dash}\"")
    };
    let _ = write!(
        s,
        "<polyline points=\"{}\" fill=\"none\" stroke=\"{colour}\" stroke-width=\"2\"{dash_attr}/>",
        path.join(" ")
    );
    for (x, y) in &pts {
        marker(s, *x, *y, k, colour);
    }
    if let Some((_, y)) = pts.last() {
        text(
            s,
            right + 8.0,
            y + 4.0,
            "start",
            &format!(" fill=\"{colour}\""),
            &sr.name,
        );
    }
}

/// A marker of shape `k` (circle, square, triangle, diamond, cross, ring).
fn marker(s: &mut String, x: f64, y: f64, k: usize, colour: &str) {
    let _ = match k % 6 {
        0 => write!(s, "<circle cx=\"{x:.1}\" cy=\"{y:.1}\" r=\"3\" fill=\"{colour}\"/>"),
        1 => write!(s, "<rect x=\"{:.1}\" y=\"{:.1}\" width=\"6\" height=\"6\" fill=\"{colour}\"/>", x - 3.0, y - 3.0),
        2 => write!(s, "<path d=\"M{x:.1} {:.1}l3.5 6h-7z\" fill=\"{colour}\"/>", y - 3.5),
        3 => write!(s, "<path d=\"M{x:.1} {:.1}l4 4-4 4-4-4z\" fill=\"{colour}\"/>", y - 4.0),
        4 => write!(s, "<path d=\"M{:.1} {:.1}l6 6m0-6l-6 6\" stroke=\"{colour}\" stroke-width=\"1.5\"/>", x - 3.0, y - 3.0),
        _ => write!(s, "<circle cx=\"{x:.1}\" cy=\"{y:.1}\" r=\"3\" fill=\"#fff\" stroke=\"{colour}\" stroke-width=\"1.5\"/>"),
    };
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ticks_are_round_and_cover_the_range() {
        // Fact of the construction: steps of 1, 2 or 5 times a power of ten.
        assert_eq!(ticks(0.0, 1.0), vec![0.0, 0.5, 1.0]);
        let t = ticks(-0.35, 0.12);
        assert!(t.iter().all(|v| (v * 10.0).round() == v * 10.0), "{t:?}");
        assert!(t.contains(&0.0));
    }

    #[test]
    fn a_chart_is_one_svg_element_with_escaped_text() {
        let svg = pairs(
            "a < b",
            ("observed", "predicted"),
            &[Pair {
                label: "x&y".into(),
                first: 0.2,
                second: 0.3,
                band: Some((0.25, 0.35)),
            }],
        );
        assert!(svg.starts_with("<svg") && svg.ends_with("</svg>"));
        assert!(svg.contains("x&amp;y") && svg.contains("a &lt; b"));
    }
}
