//! A drawing surface: antialiased lines and shapes (tiny-skia) and text from
//! a font compiled into the binary (DejaVu Sans, via the `dejavu` crate), so
//! pictures are the same on any machine.

use std::fmt::Write as _;
use std::sync::OnceLock;

use base64::Engine as _;

use ab_glyph::{Font, FontRef, PxScale, ScaleFont};
use tiny_skia::{FillRule, Paint, PathBuilder, Pixmap, Rect, Stroke, StrokeDash, Transform};

fn font() -> &'static FontRef<'static> {
    static FONT: OnceLock<FontRef<'static>> = OnceLock::new();
    FONT.get_or_init(|| FontRef::try_from_slice(dejavu::sans::regular()).expect("embedded DejaVu Sans parses"))
}

/// Horizontal placement of text relative to x.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Align {
    /// Text starts at x.
    Left,
    /// Text is centred on x.
    Centre,
    /// Text ends at x.
    Right,
}

/// An opaque RGBA picture being drawn, and the same drawing as SVG.
///
/// Everything is placed in *layout units*, the pixels of the picture at
/// scale 1; the pixels themselves are `scale` times as many along each
/// side, and text, lines and marks grow with them, so that a picture asked
/// twice as wide is the same picture, twice as sharp. Every drawing call is
/// also kept as an SVG element ([`Canvas::svg`]): lines, shapes and text
/// as vectors (text as text), filled areas of colour ([`Canvas::raster`]) as
/// embedded PNG images at the pixel resolution.
#[derive(Clone)]
pub struct Canvas {
    pix: Pixmap,
    /// Pixels per layout unit.
    scale: f32,
    /// Layout size.
    size: (u32, u32),
    /// The SVG elements drawn so far, in order; `None` when the canvas is
    /// not kept as SVG ([`Canvas::without_svg`]).
    svg: Option<String>,
}

fn paint(c: [u8; 3], alpha: u8) -> Paint<'static> {
    let mut p = Paint::default();
    p.set_color_rgba8(c[0], c[1], c[2], alpha);
    p.anti_alias = true;
    p
}

/// A number for SVG: at most two decimals, no trailing zeros.
fn num(v: f32) -> String {
    let s = format!("{v:.2}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" { "0".into() } else { s.to_string() }
}

fn hex(c: [u8; 3]) -> String {
    format!("#{:02x}{:02x}{:02x}", c[0], c[1], c[2])
}

/// Text escaped for XML and HTML (`&`, `<`, `>`, `"` and `'`).
pub fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for ch in text.chars() {
        match ch {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c => out.push(c),
        }
    }
    out
}

/// The em size of text drawn at [`PxScale`] 1: ab_glyph's scale is the
/// height from descender to ascender, CSS's font-size the em square.
fn em_per_scale() -> f32 {
    let f = font();
    f.units_per_em().unwrap_or(2048.0) / f.height_unscaled()
}

/// The font named in SVG text: the one the PNGs are drawn with, then
/// look-alikes a reader's machine is likely to have.
const SVG_FONT: &str = "DejaVu Sans, Verdana, Arial, sans-serif";

impl Canvas {
    /// A `width × height` canvas filled with `bg`, at scale 1.
    ///
    /// # Panics
    /// If a side is zero.
    pub fn new(width: u32, height: u32, bg: [u8; 3]) -> Canvas {
        Canvas::scaled(width, height, bg, 1.0)
    }

    /// A canvas laid out `width × height` and drawn at `scale` pixels per
    /// layout unit (at least 1 pixel a side).
    ///
    /// # Panics
    /// If a side is zero or `scale` is not positive.
    pub fn scaled(width: u32, height: u32, bg: [u8; 3], scale: f32) -> Canvas {
        assert!(scale > 0.0, "positive scale");
        let px = |v: u32| ((v as f32 * scale).round() as u32).max(1);
        let mut pix = Pixmap::new(px(width), px(height)).expect("non-empty canvas");
        pix.fill(tiny_skia::Color::from_rgba8(bg[0], bg[1], bg[2], 255));
        let svg = format!("<rect width=\"100%\" height=\"100%\" fill=\"{}\"/>\n", hex(bg));
        Canvas { pix, scale, size: (width, height), svg: Some(svg) }
    }

