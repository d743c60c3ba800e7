//! Vector charts: a stress histogram, a Weibull probability plot and a horizontal bar chart.
//! Each chart is laid out once into drawing primitives in a box (y down, points); the PDF
//! renderer and the HTML renderer (inline SVG) draw the same primitives.

use serde::Serialize;

#[derive(Debug, Clone, Serialize)]
pub enum Chart {
    /// Counts per bin of a quantity; an optional marked value (e.g. this incident's stress).
    Histogram {
        x_label: String,
        y_label: String,
        /// (low, high, count)
        bins: Vec<(f64, f64, u32)>,
        marker: Option<(f64, String)>,
    },
    /// Weibull probability plot: ln ln(1/(1−F)) against ln(stress), one series per group.
    Weibull {
        x_label: String,
        series: Vec<WeibullSeries>,
    },
    /// Horizontal bars, in the order given (largest first is the caller's choice).
    Bars {
        x_label: String,
        bars: Vec<(String, f64)>,
    },
}

#[derive(Debug, Clone, Serialize)]
pub struct WeibullSeries {
    pub name: String,
    /// (stress in the axis unit, failure probability 0..1)
    pub points: Vec<(f64, f64)>,
    /// (modulus m, characteristic strength in the axis unit) for the fitted line
    pub fit: Option<(f64, f64)>,
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Rgb(pub u8, pub u8, pub u8);

impl Rgb {
    pub fn hex(self) -> String {
        format!("#{:02x}{:02x}{:02x}", self.0, self.1, self.2)
    }
    pub fn f(self) -> (f32, f32, f32) {
        (
            f32::from(self.0) / 255.0,
            f32::from(self.1) / 255.0,
            f32::from(self.2) / 255.0,
        )
    }
}

pub const INK: Rgb = Rgb(0x22, 0x22, 0x22);
pub const GRID: Rgb = Rgb(0xdd, 0xdd, 0xdd);
pub const AXIS: Rgb = Rgb(0x55, 0x55, 0x55);
pub const PALETTE: [Rgb; 6] = [
    Rgb(0x1f, 0x4e, 0x79),
    Rgb(0xc0, 0x50, 0x4d),
    Rgb(0x4f, 0x8a, 0x3c),
    Rgb(0x80, 0x64, 0xa2),
    Rgb(0xd0, 0x8a, 0x1e),
    Rgb(0x70, 0x70, 0x70),
];

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Anchor {
    Start,
    Middle,
    End,
}

#[derive(Debug, Clone, PartialEq)]
pub enum Prim {
    Line {
        x1: f32,
        y1: f32,
        x2: f32,
        y2: f32,
        width: f32,
        color: Rgb,
        dashed: bool,
    },
    Rect {
        x: f32,
        y: f32,
        w: f32,
        h: f32,
        fill: Rgb,
    },
    Dot {
        x: f32,
        y: f32,
        r: f32,
        fill: Rgb,
    },
    Text {
        x: f32,
        y: f32,
        size: f32,
        anchor: Anchor,
        vertical: bool,
        color: Rgb,
        text: String,
    },
}

/// A rough text width for layout inside a chart (both renderers anchor the text
/// themselves, so this only has to keep labels clear of the axes).
fn est_width(s: &str, size: f32) -> f32 {
    s.chars().count() as f32 * size * 0.56
}

/// "Nice" tick values covering [lo, hi] with about `n` steps (1, 2, 5 × 10^k).
pub fn nice_ticks(lo: f64, hi: f64, n: usize) -> Vec<f64> {
    if !lo.is_finite() || !hi.is_finite() || hi <= lo {
        return vec![lo];
    }
    let raw = (hi - lo) / n.max(1) as f64;
    let mag = 10f64.powf(raw.log10().floor());
    let step = [1.0, 2.0, 2.5, 5.0, 10.0]
        .iter()
        .map(|m| m * mag)
        .find(|s| *s >= raw)
        .unwrap_or(10.0 * mag);
    let start = (lo / step).floor() * step;
    let end = (hi / step).ceil() * step;
    let mut v = Vec::new();
    let mut k = 0.0;
    while start + k * step <= end + step * 1e-9 && v.len() < 100 {
        let t = start + k * step;
        v.push(if t.abs() < step * 1e-9 { 0.0 } else { t });
        k += 1.0;
    }
    v
}

/// A tick or bar label: at most three significant figures, no trailing zeros.
pub fn fmt_tick(v: f64) -> String {
    if !v.is_finite() {
        return String::new();
    }
    if v == v.round() && v.abs() < 1e7 {
        return format!("{}", v as i64);
    }
    let s = shardlog_core::units::fmt_sig(v, 3);
    if s.contains('.') && !s.contains('e') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

struct Frame {
    x0: f32,
    y0: f32,
    w: f32,
    h: f32,
}

impl Chart {
    /// Lay the chart out in a box of `w` × `h` points.
    pub fn layout(&self, w: f32, h: f32) -> Vec<Prim> {
        match self {
            Chart::Histogram {
                x_label,
                y_label,
                bins,
                marker,
            } => histogram(w, h, x_label, y_label, bins, marker.as_ref()),
            Chart::Weibull { x_label, series } => weibull(w, h, x_label, series),
            Chart::Bars { x_label, bars } => bar_chart(w, h, x_label, bars),
        }
    }

    /// The chart's data as a table (for Markdown, CSV and screen readers).
    pub fn data_table(&self) -> (Vec<String>, Vec<Vec<String>>) {
        match self {
            Chart::Histogram { x_label, bins, .. } => (
                vec![format!("{x_label}, from"), "to".into(), "count".into()],
                bins.iter()
                    .map(|(a, b, c)| vec![fmt_tick(*a), fmt_tick(*b), c.to_string()])
                    .collect(),
            ),
            Chart::Weibull { x_label, series } => (
                vec![
                    "group".into(),
                    "points".into(),
                    "Weibull modulus".into(),
                    format!("characteristic strength ({})", unit_of(x_label)),
                ],
                series
                    .iter()
                    .map(|s| {
                        let (m, s0) = match s.fit {
                            Some((m, s0)) => (fmt_tick(m), fmt_tick(s0)),
                            None => ("no fit (too few points)".into(), "no fit".into()),
                        };
                        vec![s.name.clone(), s.points.len().to_string(), m, s0]
                    })
                    .collect(),
            ),
            Chart::Bars { x_label, bars } => (
                vec!["".into(), x_label.clone()],
                bars.iter()
                    .map(|(l, v)| vec![l.clone(), fmt_tick(*v)])
                    .collect(),
            ),
        }
    }
}

fn unit_of(label: &str) -> String {
    match (label.rfind('('), label.rfind(')')) {
        (Some(a), Some(b)) if b > a => label[a + 1..b].to_string(),
        _ => label.to_string(),
    }
}

fn axes(p: &mut Vec<Prim>, f: &Frame) {
    p.push(Prim::Line {
        x1: f.x0,
        y1: f.y0 + f.h,
        x2: f.x0 + f.w,
        y2: f.y0 + f.h,
        width: 0.8,
        color: AXIS,
        dashed: false,
    });
    p.push(Prim::Line {
        x1: f.x0,
        y1: f.y0,
        x2: f.x0,
        y2: f.y0 + f.h,
        width: 0.8,
        color: AXIS,
        dashed: false,
    });
}

fn text(p: &mut Vec<Prim>, x: f32, y: f32, size: f32, anchor: Anchor, t: &str) {
    p.push(Prim::Text {
        x,
        y,
        size,
        anchor,
        vertical: false,
        color: INK,
        text: t.to_string(),
    });
}

fn empty_note(p: &mut Vec<Prim>, w: f32, h: f32) {
    text(p, w / 2.0, h / 2.0, 9.0, Anchor::Middle, "no data to plot");
}

fn histogram(
    w: f32,
    h: f32,
    x_label: &str,
    y_label: &str,
    bins: &[(f64, f64, u32)],
    marker: Option<&(f64, String)>,
) -> Vec<Prim> {
    let mut p = Vec::new();
    let bins: Vec<_> = bins
        .iter()
        .filter(|(a, b, _)| a.is_finite() && b.is_finite() && b > a)
        .collect();
    if bins.is_empty() {
        empty_note(&mut p, w, h);
        return p;
    }
    let lo = bins.iter().map(|b| b.0).fold(f64::INFINITY, f64::min);
    let hi = bins.iter().map(|b| b.1).fold(f64::NEG_INFINITY, f64::max);
    let max = bins.iter().map(|b| b.2).max().unwrap_or(1).max(1);
    // counts are whole: no tick at 0.5
    let yt: Vec<f64> = nice_ticks(0.0, f64::from(max), 4)
        .into_iter()
        .filter(|t| t.fract() == 0.0)
        .collect();
    let ymax = yt.last().copied().unwrap_or(1.0).max(1.0);
    let f = Frame {
        x0: 40.0,
        y0: 10.0,
        w: w - 50.0,
        h: h - 45.0,
    };
    let sx = |v: f64| f.x0 + ((v - lo) / (hi - lo)) as f32 * f.w;
    let sy = |v: f64| f.y0 + f.h - (v / ymax) as f32 * f.h;
    for t in &yt {
        let y = sy(*t);
        p.push(Prim::Line {
            x1: f.x0,
            y1: y,
            x2: f.x0 + f.w,
            y2: y,
            width: 0.4,
            color: GRID,
            dashed: false,
        });
        text(&mut p, f.x0 - 4.0, y + 3.0, 7.5, Anchor::End, &fmt_tick(*t));
    }
    for (a, b, c) in &bins {
        let x1 = sx(*a);
        let x2 = sx(*b);
        let y = sy(f64::from(*c));
        p.push(Prim::Rect {
            x: x1 + 0.5,
            y,
            w: (x2 - x1 - 1.0).max(0.5),
            h: f.y0 + f.h - y,
            fill: PALETTE[0],
        });
    }
    for t in nice_ticks(lo, hi, 6) {
        if t < lo - 1e-9 || t > hi + 1e-9 {
            continue;
        }
        let x = sx(t);
        p.push(Prim::Line {
            x1: x,
            y1: f.y0 + f.h,
            x2: x,
            y2: f.y0 + f.h + 3.0,
            width: 0.6,
            color: AXIS,
            dashed: false,
        });
        text(
            &mut p,
            x,
            f.y0 + f.h + 12.0,
            7.5,
            Anchor::Middle,
            &fmt_tick(t),
        );
    }
    if let Some((v, label)) = marker {
        if v.is_finite() && *v >= lo && *v <= hi {
            let x = sx(*v);
            p.push(Prim::Line {
                x1: x,
                y1: f.y0,
                x2: x,
                y2: f.y0 + f.h,
                width: 1.2,
                color: PALETTE[1],
                dashed: true,
            });
            let anchor = if x > f.x0 + f.w * 0.7 {
                Anchor::End
            } else {
                Anchor::Start
            };
            let dx = if anchor == Anchor::End { -3.0 } else { 3.0 };
            p.push(Prim::Text {
                x: x + dx,
                y: f.y0 + 8.0,
                size: 7.5,
                anchor,
                vertical: false,
                color: PALETTE[1],
                text: label.clone(),
            });
        }
    }
    axes(&mut p, &f);
    text(
        &mut p,
        f.x0 + f.w / 2.0,
        h - 6.0,
        8.5,
        Anchor::Middle,
        x_label,
    );
    p.push(Prim::Text {
        x: 10.0,
        y: f.y0 + f.h / 2.0,
        size: 8.5,
        anchor: Anchor::Middle,
        vertical: true,
        color: INK,
        text: y_label.to_string(),
    });
    p
}

/// ln ln (1/(1−F))
fn wy(f: f64) -> f64 {
    (-(1.0 - f).ln()).ln()
}

fn weibull(w: f32, h: f32, x_label: &str, series: &[WeibullSeries]) -> Vec<Prim> {
    let mut p = Vec::new();
    let pts: Vec<(f64, f64)> = series
        .iter()
        .flat_map(|s| s.points.iter().copied())
        .filter(|(x, f)| x.is_finite() && *x > 0.0 && *f > 0.0 && *f < 1.0)
        .collect();
    if pts.is_empty() {
        empty_note(&mut p, w, h);
        return p;
    }
    let ax = WeibullAxes::new(w, h, &pts, series.len());
    weibull_grid(&mut p, &ax);
    let f = &ax.f;
    for (i, s) in series.iter().enumerate() {
        let c = PALETTE[i % PALETTE.len()];
        if let Some((m, s0)) = s.fit {
            if m.is_finite() && m > 0.0 && s0.is_finite() && s0 > 0.0 {
                weibull_fit_line(&mut p, &ax, m, s0, c);
            }
        }
        for (x, fp) in &s.points {
            if x.is_finite() && *x > 0.0 && *fp > 0.0 && *fp < 1.0 {
                p.push(Prim::Dot {
                    x: ax.sx(*x),
                    y: ax.sy(*fp),
                    r: 2.2,
                    fill: c,
                });
            }
        }
    }
    axes(&mut p, f);
    text(
        &mut p,
        f.x0 + f.w / 2.0,
        f.y0 + f.h + 24.0,
        8.5,
        Anchor::Middle,
        &format!("{x_label}, log scale"),
    );
    p.push(Prim::Text {
        x: 9.0,
        y: f.y0 + f.h / 2.0,
        size: 8.5,
        anchor: Anchor::Middle,
        vertical: true,
        color: INK,
        text: "failure probability".into(),
    });
    weibull_legend(&mut p, f, x_label, series);
    p
}

/// The frame of a Weibull plot and its scales: ln(stress) across, ln ln (1/(1−F)) up.
struct WeibullAxes {
    f: Frame,
    xlo: f64,
    xhi: f64,
    ylo: f64,
    yhi: f64,
}

impl WeibullAxes {
    /// Scales that hold every point (`pts`, none empty) with a margin, and room below the
    /// frame for the legend of up to six series.
    fn new(w: f32, h: f32, pts: &[(f64, f64)], series: usize) -> Self {
        let mut xlo = pts.iter().map(|p| p.0).fold(f64::INFINITY, f64::min).ln();
        let mut xhi = pts
            .iter()
            .map(|p| p.0)
            .fold(f64::NEG_INFINITY, f64::max)
            .ln();
        if xhi - xlo < 0.2 {
            xlo -= 0.1;
            xhi += 0.1;
        }
        let pad = (xhi - xlo) * 0.08;
        let (xlo, xhi) = (xlo - pad, xhi + pad);
        let ylo = wy(0.01).min(pts.iter().map(|p| wy(p.1)).fold(f64::INFINITY, f64::min));
        let yhi = wy(0.99).max(
            pts.iter()
                .map(|p| wy(p.1))
                .fold(f64::NEG_INFINITY, f64::max),
        );
        let legend_h = 12.0 * series.min(6) as f32;
        let f = Frame {
            x0: 56.0,
            y0: 8.0,
            w: w - 66.0,
            h: h - 42.0 - legend_h,
        };
        WeibullAxes {
            f,
            xlo,
            xhi,
            ylo,
            yhi,
        }
    }

    /// Page x of a stress.
    fn sx(&self, v: f64) -> f32 {
        let f = &self.f;
        f.x0 + ((v.ln() - self.xlo) / (self.xhi - self.xlo)) as f32 * f.w
    }

    /// Page y of a failure probability.
    fn sy(&self, fp: f64) -> f32 {
        self.sy_of_linear(wy(fp))
    }

    /// Page y of a value already on the ln ln (1/(1−F)) scale.
    fn sy_of_linear(&self, v: f64) -> f32 {
        let f = &self.f;
        f.y0 + f.h - ((v - self.ylo) / (self.yhi - self.ylo)) as f32 * f.h
    }
}

/// Probability grid lines with their labels, and log ticks (1, 2, 5 per decade; finer over a
/// narrow range) along the stress axis.
fn weibull_grid(p: &mut Vec<Prim>, ax: &WeibullAxes) {
    let f = &ax.f;
    let (xlo, xhi) = (ax.xlo, ax.xhi);
    for fp in [0.01, 0.02, 0.05, 0.1, 0.2, 0.3, 0.5, 0.632, 0.8, 0.9, 0.99] {
        let y = ax.sy(fp);
        if !(f.y0 - 0.1..=f.y0 + f.h + 0.1).contains(&y) {
            continue;
        }
        p.push(Prim::Line {
            x1: f.x0,
            y1: y,
            x2: f.x0 + f.w,
            y2: y,
            width: 0.4,
            color: GRID,
            dashed: false,
        });
        let label = format!("{} %", fmt_tick(fp * 100.0));
        text(p, f.x0 - 4.0, y + 2.5, 7.0, Anchor::End, &label);
    }
    // log ticks: 1, 2, 5 per decade
    let (lo, hi) = (xlo.exp(), xhi.exp());
    let mut d = 10f64.powf(lo.log10().floor());
    let mut n = 0;
    let mults: &[f64] = if hi / lo < 30.0 {
        &[1.0, 1.5, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0]
    } else {
        &[1.0, 2.0, 5.0]
    };
    while d <= hi && n < 40 {
        for &m in mults {
            let t = d * m;
            if t < lo || t > hi {
                continue;
            }
            let x = ax.sx(t);
            p.push(Prim::Line {
                x1: x,
                y1: f.y0,
                x2: x,
                y2: f.y0 + f.h,
                width: 0.4,
                color: GRID,
                dashed: false,
            });
            text(p, x, f.y0 + f.h + 11.0, 7.5, Anchor::Middle, &fmt_tick(t));
        }
        d *= 10.0;
        n += 1;
    }
}

/// The fitted distribution F(x) = 1 − exp(−(x/s0)^m), a straight line on these axes, clipped
/// to the frame.
fn weibull_fit_line(p: &mut Vec<Prim>, ax: &WeibullAxes, m: f64, s0: f64, c: Rgb) {
    let f = &ax.f;
    let (lo, hi) = (ax.xlo.exp(), ax.xhi.exp());
    // F(x) = 1 − exp(−(x/s0)^m): a straight line on these axes
    let yv = |x: f64| m * (x.ln() - s0.ln());
    let (xa, xb) = (lo, hi);
    let (mut ya, mut yb) = (ax.sy_of_linear(yv(xa)), ax.sy_of_linear(yv(xb)));
    let (mut pxa, mut pxb) = (ax.sx(xa), ax.sx(xb));
    // clip to the frame vertically
    let clip = |px1: f32, py1: f32, px2: f32, py2: f32, yc: f32| {
        px1 + (px2 - px1) * (yc - py1) / (py2 - py1)
    };
    if (ya - yb).abs() > 1e-3 {
        let (top, bot) = (f.y0, f.y0 + f.h);
        if ya > bot {
            pxa = clip(pxa, ya, pxb, yb, bot);
            ya = bot;
        }
        if yb < top {
            pxb = clip(pxa, ya, pxb, yb, top);
            yb = top;
        }
    }
    if ya >= f.y0 && yb <= f.y0 + f.h && pxb > pxa {
        p.push(Prim::Line {
            x1: pxa,
            y1: ya,
            x2: pxb,
            y2: yb,
            width: 1.0,
            color: c,
            dashed: false,
        });
    }
}

/// One line per series (at most six): its colour, name, number of points and fit.
fn weibull_legend(p: &mut Vec<Prim>, f: &Frame, x_label: &str, series: &[WeibullSeries]) {
    for (i, s) in series.iter().take(6).enumerate() {
        let c = PALETTE[i % PALETTE.len()];
        let y = f.y0 + f.h + 34.0 + 12.0 * i as f32;
        p.push(Prim::Dot {
            x: f.x0 + 4.0,
            y: y - 2.5,
            r: 2.5,
            fill: c,
        });
        let fit = match s.fit {
            Some((m, s0)) => format!(
                "modulus {}, characteristic strength {} {}",
                fmt_tick(m),
                fmt_tick(s0),
                unit_of(x_label)
            ),
            None => "too few points for a fit".into(),
        };
        text(
            p,
            f.x0 + 12.0,
            y,
            7.5,
            Anchor::Start,
            &format!("{} ({} points; {fit})", s.name, s.points.len()),
        );
    }
}

fn bar_chart(w: f32, h: f32, x_label: &str, bars: &[(String, f64)]) -> Vec<Prim> {
    let mut p = Vec::new();
    let bars: Vec<_> = bars.iter().filter(|b| b.1.is_finite()).collect();
    if bars.is_empty() {
        empty_note(&mut p, w, h);
        return p;
    }
    let label_w = bars
        .iter()
        .map(|b| est_width(&b.0, 7.5))
        .fold(0.0, f32::max)
        .min(w * 0.4)
        + 6.0;
    let max = bars.iter().map(|b| b.1).fold(0.0, f64::max).max(1e-12);
    let xt = nice_ticks(0.0, max, 5);
    let xmax = xt.last().copied().unwrap_or(max).max(max);
    let f = Frame {
        x0: label_w,
        y0: 4.0,
        w: w - label_w - 30.0,
        h: h - 32.0,
    };
    let band = f.h / bars.len() as f32;
    let sx = |v: f64| f.x0 + (v / xmax) as f32 * f.w;
    for t in &xt {
        let x = sx(*t);
        p.push(Prim::Line {
            x1: x,
            y1: f.y0,
            x2: x,
            y2: f.y0 + f.h,
            width: 0.4,
            color: GRID,
            dashed: false,
        });
        text(
            &mut p,
            x,
            f.y0 + f.h + 11.0,
            7.5,
            Anchor::Middle,
            &fmt_tick(*t),
        );
    }
    for (i, (label, v)) in bars.iter().enumerate() {
        let y = f.y0 + band * i as f32;
        let bh = (band * 0.7).min(16.0);
        let yb = y + (band - bh) / 2.0;
        p.push(Prim::Rect {
            x: f.x0,
            y: yb,
            w: (sx(*v) - f.x0).max(0.0),
            h: bh,
            fill: PALETTE[0],
        });
        let mut l = label.clone();
        let max_chars = ((label_w - 6.0) / (7.5 * 0.56)) as usize;
        if l.chars().count() > max_chars.max(4) {
            l = l.chars().take(max_chars.max(4) - 1).collect::<String>() + "…";
        }
        text(
            &mut p,
            f.x0 - 4.0,
            yb + bh / 2.0 + 2.7,
            7.5,
            Anchor::End,
            &l,
        );
        text(
            &mut p,
            sx(*v) + 3.0,
            yb + bh / 2.0 + 2.7,
            7.5,
            Anchor::Start,
            &fmt_tick(*v),
        );
    }
    axes(&mut p, &f);
    text(
        &mut p,
        f.x0 + f.w / 2.0,
        h - 4.0,
        8.5,
        Anchor::Middle,
        x_label,
    );
    p
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ticks_are_nice_and_cover_the_range() {
        assert_eq!(
            nice_ticks(0.0, 10.0, 5),
            vec![0.0, 2.0, 4.0, 6.0, 8.0, 10.0]
        );
        let t = nice_ticks(13.0, 97.0, 5);
        assert!(t[0] <= 13.0 && *t.last().unwrap() >= 97.0 - 1e-9);
        assert_eq!(nice_ticks(f64::NAN, 1.0, 5).len(), 1);
    }

    #[test]
    fn charts_stay_inside_their_box_and_survive_empty_or_odd_data() {
        let charts = [
            Chart::Histogram {
                x_label: "Applied stress (MPa)".into(),
                y_label: "incidents".into(),
                bins: vec![(10.0, 20.0, 3), (20.0, 30.0, 7), (30.0, 40.0, 0)],
                marker: Some((25.0, "this incident".into())),
            },
            Chart::Weibull {
                x_label: "Applied stress (MPa)".into(),
                series: vec![WeibullSeries {
                    name: "lot A".into(),
                    points: vec![(20.0, 0.1), (30.0, 0.4), (40.0, 0.8), (f64::NAN, 0.5)],
                    fit: Some((4.0, 33.0)),
                }],
            },
            Chart::Bars {
                x_label: "incidents".into(),
                bars: vec![("thermal stress".into(), 12.0), ("impact".into(), 3.0)],
            },
            Chart::Bars {
                x_label: "incidents".into(),
                bars: vec![],
            },
            Chart::Weibull {
                x_label: "MPa".into(),
                series: vec![],
            },
        ];
        for c in &charts {
            let prims = c.layout(400.0, 200.0);
            assert!(!prims.is_empty());
            for p in prims {
                let (x, y) = match p {
                    Prim::Line { x1, y1, x2, y2, .. } => {
                        assert!(x2.is_finite() && y2.is_finite());
                        (x1, y1)
                    }
                    Prim::Rect { x, y, .. } | Prim::Dot { x, y, .. } => (x, y),
                    Prim::Text { x, y, .. } => (x, y),
                };
                assert!(x.is_finite() && y.is_finite());
                assert!(
                    (-1.0..=401.0).contains(&x) && (-1.0..=201.0).contains(&y),
                    "{p:?}"
                );
            }
        }
    }
}
