//! A small SVG plotter for line series (J against dihedral) and scatter points
//! with error bars (calculated against observed couplings). No external crates:
//! the SVG is written as text. Non-finite values are skipped, never drawn.
//!
//! ```
//! use vicinal::plot::{LineSeries, Plot, ScatterPoint, ScatterSeries};
//! let mut p = Plot::new("demo", "x (units)", "y (units)");
//! p.line(LineSeries::new("curve", vec![(0.0, 1.0), (1.0, 2.0)]));
//! p.scatter(ScatterSeries::new("data", vec![ScatterPoint::new(0.5, 1.4).y_err(0.2)]));
//! let svg = p.to_svg();
//! assert!(svg.starts_with("<svg"));
//! ```

use std::fmt::Write as _;

/// Colours used for series in order (colour-blind-safe palette of Okabe & Ito).
const PALETTE: [&str; 8] = [
    "#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#F0E442", "#000000",
];

/// A polyline through (x, y) points, in the order given.
#[derive(Debug, Clone, PartialEq)]
pub struct LineSeries {
    /// Legend label.
    pub label: String,
    /// Points in data units.
    pub points: Vec<(f64, f64)>,
    /// CSS colour; `None` takes the next palette colour.
    pub color: Option<String>,
    /// Draw dashed.
    pub dashed: bool,
}

impl LineSeries {
    /// A solid line in the next palette colour.
    pub fn new(label: impl Into<String>, points: Vec<(f64, f64)>) -> Self {
        LineSeries {
            label: label.into(),
            points,
            color: None,
            dashed: false,
        }
    }

    /// Sets the colour.
    pub fn color(mut self, c: impl Into<String>) -> Self {
        self.color = Some(c.into());
        self
    }

    /// Draws the line dashed.
    pub fn dashed(mut self) -> Self {
        self.dashed = true;
        self
    }
}

/// One scatter point with optional symmetric error bars (same units as the axes).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ScatterPoint {
    /// x in data units.
    pub x: f64,
    /// y in data units.
    pub y: f64,
    /// Half-width of the horizontal error bar.
    pub x_err: Option<f64>,
    /// Half-height of the vertical error bar.
    pub y_err: Option<f64>,
}

impl ScatterPoint {
    /// A point without error bars.
    pub fn new(x: f64, y: f64) -> Self {
        ScatterPoint {
            x,
            y,
            x_err: None,
            y_err: None,
        }
    }

    /// Adds a horizontal error bar ± `e`.
    pub fn x_err(mut self, e: f64) -> Self {
        self.x_err = Some(e.abs());
        self
    }

    /// Adds a vertical error bar ± `e`.
    pub fn y_err(mut self, e: f64) -> Self {
        self.y_err = Some(e.abs());
        self
    }
}

/// A set of scatter points sharing a label and colour.
#[derive(Debug, Clone, PartialEq)]
pub struct ScatterSeries {
    /// Legend label.
    pub label: String,
    /// The points.
    pub points: Vec<ScatterPoint>,
    /// CSS colour; `None` takes the next palette colour.
    pub color: Option<String>,
}

impl ScatterSeries {
    /// A scatter series in the next palette colour.
    pub fn new(label: impl Into<String>, points: Vec<ScatterPoint>) -> Self {
        ScatterSeries {
            label: label.into(),
            points,
            color: None,
        }
    }

    /// Sets the colour.
    pub fn color(mut self, c: impl Into<String>) -> Self {
        self.color = Some(c.into());
        self
    }
}

/// A two-dimensional plot with labelled axes (put the units in the labels,
/// e.g. `"3J(H,H) (Hz)"`).
#[derive(Debug, Clone, PartialEq)]
pub struct Plot {
    title: String,
    x_label: String,
    y_label: String,
    x_range: Option<(f64, f64)>,
    y_range: Option<(f64, f64)>,
    x_ticks: Option<Vec<f64>>,
    y_ticks: Option<Vec<f64>>,
    width: f64,
    height: f64,
    identity: Option<String>,
    lines: Vec<LineSeries>,
    scatters: Vec<ScatterSeries>,
}

