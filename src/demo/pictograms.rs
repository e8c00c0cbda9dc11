//! Catalog pictures: a flat pictogram per category (some nouns get their own),
//! tinted per item, drawn on a small RGB canvas and encoded as PNG under a size cap.

use std::io;

use image::ImageEncoder;
use image::codecs::png::{CompressionType, FilterType, PngEncoder};

use super::generate::Rng;
use super::words::{CATS, Item};

const IMG: usize = 96;
/// Size cap per picture: `item_png` returns an error rather than write a larger file.
const MAX_PNG_BYTES: usize = 8 * 1024;

/// Colour roles in a pictogram, resolved per item so each picture gets its own tint.
#[derive(Clone, Copy)]
enum Ink {
    Main,
    Alt,
    Dark,
    Light,
    Sole,
    Back,
    Shadow,
    Steel,
    Flame,
    Glow,
    Beam,
}

/// Flat shapes on the 96x96 canvas: rectangles (x0, y0, x1, y1), ovals (centre,
/// radii), polygons and thick strokes (ends, width). Flat fills keep PNGs tiny.
#[derive(Clone, Copy)]
enum Shape {
    Rect(i16, i16, i16, i16, Ink),
    Oval(i16, i16, i16, i16, Ink),
    Poly(&'static [(i16, i16)], Ink),
    Bar((i16, i16), (i16, i16), i16, Ink),
}

/// The pictogram for a category; some nouns get their own variant.
#[rustfmt::skip]
fn pictogram(cat: usize, noun: usize) -> &'static [Shape] {
    use Ink::*;
    use Shape::*;
    match (cat, noun) {
        (0, 1 | 2) => &[Oval(48, 78, 38, 44, Main), Rect(0, 78, 96, 96, Back),
            Poly(&[(48, 46), (35, 78), (61, 78)], Dark), Rect(6, 78, 90, 82, Shadow)],
        (0, _) => &[Poly(&[(48, 16), (10, 78), (86, 78)], Main),
            Poly(&[(48, 46), (35, 78), (61, 78)], Dark), Rect(6, 78, 90, 82, Shadow)],
        (1, 1) => &[Rect(30, 24, 66, 74, Main), Oval(48, 24, 18, 18, Main), Oval(48, 74, 18, 18, Main),
            Rect(57, 36, 59, 86, Light)],
        (1, _) => &[Rect(30, 24, 66, 74, Main), Oval(48, 24, 18, 18, Main), Oval(48, 74, 18, 18, Main),
            Oval(48, 24, 10, 8, Dark), Rect(57, 36, 59, 86, Light)],
        (2, _) => &[Rect(16, 36, 80, 62, Main), Oval(16, 49, 13, 13, Main), Oval(80, 49, 13, 13, Main),
            Rect(18, 38, 20, 60, Dark), Rect(30, 38, 32, 60, Dark), Rect(42, 38, 44, 60, Dark),
            Rect(54, 38, 56, 60, Dark), Rect(66, 38, 68, 60, Dark), Rect(78, 38, 80, 60, Dark),
            Oval(48, 78, 20, 6, Shadow)],
        (3, _) => &[Rect(22, 32, 27, 78, Dark), Rect(69, 32, 74, 78, Dark), Rect(28, 26, 68, 84, Main),
            Oval(48, 26, 22, 9, Dark), Rect(34, 54, 62, 76, Light), Rect(46, 12, 50, 19, Dark)],
        (4, _) => &[Poly(&[(28, 82), (68, 82), (58, 64), (38, 64)], Main), Rect(32, 58, 64, 64, Steel),
            Poly(&[(48, 14), (35, 44), (61, 44)], Flame), Oval(48, 44, 13, 13, Flame),
            Poly(&[(48, 30), (42, 46), (54, 46)], Glow), Oval(48, 47, 6, 6, Glow)],
        (5, 2) => &[Oval(40, 52, 26, 26, Main), Oval(40, 52, 20, 20, Dark), Bar((62, 52), (92, 52), 6, Dark)],
        (5, _) => &[Rect(10, 46, 86, 51, Dark), Rect(24, 40, 72, 78, Main), Oval(48, 78, 24, 5, Main),
            Rect(20, 35, 76, 41, Dark), Oval(48, 31, 5, 5, Dark)],
        (6, _) => &[Oval(38, 52, 28, 20, Main), Oval(38, 52, 21, 13, Back),
            Poly(&[(72, 47), (94, 30), (94, 74), (72, 57)], Beam), Rect(56, 41, 72, 63, Dark),
            Oval(70, 52, 6, 6, Glow)],
        (7, 2) => &[Rect(34, 28, 62, 84, Main), Rect(38, 16, 58, 28, Dark), Rect(38, 44, 58, 62, Light)],
        (7, _) => &[Poly(&[(48, 12), (28, 52), (68, 52)], Main), Oval(48, 60, 22, 22, Main),
            Oval(40, 62, 5, 5, Light)],
        (8, _) => &[Bar((26, 18), (70, 86), 5, Main), Bar((70, 18), (26, 86), 5, Alt),
            Bar((24, 12), (30, 24), 9, Dark), Bar((72, 12), (66, 24), 9, Dark),
            Oval(64, 78, 7, 3, Dark), Oval(32, 78, 7, 3, Dark)],
        (9, _) => &[Poly(&[(31, 30), (14, 72), (23, 76), (33, 48)], Main),
            Poly(&[(65, 30), (82, 72), (73, 76), (63, 48)], Main), Rect(30, 28, 66, 84, Main),
            Oval(48, 26, 13, 13, Main), Oval(48, 27, 7, 8, Dark), Rect(47, 36, 49, 84, Dark)],
        (10, _) => &[Rect(30, 20, 56, 66, Main), Poly(&[(30, 58), (72, 58), (84, 68), (84, 74), (30, 74)], Main),
            Rect(28, 74, 86, 81, Sole), Rect(46, 28, 56, 31, Light), Rect(46, 36, 56, 39, Light),
            Rect(46, 44, 56, 47, Light), Rect(46, 52, 56, 55, Light)],
        // Camp furniture's hammock: a sling hung between two posts, not a chair.
        (11, 3) => &[Oval(48, 44, 32, 20, Main), Oval(48, 38, 30, 16, Back), Rect(14, 0, 82, 44, Back),
            Rect(8, 18, 14, 86, Dark), Rect(82, 18, 88, 86, Dark),
            Bar((14, 28), (18, 45), 2, Dark), Bar((82, 28), (78, 45), 2, Dark),
            Rect(4, 86, 92, 89, Shadow)],
        (_, 1) => &[Rect(14, 40, 82, 47, Main), Bar((28, 50), (62, 84), 4, Dark), Bar((62, 50), (28, 84), 4, Dark)],
        _ => &[Poly(&[(58, 16), (68, 16), (62, 50), (52, 50)], Main), Rect(24, 44, 64, 52, Main),
            Bar((28, 50), (62, 84), 4, Dark), Bar((62, 50), (28, 84), 4, Dark)],
    }
}