    /// The same canvas, no longer kept as SVG: pictures that will only be
    /// PNG or GIF frames spare the work (an embedded PNG per colour field).
    pub fn without_svg(mut self) -> Canvas {
        self.svg = None;
        self
    }

    /// Width, layout units (pixels at scale 1).
    pub fn width(&self) -> u32 {
        self.size.0
    }
    /// Height, layout units.
    pub fn height(&self) -> u32 {
        self.size.1
    }
    /// Width of the picture, px.
    pub fn pixel_width(&self) -> u32 {
        self.pix.width()
    }
    /// Height of the picture, px.
    pub fn pixel_height(&self) -> u32 {
        self.pix.height()
    }
    /// Pixels per layout unit.
    pub fn scale(&self) -> f32 {
        self.scale
    }

    fn transform(&self) -> Transform {
        Transform::from_scale(self.scale, self.scale)
    }

    /// Reads the pixel under layout point (x, y).
    pub fn get(&self, x: u32, y: u32) -> [u8; 3] {
        let px = ((x as f32 * self.scale) as u32).min(self.pix.width() - 1);
        let py = ((y as f32 * self.scale) as u32).min(self.pix.height() - 1);
        let i = 4 * (py as usize * self.pix.width() as usize + px as usize);
        let d = self.pix.data();
        [d[i], d[i + 1], d[i + 2]]
    }

    /// Fills the layout rectangle (`left`, `top`, `w`, `h`) pixel by pixel
    /// with `colour(u, v)`, where u and v run from 0 to 1 across and down
    /// the rectangle (taken at pixel centres); `None` leaves a pixel as it
    /// is. In SVG the area is one embedded PNG image at pixel resolution,
    /// transparent where `None`.
    pub fn raster(&mut self, left: f32, top: f32, w: f32, h: f32, colour: impl Fn(f64, f64) -> Option<[u8; 3]>) {
        let s = self.scale;
        let (pw, ph) = (self.pix.width() as i64, self.pix.height() as i64);
        let (x0, y0) = ((left * s).round() as i64, (top * s).round() as i64);
        let (x1, y1) = (((left + w) * s).round() as i64, ((top + h) * s).round() as i64);
        let (nw, nh) = (x1 - x0, y1 - y0);
        if nw <= 0 || nh <= 0 {
            return;
        }
        let keep = self.svg.is_some();
        let mut image = if keep { vec![0u8; (4 * nw * nh) as usize] } else { Vec::new() };
        let width = self.pix.width() as usize;
        let data = self.pix.data_mut();
        for y in 0..nh {
            let v = (y as f64 + 0.5) / nh as f64;
            for x in 0..nw {
                let Some(c) = colour((x as f64 + 0.5) / nw as f64, v) else { continue };
                if keep {
                    let k = (4 * (y * nw + x)) as usize;
                    image[k..k + 4].copy_from_slice(&[c[0], c[1], c[2], 255]);
                }
                let (px, py) = (x0 + x, y0 + y);
                if px >= 0 && py >= 0 && px < pw && py < ph {
                    let i = 4 * (py as usize * width + px as usize);
                    data[i..i + 4].copy_from_slice(&[c[0], c[1], c[2], 255]);
                }
            }
        }
        let Some(out) = self.svg.as_mut() else { return };
        let png = encode_png(&image, nw as u32, nh as u32).unwrap_or_default();
        let _ = writeln!(
            out,
            "<image x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" preserveAspectRatio=\"none\" \
             style=\"image-rendering:pixelated\" href=\"data:image/png;base64,{}\"/>",
            num(x0 as f32 / s),
            num(y0 as f32 / s),
            num(nw as f32 / s),
            num(nh as f32 / s),
            base64::engine::general_purpose::STANDARD.encode(png)
        );
    }

    /// Fills an axis-aligned rectangle.
    pub fn rect(&mut self, x: f32, y: f32, w: f32, h: f32, c: [u8; 3]) {
        if let Some(r) = Rect::from_xywh(x, y, w, h) {
            self.pix.fill_rect(r, &paint(c, 255), self.transform(), None);
            let Some(out) = self.svg.as_mut() else { return };
            let _ = writeln!(
                out,
                "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"{}\"/>",
                num(x),
                num(y),
                num(w),
                num(h),
                hex(c)
            );
        }
    }

