//! Plot frames: axes, ticks and labels.

use super::canvas::{Align, Canvas};
use super::colour::Background;

/// The plotting area of a chart and the data ranges it shows.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Axes {
    /// Left edge, px.
    pub left: f32,
    /// Top edge, px.
    pub top: f32,
    /// Width, px.
    pub width: f32,
    /// Height, px.
    pub height: f32,
    /// Data range along x.
    pub x: (f64, f64),
    /// Data range along y (y.0 drawn at the top when `y_down`).
    pub y: (f64, f64),
    /// True when y grows downwards (time in a kymograph).
    pub y_down: bool,
}

impl Axes {
    /// A plot whose x axis is the position along the tissue, 0–100 % of its
    /// length, filling a canvas `canvas_width` px wide between the margins.
    pub fn along_axis(
        left: f32,
        top: f32,
        right: f32,
        canvas_width: u32,
        height: f32,
        y: (f64, f64),
        y_down: bool,
    ) -> Axes {
        Axes { left, top, width: canvas_width as f32 - left - right, height, x: (0.0, 100.0), y, y_down }
    }

    /// Pixel column of data x.
    pub fn px(&self, x: f64) -> f32 {
        self.left + ((x - self.x.0) / (self.x.1 - self.x.0)) as f32 * self.width
    }
    /// Pixel row of data y.
    pub fn py(&self, y: f64) -> f32 {
        let f = ((y - self.y.0) / (self.y.1 - self.y.0)) as f32;
        if self.y_down { self.top + f * self.height } else { self.top + (1.0 - f) * self.height }
    }
}

/// Ticks at 1, 2 or 5 × 10^k covering [lo, hi] with about `count` steps.
pub fn nice_ticks(lo: f64, hi: f64, count: usize) -> Vec<f64> {
    if !(hi > lo) {
        return vec![lo];
    }
    let raw = (hi - lo) / count as f64;
    let p = 10f64.powf(raw.log10().floor());
    let step = [1.0, 2.0, 5.0, 10.0].iter().map(|m| m * p).find(|s| *s >= raw).unwrap_or(10.0 * p);
    let first = (lo / step).ceil() as i64;
    let last = (hi / step + 1e-9).floor() as i64;
    (first..=last).map(|k| k as f64 * step).collect()
}

fn tick_text(v: f64) -> String {
    let s = format!("{v:.3}");
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}

/// Draws the frame, the x ticks and the x label (for charts whose rows are categories).
pub fn draw_x(c: &mut Canvas, a: &Axes, x_label: &str, bg: Background) {
    let ink = bg.ink();
    let (l, t, r, b) = (a.left, a.top, a.left + a.width, a.top + a.height);
    c.polyline(&[(l, t), (r, t), (r, b), (l, b), (l, t)], 1.0, ink, 255, None);
    for x in nice_ticks(a.x.0, a.x.1, 5) {
        let px = a.px(x);
        c.line(px, b, px, b + 5.0, 1.0, ink);
        c.text(px, b + 19.0, 13.0, ink, Align::Centre, &tick_text(x));
    }
    c.text(l + a.width / 2.0, b + 40.0, 14.0, ink, Align::Centre, x_label);
}

/// Draws the frame, ticks, tick labels and axis labels.
pub fn draw(c: &mut Canvas, a: &Axes, x_label: &str, y_label: &str, bg: Background) {
    let ink = bg.ink();
    let (l, t) = (a.left, a.top);
    draw_x(c, a, x_label, bg);
    for y in nice_ticks(a.y.0.min(a.y.1), a.y.1.max(a.y.0), 5) {
        let py = a.py(y);
        c.line(l - 5.0, py, l, py, 1.0, ink);
        c.text(l - 8.0, py + 4.5, 13.0, ink, Align::Right, &tick_text(y));
    }
    // The y label, written above the axis (no rotated text).
    c.text(l - 8.0, t - 10.0, 14.0, ink, Align::Left, y_label);
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ticks_are_round_numbers() {
        assert_eq!(nice_ticks(0.0, 100.0, 5), vec![0.0, 20.0, 40.0, 60.0, 80.0, 100.0]);
        assert_eq!(nice_ticks(0.0, 240.0, 5), vec![0.0, 50.0, 100.0, 150.0, 200.0]);
        assert_eq!(nice_ticks(0.0, 9.5, 5), vec![0.0, 2.0, 4.0, 6.0, 8.0]);
    }
}