/// Minimal RGB canvas; a pixel belongs to a shape when its centre is inside.
struct Canvas(Vec<u8>);

impl Canvas {
    fn fill(&mut self, c: [u8; 3], inside: impl Fn(f32, f32) -> bool) {
        for (k, px) in self.0.chunks_exact_mut(3).enumerate() {
            if inside((k % IMG) as f32 + 0.5, (k / IMG) as f32 + 0.5) {
                px.copy_from_slice(&c);
            }
        }
    }
    /// Even-odd fill of an arbitrary polygon.
    fn poly(&mut self, pts: &[(f32, f32)], c: [u8; 3]) {
        self.fill(c, |x, y| {
            let mut inside = false;
            for (k, &a) in pts.iter().enumerate() {
                let b = pts[(k + 1) % pts.len()];
                if (a.1 > y) != (b.1 > y) && x < a.0 + (y - a.1) * (b.0 - a.0) / (b.1 - a.1) {
                    inside = !inside;
                }
            }
            inside
        });
    }
    fn draw(&mut self, shape: &Shape, ink: impl Fn(Ink) -> [u8; 3]) {
        let f = |v: i16| v as f32;
        match *shape {
            Shape::Rect(x0, y0, x1, y1, i) => self.fill(ink(i), |x, y| {
                x >= f(x0) && x < f(x1) && y >= f(y0) && y < f(y1)
            }),
            Shape::Oval(cx, cy, rx, ry, i) => self.fill(ink(i), |x, y| {
                ((x - f(cx)) / f(rx)).powi(2) + ((y - f(cy)) / f(ry)).powi(2) <= 1.0
            }),
            Shape::Poly(pts, i) => {
                let pts: Vec<(f32, f32)> = pts.iter().map(|&(x, y)| (f(x), f(y))).collect();
                self.poly(&pts, ink(i));
            }
            Shape::Bar(a, b, w, i) => {
                let (dx, dy) = (f(b.0 - a.0), f(b.1 - a.1));
                let len = (dx * dx + dy * dy).sqrt();
                let (nx, ny) = (-dy / len * f(w) / 2.0, dx / len * f(w) / 2.0);
                let (ax, ay, bx, by) = (f(a.0), f(a.1), f(b.0), f(b.1));
                let quad = [
                    (ax + nx, ay + ny),
                    (bx + nx, by + ny),
                    (bx - nx, by - ny),
                    (ax - nx, ay - ny),
                ];
                self.poly(&quad, ink(i));
            }
        }
    }
}