    /// Strokes a polyline, optionally dashed (`[on, off]` layout units).
    pub fn polyline(&mut self, pts: &[(f32, f32)], width: f32, c: [u8; 3], alpha: u8, dash: Option<[f32; 2]>) {
        if pts.len() < 2 {
            return;
        }
        let mut pb = PathBuilder::new();
        pb.move_to(pts[0].0, pts[0].1);
        for p in &pts[1..] {
            pb.line_to(p.0, p.1);
        }
        let Some(path) = pb.finish() else { return };
        let stroke = Stroke { width, dash: dash.and_then(|d| StrokeDash::new(d.to_vec(), 0.0)), ..Stroke::default() };
        self.pix.stroke_path(&path, &paint(c, alpha), &stroke, self.transform(), None);
        let Some(out) = self.svg.as_mut() else { return };
        let points: Vec<String> = pts.iter().map(|p| format!("{},{}", num(p.0), num(p.1))).collect();
        let opacity =
            if alpha < 255 { format!(" stroke-opacity=\"{}\"", num(alpha as f32 / 255.0)) } else { String::new() };
        let dashes = dash.map_or_else(String::new, |d| format!(" stroke-dasharray=\"{} {}\"", num(d[0]), num(d[1])));
        let _ = writeln!(
            out,
            "<polyline points=\"{}\" fill=\"none\" stroke=\"{}\" stroke-width=\"{}\"{opacity}{dashes}/>",
            points.join(" "),
            hex(c),
            num(width)
        );
    }

    /// A straight line.
    pub fn line(&mut self, x0: f32, y0: f32, x1: f32, y1: f32, width: f32, c: [u8; 3]) {
        self.polyline(&[(x0, y0), (x1, y1)], width, c, 255, None);
    }

    /// Strokes (and optionally fills) an ellipse.
    pub fn ellipse(&mut self, cx: f32, cy: f32, rx: f32, ry: f32, width: f32, c: [u8; 3], fill: Option<[u8; 3]>) {
        let Some(r) = Rect::from_xywh(cx - rx, cy - ry, 2.0 * rx, 2.0 * ry) else {
            return;
        };
        let Some(path) = PathBuilder::from_oval(r) else {
            return;
        };
        let t = self.transform();
        if let Some(f) = fill {
            self.pix.fill_path(&path, &paint(f, 255), FillRule::Winding, t, None);
        }
        if width > 0.0 {
            self.pix.stroke_path(&path, &paint(c, 255), &Stroke { width, ..Stroke::default() }, t, None);
        }
        let stroke =
            if width > 0.0 { format!(" stroke=\"{}\" stroke-width=\"{}\"", hex(c), num(width)) } else { String::new() };
        let Some(out) = self.svg.as_mut() else { return };
        let _ = writeln!(
            out,
            "<ellipse cx=\"{}\" cy=\"{}\" rx=\"{}\" ry=\"{}\" fill=\"{}\"{stroke}/>",
            num(cx),
            num(cy),
            num(rx),
            num(ry),
            fill.map_or_else(|| "none".to_string(), hex)
        );
    }

    /// Width of `text` at `size` px.
    pub fn text_width(size: f32, text: &str) -> f32 {
        let f = font().as_scaled(PxScale::from(size));
        let mut w = 0.0;
        let mut prev = None;
        for ch in text.chars() {
            let id = f.glyph_id(ch);
            if let Some(p) = prev {
                w += f.kern(p, id);
            }
            w += f.h_advance(id);
            prev = Some(id);
        }
        w
    }

