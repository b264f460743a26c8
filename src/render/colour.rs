//! Colours: gene mixing like fluorescence channels or stains, and a
//! perceptually uniform map for single-gene heat maps.

/// Background of a picture.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Background {
    /// Black: gene colours add like fluorescence channels.
    Dark,
    /// White: gene colours absorb like stains (each removes its complement).
    Light,
}

impl Background {
    /// Background colour.
    pub fn rgb(self) -> [u8; 3] {
        match self {
            Background::Dark => [0, 0, 0],
            Background::Light => [255, 255, 255],
        }
    }
    /// Colour for axes, text and outlines.
    pub fn ink(self) -> [u8; 3] {
        match self {
            Background::Dark => [230, 230, 230],
            Background::Light => [30, 30, 30],
        }
    }
    /// Muted colour for grid lines and notes.
    pub fn muted(self) -> [u8; 3] {
        match self {
            Background::Dark => [120, 120, 120],
            Background::Light => [150, 150, 150],
        }
    }
}

/// Mixes `share` of colour `a` into colour `b`.
pub fn blend(a: [u8; 3], b: [u8; 3], share: f64) -> [u8; 3] {
    std::array::from_fn(|k| (share * a[k] as f64 + (1.0 - share) * b[k] as f64).round() as u8)
}

/// Mixes genes at relative levels `v_g` ∈ [0, 1] (clamped):
/// dark `Σ c_g·v_g`, light `255 − Σ (255 − c_g)·v_g`, each channel clamped to [0, 255].
pub fn mix(colors: &[[u8; 3]], levels: impl Iterator<Item = f64>, bg: Background) -> [u8; 3] {
    let mut acc = [0.0f64; 3];
    for (c, v) in colors.iter().zip(levels) {
        let v = v.clamp(0.0, 1.0);
        for k in 0..3 {
            acc[k] += match bg {
                Background::Dark => c[k] as f64 * v,
                Background::Light => (255.0 - c[k] as f64) * v,
            };
        }
    }
    let channel = |a: f64| -> u8 {
        let a = a.clamp(0.0, 255.0);
        (match bg {
            Background::Dark => a,
            Background::Light => 255.0 - a,
        })
        .round() as u8
    };
    [channel(acc[0]), channel(acc[1]), channel(acc[2])]
}

/// Oklab (L, a, b) → sRGB bytes (out-of-gamut channels clipped).
/// Source: Ottosson (2020), "A perceptual color space for image processing"
/// (web page; the matrices as published there); sRGB transfer: IEC 61966-2-1.
pub fn oklab_to_srgb(l: f64, a: f64, b: f64) -> [u8; 3] {
    let l_ = l + 0.396_337_777_4 * a + 0.215_803_757_3 * b;
    let m_ = l - 0.105_561_345_8 * a - 0.063_854_172_8 * b;
    let s_ = l - 0.089_484_177_5 * a - 1.291_485_548_0 * b;
    let (l3, m3, s3) = (l_ * l_ * l_, m_ * m_ * m_, s_ * s_ * s_);
    let lin = [
        4.076_741_662_1 * l3 - 3.307_711_591_3 * m3 + 0.230_969_929_2 * s3,
        -1.268_438_004_6 * l3 + 2.609_757_401_1 * m3 - 0.341_319_396_5 * s3,
        -0.004_196_086_3 * l3 - 0.703_418_614_7 * m3 + 1.707_614_701_0 * s3,
    ];
    lin.map(|c| {
        let c = c.clamp(0.0, 1.0);
        let s = if c <= 0.003_130_8 { 12.92 * c } else { 1.055 * c.powf(1.0 / 2.4) - 0.055 };
        (s * 255.0).round() as u8
    })
}

/// A sequential colour map for one gene's levels, t ∈ [0, 1]: lightness rises
/// linearly in Oklab from 0.22 to 0.93 (so equal steps in level look like
/// equal steps in lightness) while the hue turns from a deep red-brown
/// through rust and ochre to pale straw, like a stain developing: our own
/// path, chosen so that it cannot be taken for the blue–green–yellow default
/// maps of common plotting libraries. Chroma peaks mid-range and stays inside
/// the sRGB gamut, so no channel is clipped and the lightness stays linear
/// (checked in the tests by converting back).
pub fn sequential(t: f64) -> [u8; 3] {
    let t = t.clamp(0.0, 1.0);
    let l = 0.22 + 0.71 * t;
    let hue = (20.0 + 75.0 * t).to_radians();
    let chroma = 0.05 + 0.075 * (std::f64::consts::PI * t).sin() - 0.02 * t;
    oklab_to_srgb(l, chroma * hue.cos(), chroma * hue.sin())
}