fn shade(c: [u8; 3], f: f32) -> [u8; 3] {
    c.map(|v| (v as f32 * f).clamp(0.0, 255.0) as u8)
}

const BACKGROUNDS: [[u8; 3]; 5] = [
    [244, 241, 232],
    [232, 240, 236],
    [236, 238, 246],
    [246, 236, 230],
    [240, 240, 240],
];

/// Draws one item's pictogram in its own colours and encodes it as PNG.
pub(super) fn item_png(it: &Item, rng: &mut Rng) -> io::Result<Vec<u8>> {
    let bg = *rng.pick(&BACKGROUNDS);
    let main = shade(
        *rng.pick(CATS[it.cat].palette),
        0.85 + 0.27 * rng.unit() as f32,
    );
    let ink = |i: Ink| match i {
        Ink::Main => main,
        Ink::Alt => shade(main, 0.8),
        Ink::Dark => shade(main, 0.6),
        Ink::Light => shade(main, 1.5),
        Ink::Sole => shade(main, 0.36),
        Ink::Back => bg,
        Ink::Shadow => shade(bg, 0.6),
        Ink::Steel => [150, 152, 160],
        Ink::Flame => [236, 110, 40],
        Ink::Glow => [250, 214, 80],
        Ink::Beam => [255, 235, 88],
    };
    let mut canvas = Canvas(bg.repeat(IMG * IMG));
    for shape in pictogram(it.cat, it.noun) {
        canvas.draw(shape, ink);
    }
    let mut png = Vec::new();
    PngEncoder::new_with_quality(&mut png, CompressionType::Best, FilterType::Adaptive)
        .write_image(
            &canvas.0,
            IMG as u32,
            IMG as u32,
            image::ExtendedColorType::Rgb8,
        )
        .map_err(io::Error::other)?;
    if png.len() > MAX_PNG_BYTES {
        return Err(io::Error::other(format!(
            "{} image is {} bytes, over the limit",
            it.id,
            png.len()
        )));
    }
    Ok(png)
}