impl Plot {
    /// An empty 640×420 plot.
    pub fn new(
        title: impl Into<String>,
        x_label: impl Into<String>,
        y_label: impl Into<String>,
    ) -> Self {
        Plot {
            title: title.into(),
            x_label: x_label.into(),
            y_label: y_label.into(),
            x_range: None,
            y_range: None,
            x_ticks: None,
            y_ticks: None,
            width: 640.0,
            height: 420.0,
            identity: None,
            lines: Vec::new(),
            scatters: Vec::new(),
        }
    }

    /// Fixes the x range (data units); otherwise it is fitted to the data.
    pub fn x_range(&mut self, lo: f64, hi: f64) -> &mut Self {
        if lo.is_finite() && hi.is_finite() && hi > lo {
            self.x_range = Some((lo, hi));
        }
        self
    }

    /// Fixes the y range (data units); otherwise it is fitted to the data.
    pub fn y_range(&mut self, lo: f64, hi: f64) -> &mut Self {
        if lo.is_finite() && hi.is_finite() && hi > lo {
            self.y_range = Some((lo, hi));
        }
        self
    }

    /// Places x ticks at these values instead of automatic ones.
    pub fn x_ticks(&mut self, ticks: &[f64]) -> &mut Self {
        self.x_ticks = Some(ticks.to_vec());
        self
    }

    /// Places y ticks at these values instead of automatic ones.
    pub fn y_ticks(&mut self, ticks: &[f64]) -> &mut Self {
        self.y_ticks = Some(ticks.to_vec());
        self
    }

    /// Sets the image size in pixels.
    pub fn size(&mut self, width: f64, height: f64) -> &mut Self {
        if width >= 100.0 && height >= 100.0 {
            self.width = width;
            self.height = height;
        }
        self
    }

    /// Draws the line y = x (for calculated-against-observed plots).
    pub fn identity_line(&mut self, label: impl Into<String>) -> &mut Self {
        self.identity = Some(label.into());
        self
    }

    /// Adds a line series.
    pub fn line(&mut self, s: LineSeries) -> &mut Self {
        self.lines.push(s);
        self
    }

    /// Adds a scatter series.
    pub fn scatter(&mut self, s: ScatterSeries) -> &mut Self {
        self.scatters.push(s);
        self
    }

    fn data_bounds(&self) -> ((f64, f64), (f64, f64)) {
        let mut xs = (f64::INFINITY, f64::NEG_INFINITY);
        let mut ys = (f64::INFINITY, f64::NEG_INFINITY);
        let mut add = |x: f64, y: f64, ex: f64, ey: f64| {
            if x.is_finite() && y.is_finite() {
                xs = (xs.0.min(x - ex), xs.1.max(x + ex));
                ys = (ys.0.min(y - ey), ys.1.max(y + ey));
            }
        };
        for l in &self.lines {
            for &(x, y) in &l.points {
                add(x, y, 0.0, 0.0);
            }
        }
        for s in &self.scatters {
            for p in &s.points {
                let f = |e: Option<f64>| e.filter(|v| v.is_finite()).unwrap_or(0.0);
                add(p.x, p.y, f(p.x_err), f(p.y_err));
            }
        }
        (fix_range(xs), fix_range(ys))
    }

