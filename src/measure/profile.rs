//! Intensity profiles along a line, sampled like scikit-image's
//! `measure.profile_line` (order 1, mean over the line width): points spaced
//! evenly from `src` to `dst` inclusive, ⌈|dst − src| + 1⌉ of them, each the
//! mean of `linewidth` bilinear samples across the line.

/// Bilinear value of a plane at (row, col), pixel centres at integer
/// coordinates; coordinates outside are clamped to the edge.
pub fn bilinear(plane: &[f64], width: usize, height: usize, row: f64, col: f64) -> f64 {
    let r = row.clamp(0.0, (height - 1) as f64);
    let c = col.clamp(0.0, (width - 1) as f64);
    let (r0, c0) = (r.floor() as usize, c.floor() as usize);
    let (r1, c1) = ((r0 + 1).min(height - 1), (c0 + 1).min(width - 1));
    let (fr, fc) = (r - r0 as f64, c - c0 as f64);
    let at = |r: usize, c: usize| plane[r * width + c];
    (1.0 - fr) * ((1.0 - fc) * at(r0, c0) + fc * at(r0, c1)) + fr * ((1.0 - fc) * at(r1, c0) + fc * at(r1, c1))
}

/// Mean intensity profile from `src` to `dst` ((row, col) each) over a line
/// `linewidth` pixels wide, ⌈|dst − src| + 1⌉ points.
pub fn profile_line(
    plane: &[f64],
    width: usize,
    height: usize,
    src: (f64, f64),
    dst: (f64, f64),
    linewidth: usize,
) -> Vec<f64> {
    let n = ((dst.0 - src.0).hypot(dst.1 - src.1) + 1.0).ceil() as usize;
    profile_line_n(plane, width, height, src, dst, linewidth, n)
}

/// [`profile_line`] with `n` points from `src` to `dst` inclusive.
pub fn profile_line_n(
    plane: &[f64],
    width: usize,
    height: usize,
    src: (f64, f64),
    dst: (f64, f64),
    linewidth: usize,
    n: usize,
) -> Vec<f64> {
    let (dr, dc) = (dst.0 - src.0, dst.1 - src.1);
    let theta = dr.atan2(dc);
    let lw = linewidth.max(1);
    let row_w = (lw as f64 - 1.0) * theta.cos() / 2.0;
    let col_w = (lw as f64 - 1.0) * (-theta).sin() / 2.0;
    let lin = |a: f64, b: f64, k: usize, m: usize| if m == 1 { a } else { a + (b - a) * k as f64 / (m - 1) as f64 };
    (0..n)
        .map(|i| {
            let (r, c) = (lin(src.0, dst.0, i, n), lin(src.1, dst.1, i, n));
            (0..lw)
                .map(|k| {
                    bilinear(plane, width, height, lin(r - row_w, r + row_w, k, lw), lin(c - col_w, c + col_w, k, lw))
                })
                .sum::<f64>()
                / lw as f64
        })
        .collect()
}