/// sRGB bytes → Oklab (L, a, b); the inverse of [`oklab_to_srgb`]
/// (Ottosson 2020, the published matrices, from memory; checked by the round
/// trip in the tests).
pub fn srgb_to_oklab(c: [u8; 3]) -> (f64, f64, f64) {
    let lin = c.map(|v| {
        let s = v as f64 / 255.0;
        if s <= 0.040_45 { s / 12.92 } else { ((s + 0.055) / 1.055).powf(2.4) }
    });
    let [r, g, b] = lin;
    let l = (0.412_221_470_8 * r + 0.536_332_536_3 * g + 0.051_445_992_9 * b).cbrt();
    let m = (0.211_903_498_2 * r + 0.680_699_545_1 * g + 0.107_396_956_6 * b).cbrt();
    let s = (0.088_302_461_9 * r + 0.281_718_837_6 * g + 0.629_978_700_5 * b).cbrt();
    (
        0.210_454_255_3 * l + 0.793_617_785_0 * m - 0.004_072_046_8 * s,
        1.977_998_495_1 * l - 2.428_592_205_0 * m + 0.450_593_709_9 * s,
        0.025_904_037_1 * l + 0.782_771_766_2 * m - 0.808_675_766_0 * s,
    )
}

/// A diverging map for signed values, t ∈ [−1, 1]: blue for negative, orange
/// for positive, light grey at zero; lightness falls symmetrically with |t| in
/// Oklab, so equal magnitudes look equally strong. Our own map.
pub fn diverging(t: f64) -> [u8; 3] {
    let t = t.clamp(-1.0, 1.0);
    let l = 0.93 - 0.33 * t.abs();
    let hue: f64 = if t < 0.0 { 255.0 } else { 55.0 };
    let chroma = 0.17 * t.abs();
    oklab_to_srgb(l, chroma * hue.to_radians().cos(), chroma * hue.to_radians().sin())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn oklab_white_and_black() {
        assert_eq!(oklab_to_srgb(1.0, 0.0, 0.0), [255, 255, 255]);
        assert_eq!(oklab_to_srgb(0.0, 0.0, 0.0), [0, 0, 0]);
    }

    /// The two conversions invert each other to within a byte's rounding.
    #[test]
    fn oklab_round_trips() {
        for c in [[0u8, 0, 0], [255, 255, 255], [200, 30, 90], [12, 140, 250], [128, 128, 0]] {
            let (l, a, b) = srgb_to_oklab(c);
            let back = oklab_to_srgb(l, a, b);
            assert!(c.iter().zip(back).all(|(x, y)| x.abs_diff(y) <= 1), "{c:?} -> {back:?}");
        }
        // Ottosson (2020) gives L = 1 for white and L = 0 for black.
        assert!((srgb_to_oklab([255, 255, 255]).0 - 1.0).abs() < 1e-3);
    }

    /// The heat map's lightness, measured back in Oklab from the bytes drawn,
    /// rises monotonically and stays within 0.01 of the straight line from
    /// 0.22 to 0.93 (no channel clipped out of gamut); its hue stays warm
    /// (a > 0 through the middle), unlike blue–green–yellow maps.
    #[test]
    fn sequential_map_lightness_is_monotonic_and_linear_in_oklab() {
        let mut last = -1.0;
        for k in 0..=100 {
            let t = k as f64 / 100.0;
            let (l, a, _) = srgb_to_oklab(sequential(t));
            assert!(l > last, "lightness falls at t = {t}");
            assert!((l - (0.22 + 0.71 * t)).abs() < 0.01, "t = {t}: L = {l}");
            if (0.1..=0.8).contains(&t) {
                assert!(a > 0.0, "t = {t}: a = {a}");
            }
            last = l;
        }
    }

    #[test]
    fn diverging_map_is_symmetric_in_lightness() {
        let luma = |c: [u8; 3]| 0.2126 * c[0] as f64 + 0.7152 * c[1] as f64 + 0.0722 * c[2] as f64;
        assert!((luma(diverging(0.6)) - luma(diverging(-0.6))).abs() < 25.0);
        assert!(luma(diverging(0.0)) > luma(diverging(1.0)) && luma(diverging(0.0)) > luma(diverging(-1.0)));
        let (neg, pos) = (diverging(-1.0), diverging(1.0));
        assert!(neg[2] > neg[0] && pos[0] > pos[2], "blue below zero, orange above");
    }

    #[test]
    fn mixing_scales_a_single_gene() {
        let c = [[200, 100, 50]];
        assert_eq!(mix(&c, [0.5].into_iter(), Background::Dark), [100, 50, 25]);
        assert_eq!(mix(&c, [1.0].into_iter(), Background::Light), [200, 100, 50]);
        assert_eq!(mix(&c, [0.0].into_iter(), Background::Light), [255, 255, 255]);
    }
}