    /// Draws `text` with its baseline at `y`, antialiased. Control
    /// characters (a tab or line break in a title) are drawn as spaces, in
    /// the PNG and the SVG alike (XML cannot hold most of them).
    pub fn text(&mut self, x: f32, y: f32, size: f32, c: [u8; 3], align: Align, text: &str) {
        let cleaned: String = text.chars().map(|ch| if ch.is_control() { ' ' } else { ch }).collect();
        let text = cleaned.as_str();
        let anchor = match align {
            Align::Left => "start",
            Align::Centre => "middle",
            Align::Right => "end",
        };
        if let Some(out) = self.svg.as_mut() {
            let _ = writeln!(
                out,
                "<text x=\"{}\" y=\"{}\" font-family=\"{SVG_FONT}\" font-size=\"{}\" text-anchor=\"{anchor}\" \
             fill=\"{}\">{}</text>",
                num(x),
                num(y),
                num(size * em_per_scale()),
                hex(c),
                escape(text)
            );
        }
        let s = self.scale;
        let (x, y, size) = (x * s, y * s, size * s);
        let scaled = font().as_scaled(PxScale::from(size));
        let width = Canvas::text_width(size, text);
        let mut pen = match align {
            Align::Left => x,
            Align::Centre => x - width / 2.0,
            Align::Right => x - width,
        };
        let (w, h) = (self.pix.width() as i32, self.pix.height() as i32);
        let mut prev = None;
        for ch in text.chars() {
            let id = scaled.glyph_id(ch);
            if let Some(p) = prev {
                pen += scaled.kern(p, id);
            }
            let glyph = id.with_scale_and_position(PxScale::from(size), ab_glyph::point(pen, y));
            pen += scaled.h_advance(id);
            prev = Some(id);
            let Some(outlined) = font().outline_glyph(glyph) else {
                continue;
            };
            let bounds = outlined.px_bounds();
            let data = self.pix.data_mut();
            outlined.draw(|gx, gy, cov| {
                let (px, py) = (bounds.min.x as i32 + gx as i32, bounds.min.y as i32 + gy as i32);
                if px < 0 || py < 0 || px >= w || py >= h {
                    return;
                }
                let i = 4 * (py as usize * w as usize + px as usize);
                for k in 0..3 {
                    let old = data[i + k] as f32;
                    data[i + k] = (old + (c[k] as f32 - old) * cov.clamp(0.0, 1.0)).round() as u8;
                }
            });
        }
    }

    /// Draws `other` (drawn at this canvas's scale) with its top-left corner
    /// at layout point (`x`, `y`): its pixels copied, its SVG elements
    /// placed as a group.
    pub fn place(&mut self, other: &Canvas, x: f32, y: f32) {
        let (ox, oy) = ((x * self.scale).round() as i64, (y * self.scale).round() as i64);
        let (w, h) = (self.pix.width() as i64, self.pix.height() as i64);
        let (ow, oh) = (other.pix.width() as i64, other.pix.height() as i64);
        let (x0, x1) = (ox.max(0), (ox + ow).min(w));
        if x1 > x0 {
            let src = other.pix.data();
            let dst = self.pix.data_mut();
            for row in oy.max(0)..(oy + oh).min(h) {
                let s0 = (4 * ((row - oy) * ow + (x0 - ox))) as usize;
                let d0 = (4 * (row * w + x0)) as usize;
                let n = (4 * (x1 - x0)) as usize;
                dst[d0..d0 + n].copy_from_slice(&src[s0..s0 + n]);
            }
        }
        if let (Some(out), Some(inner)) = (self.svg.as_mut(), other.svg.as_ref()) {
            let _ = write!(out, "<g transform=\"translate({},{})\">\n{inner}</g>\n", num(x), num(y));
        }
    }

    /// The drawing as a standalone SVG document: `pixel_width × pixel_height`
    /// on the page, laid out in layout units (the `viewBox`); `None` for a
    /// canvas not kept as SVG.
    pub fn svg(&self) -> Option<String> {
        let (w, h) = self.size;
        let body = self.svg.as_ref()?;
        Some(format!(
            "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<svg xmlns=\"http://www.w3.org/2000/svg\" \
             width=\"{}\" height=\"{}\" viewBox=\"0 0 {w} {h}\" xml:space=\"preserve\" \
             style=\"white-space:pre\">\n{}</svg>\n",
            self.pix.width(),
            self.pix.height(),
            body
        ))
    }

    /// The pixels as straight RGBA bytes (every pixel is opaque).
    pub fn rgba(&self) -> &[u8] {
        self.pix.data()
    }

    /// Encodes as PNG.
    ///
    /// # Errors
    /// An I/O error if encoding fails.
    pub fn png(&self) -> std::io::Result<Vec<u8>> {
        encode_png(self.rgba(), self.pixel_width(), self.pixel_height())
    }
}

/// Straight RGBA bytes, `width × height`, as PNG.
fn encode_png(rgba: &[u8], width: u32, height: u32) -> std::io::Result<Vec<u8>> {
    let mut out = Vec::new();
    let encoder = image::codecs::png::PngEncoder::new(&mut out);
    image::ImageEncoder::write_image(encoder, rgba, width, height, image::ExtendedColorType::Rgba8)
        .map_err(std::io::Error::other)?;
    Ok(out)
}