    /// Renders the plot as a standalone SVG document.
    pub fn to_svg(&self) -> String {
        let (dx, dy) = self.data_bounds();
        let mut xr = self.x_range.unwrap_or_else(|| pad(dx));
        let mut yr = self.y_range.unwrap_or_else(|| pad(dy));
        if self.identity.is_some() && self.x_range.is_none() && self.y_range.is_none() {
            let r = (xr.0.min(yr.0), xr.1.max(yr.1));
            xr = r;
            yr = r;
        }
        let xt = self.x_ticks.clone().unwrap_or_else(|| nice_ticks(xr));
        let yt = self.y_ticks.clone().unwrap_or_else(|| nice_ticks(yr));
        let (w, h) = (self.width, self.height);
        let (left, right, top, bottom) = (70.0, 20.0, 40.0, 55.0);
        let pw = w - left - right;
        let ph = h - top - bottom;
        let sx = |x: f64| left + (x - xr.0) / (xr.1 - xr.0) * pw;
        let sy = |y: f64| top + ph - (y - yr.0) / (yr.1 - yr.0) * ph;
        let inside = |x: f64, y: f64| x.is_finite() && y.is_finite();

        let mut s = String::new();
        let _ = writeln!(
            s,
            r#"<svg xmlns="http://www.w3.org/2000/svg" width="{w}" height="{h}" viewBox="0 0 {w} {h}" font-family="sans-serif" font-size="12">"#
        );
        let _ = writeln!(
            s,
            r#"<rect x="0" y="0" width="{w}" height="{h}" fill="white"/>"#
        );
        let _ = writeln!(
            s,
            r#"<text x="{:.1}" y="22" text-anchor="middle" font-size="14">{}</text>"#,
            left + pw / 2.0,
            esc(&self.title)
        );
        let _ = writeln!(
            s,
            r#"<defs><clipPath id="plotarea"><rect x="{left}" y="{top}" width="{pw}" height="{ph}"/></clipPath></defs>"#
        );
        // Grid and ticks.
        for &t in xt
            .iter()
            .filter(|t| **t >= xr.0 - 1e-9 && **t <= xr.1 + 1e-9)
        {
            let x = sx(t);
            let _ = writeln!(
                s,
                r##"<line x1="{x:.2}" y1="{top}" x2="{x:.2}" y2="{:.2}" stroke="#e0e0e0"/>"##,
                top + ph
            );
            let _ = writeln!(
                s,
                r#"<text x="{x:.2}" y="{:.2}" text-anchor="middle">{}</text>"#,
                top + ph + 16.0,
                fmt_tick(t)
            );
        }
        for &t in yt
            .iter()
            .filter(|t| **t >= yr.0 - 1e-9 && **t <= yr.1 + 1e-9)
        {
            let y = sy(t);
            let _ = writeln!(
                s,
                r##"<line x1="{left}" y1="{y:.2}" x2="{:.2}" y2="{y:.2}" stroke="#e0e0e0"/>"##,
                left + pw
            );
            let _ = writeln!(
                s,
                r#"<text x="{:.2}" y="{:.2}" text-anchor="end">{}</text>"#,
                left - 6.0,
                y + 4.0,
                fmt_tick(t)
            );
        }
        let _ = writeln!(
            s,
            r#"<rect x="{left}" y="{top}" width="{pw}" height="{ph}" fill="none" stroke="black"/>"#
        );
        let _ = writeln!(
            s,
            r#"<text x="{:.1}" y="{:.1}" text-anchor="middle">{}</text>"#,
            left + pw / 2.0,
            h - 12.0,
            esc(&self.x_label)
        );
        let _ = writeln!(
            s,
            r#"<text x="18" y="{:.1}" text-anchor="middle" transform="rotate(-90 18 {:.1})">{}</text>"#,
            top + ph / 2.0,
            top + ph / 2.0,
            esc(&self.y_label)
        );
        let _ = writeln!(s, r#"<g clip-path="url(#plotarea)">"#);
        let mut legend: Vec<(String, String, bool)> = Vec::new();
        let mut k = 0usize;
        let mut next_color = |c: &Option<String>| {
            let col = c
                .clone()
                .unwrap_or_else(|| PALETTE[k % PALETTE.len()].to_string());
            k += 1;
            col
        };
        if let Some(label) = &self.identity {
            let lo = xr.0.max(yr.0);
            let hi = xr.1.min(yr.1);
            if hi > lo {
                let _ = writeln!(
                    s,
                    r##"<line x1="{:.2}" y1="{:.2}" x2="{:.2}" y2="{:.2}" stroke="#888888" stroke-dasharray="4 3"/>"##,
                    sx(lo),
                    sy(lo),
                    sx(hi),
                    sy(hi)
                );
                legend.push((label.clone(), "#888888".to_string(), true));
            }
        }
        for l in &self.lines {
            let col = next_color(&l.color);
            // Break the polyline at non-finite points.
            let mut segs: Vec<Vec<(f64, f64)>> = vec![Vec::new()];
            for &(x, y) in &l.points {
                if inside(x, y) {
                    if let Some(seg) = segs.last_mut() {
                        seg.push((sx(x), sy(y)));
                    }
                } else if segs.last().map(|v| !v.is_empty()).unwrap_or(false) {
                    segs.push(Vec::new());
                }
            }
            for seg in segs.iter().filter(|v| v.len() > 1) {
                let pts: Vec<String> = seg.iter().map(|(x, y)| format!("{x:.2},{y:.2}")).collect();
                let dash = if l.dashed {
                    r#" stroke-dasharray="6 4""#
                } else {
                    ""
                };
                let _ = writeln!(
                    s,
                    r#"<polyline points="{}" fill="none" stroke="{}" stroke-width="1.8"{dash}/>"#,
                    pts.join(" "),
                    esc(&col)
                );
            }
            legend.push((l.label.clone(), col, true));
        }
        for sc in &self.scatters {
            let col = next_color(&sc.color);
            for p in sc.points.iter().filter(|p| inside(p.x, p.y)) {
                let (x, y) = (sx(p.x), sy(p.y));
                if let Some(e) = p.y_err.filter(|e| e.is_finite() && *e > 0.0) {
                    let (y0, y1) = (sy(p.y - e), sy(p.y + e));
                    let _ = writeln!(
                        s,
                        r#"<path d="M{x:.2},{y0:.2}V{y1:.2}M{:.2},{y0:.2}H{:.2}M{:.2},{y1:.2}H{:.2}" stroke="{}" fill="none"/>"#,
                        x - 3.0,
                        x + 3.0,
                        x - 3.0,
                        x + 3.0,
                        esc(&col)
                    );
                }
                if let Some(e) = p.x_err.filter(|e| e.is_finite() && *e > 0.0) {
                    let (x0, x1) = (sx(p.x - e), sx(p.x + e));
                    let _ = writeln!(
                        s,
                        r#"<path d="M{x0:.2},{y:.2}H{x1:.2}M{x0:.2},{:.2}V{:.2}M{x1:.2},{:.2}V{:.2}" stroke="{}" fill="none"/>"#,
                        y - 3.0,
                        y + 3.0,
                        y - 3.0,
                        y + 3.0,
                        esc(&col)
                    );
                }
                let _ = writeln!(
                    s,
                    r#"<circle cx="{x:.2}" cy="{y:.2}" r="3.5" fill="{}"/>"#,
                    esc(&col)
                );
            }
            legend.push((sc.label.clone(), col, false));
        }
        let _ = writeln!(s, "</g>");
        // Legend, inside the plot area in its emptiest corner.
        let shown: Vec<_> = legend.iter().filter(|(l, _, _)| !l.is_empty()).collect();
        if !shown.is_empty() {
            let lw = shown
                .iter()
                .map(|(l, _, _)| l.chars().count())
                .max()
                .unwrap_or(0) as f64
                * 7.0
                + 40.0;
            let lh = shown.len() as f64 * 16.0 + 6.0;
            // The corner whose box covers the fewest data points (ties: top
            // right, top left, bottom right, bottom left).
            let corners = [
                (left + pw - lw - 8.0, top + 8.0),
                (left + 8.0, top + 8.0),
                (left + pw - lw - 8.0, top + ph - lh - 8.0),
                (left + 8.0, top + ph - lh - 8.0),
            ];
            let mut pts: Vec<(f64, f64)> = Vec::new();
            for l in &self.lines {
                pts.extend(
                    l.points
                        .iter()
                        .filter(|p| p.0.is_finite() && p.1.is_finite())
                        .map(|p| (sx(p.0), sy(p.1))),
                );
            }
            for sc in &self.scatters {
                pts.extend(
                    sc.points
                        .iter()
                        .filter(|p| p.x.is_finite() && p.y.is_finite())
                        .map(|p| (sx(p.x), sy(p.y))),
                );
            }
            let covered = |&(cx, cy): &(f64, f64)| {
                pts.iter()
                    .filter(|&&(x, y)| {
                        x >= cx - 6.0 && x <= cx + lw + 6.0 && y >= cy - 6.0 && y <= cy + lh + 6.0
                    })
                    .count()
            };
            let (x0, y0) = corners
                .iter()
                .min_by_key(|c| covered(c))
                .copied()
                .unwrap_or(corners[0]);
            let _ = writeln!(
                s,
                r##"<rect x="{x0:.1}" y="{y0:.1}" width="{lw:.1}" height="{lh:.1}" fill="white" fill-opacity="0.85" stroke="#999999"/>"##
            );
            for (i, (label, col, is_line)) in shown.iter().enumerate() {
                let y = y0 + 14.0 + i as f64 * 16.0;
                if *is_line {
                    let _ = writeln!(
                        s,
                        r#"<line x1="{:.1}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="{}" stroke-width="1.8"/>"#,
                        x0 + 6.0,
                        y - 4.0,
                        x0 + 26.0,
                        y - 4.0,
                        esc(col)
                    );
                } else {
                    let _ = writeln!(
                        s,
                        r#"<circle cx="{:.1}" cy="{:.1}" r="3.5" fill="{}"/>"#,
                        x0 + 16.0,
                        y - 4.0,
                        esc(col)
                    );
                }
                let _ = writeln!(
                    s,
                    r#"<text x="{:.1}" y="{y:.1}">{}</text>"#,
                    x0 + 32.0,
                    esc(label)
                );
            }
        }
        s.push_str("</svg>\n");
        s
    }
}

fn fix_range(r: (f64, f64)) -> (f64, f64) {
    if !(r.0.is_finite() && r.1.is_finite()) {
        (0.0, 1.0)
    } else if r.1 - r.0 < 1e-12 {
        (r.0 - 0.5, r.1 + 0.5)
    } else {
        r
    }
}

fn pad(r: (f64, f64)) -> (f64, f64) {
    let d = (r.1 - r.0) * 0.05;
    (r.0 - d, r.1 + d)
}

fn nice_step(raw: f64) -> f64 {
    let p = 10f64.powf(raw.log10().floor());
    let f = raw / p;
    let m = if f < 1.5 {
        1.0
    } else if f < 3.0 {
        2.0
    } else if f < 7.0 {
        5.0
    } else {
        10.0
    };
    m * p
}

/// About six evenly spaced "round" tick values covering `r`.
fn nice_ticks(r: (f64, f64)) -> Vec<f64> {
    let step = nice_step((r.1 - r.0) / 6.0);
    if !(step.is_finite() && step > 0.0) {
        return Vec::new();
    }
    let mut t = (r.0 / step).ceil() * step;
    let mut out = Vec::new();
    while t <= r.1 + step * 1e-9 && out.len() < 50 {
        out.push(if t.abs() < step * 1e-9 { 0.0 } else { t });
        t += step;
    }
    out
}

fn fmt_tick(t: f64) -> String {
    let s = format!("{t:.3}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".to_string()
    } else {
        s.to_string()
    }
}

fn esc(s: &str) -> String {
    let mut o = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => o.push_str("&amp;"),
            '<' => o.push_str("&lt;"),
            '>' => o.push_str("&gt;"),
            '"' => o.push_str("&quot;"),
            '\'' => o.push_str("&#39;"),
            c => o.push(c),
        }
    }
    o
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn renders_lines_scatter_and_labels() {
        let mut p = Plot::new("calc <vs> obs", "3J obs (Hz)", "3J calc (Hz)");
        p.identity_line("y = x");
        p.scatter(ScatterSeries::new(
            "ring",
            vec![
                ScatterPoint::new(1.0, 1.4).y_err(0.5),
                ScatterPoint::new(9.5, 9.0).x_err(0.2).y_err(0.5),
                ScatterPoint::new(f64::NAN, 2.0),
            ],
        ));
        p.line(
            LineSeries::new(
                "fit",
                vec![(0.0, 0.0), (f64::NAN, 1.0), (5.0, 5.0), (10.0, 10.0)],
            )
            .dashed(),
        );
        let svg = p.to_svg();
        assert!(svg.starts_with("<svg") && svg.trim_end().ends_with("</svg>"));
        assert!(svg.contains("calc &lt;vs&gt; obs"));
        assert!(svg.contains("3J obs (Hz)") && svg.contains("3J calc (Hz)"));
        assert_eq!(svg.matches("<circle").count(), 2 + 1); // two points + legend marker
        assert!(!svg.contains("NaN"));
    }

    #[test]
    fn ticks_are_round() {
        assert_eq!(
            nice_ticks((0.0, 12.0)),
            vec![0.0, 2.0, 4.0, 6.0, 8.0, 10.0, 12.0]
        );
        assert_eq!(fmt_tick(-0.0), "0");
        assert_eq!(fmt_tick(2.5), "2.5");
        let empty = Plot::new("", "x", "y").to_svg();
        assert!(empty.contains("</svg>"));
    }
}
