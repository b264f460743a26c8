//! A drawing surface: antialiased lines and shapes (tiny-skia) and text from
//! a font compiled into the binary (DejaVu Sans, via the `dejavu` crate), so
//! pictures are the same on any machine.

use std::sync::OnceLock;

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

/// An opaque RGBA picture being drawn.
pub struct Canvas {
    pix: Pixmap,
}

fn paint(c: [u8; 3], alpha: u8) -> Paint<'static> {
    let mut p = Paint::default();
    p.set_color_rgba8(c[0], c[1], c[2], alpha);
    p.anti_alias = true;
    p
}

impl Canvas {
    /// A `width × height` canvas filled with `bg`.
    ///
    /// # Panics
    /// If a side is zero.
    pub fn new(width: u32, height: u32, bg: [u8; 3]) -> Canvas {
        let mut pix = Pixmap::new(width, height).expect("non-empty canvas");
        pix.fill(tiny_skia::Color::from_rgba8(bg[0], bg[1], bg[2], 255));
        Canvas { pix }
    }

    /// Width, px.
    pub fn width(&self) -> u32 {
        self.pix.width()
    }
    /// Height, px.
    pub fn height(&self) -> u32 {
        self.pix.height()
    }

    /// Sets one pixel (opaque).
    pub fn put(&mut self, x: u32, y: u32, c: [u8; 3]) {
        let i = 4 * (y as usize * self.pix.width() as usize + x as usize);
        self.pix.data_mut()[i..i + 4].copy_from_slice(&[c[0], c[1], c[2], 255]);
    }

    /// Reads one pixel.
    pub fn get(&self, x: u32, y: u32) -> [u8; 3] {
        let i = 4 * (y as usize * self.pix.width() as usize + x as usize);
        let d = self.pix.data();
        [d[i], d[i + 1], d[i + 2]]
    }

    /// Copies every pixel of `other` (same size).
    ///
    /// # Panics
    /// If the sizes differ.
    pub fn copy_from(&mut self, other: &Canvas) {
        self.pix.data_mut().copy_from_slice(other.pix.data());
    }

    /// Fills an axis-aligned rectangle.
    pub fn rect(&mut self, x: f32, y: f32, w: f32, h: f32, c: [u8; 3]) {
        if let Some(r) = Rect::from_xywh(x, y, w, h) {
            self.pix.fill_rect(r, &paint(c, 255), Transform::identity(), None);
        }
    }

    /// Strokes a polyline, optionally dashed (`[on, off]` px).
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
        self.pix.stroke_path(&path, &paint(c, alpha), &stroke, Transform::identity(), None);
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
        if let Some(f) = fill {
            self.pix.fill_path(&path, &paint(f, 255), FillRule::Winding, Transform::identity(), None);
        }
        if width > 0.0 {
            self.pix.stroke_path(
                &path,
                &paint(c, 255),
                &Stroke { width, ..Stroke::default() },
                Transform::identity(),
                None,
            );
        }
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

    /// Draws `text` with its baseline at `y`, antialiased.
    pub fn text(&mut self, x: f32, y: f32, size: f32, c: [u8; 3], align: Align, text: &str) {
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

    /// The pixels as straight RGBA bytes (every pixel is opaque).
    pub fn rgba(&self) -> &[u8] {
        self.pix.data()
    }

    /// Encodes as PNG.
    ///
    /// # Errors
    /// An I/O error if encoding fails.
    pub fn png(&self) -> std::io::Result<Vec<u8>> {
        let mut out = Vec::new();
        let encoder = image::codecs::png::PngEncoder::new(&mut out);
        image::ImageEncoder::write_image(
            encoder,
            self.rgba(),
            self.width(),
            self.height(),
            image::ExtendedColorType::Rgba8,
        )
        .map_err(std::io::Error::other)?;
        Ok(out)
    }
}
