//! Item images: resolved inside the catalog folder, decoded and scaled on a worker
//! thread under size limits, uploaded as textures and kept in a bounded cache.
//!
//! `ui()` code only calls [`ImageCache::request`] and [`ImageCache::get`]; both are
//! hash-map look-ups. Decoding never happens on the UI thread.

use std::collections::{HashMap, VecDeque};
use std::path::{Component, Path, PathBuf};
use std::sync::mpsc::{Receiver, Sender, channel};

/// Largest width or height accepted from an image file.
pub const MAX_SIDE: u32 = 8192;
/// Largest allocation the decoder may make for one image.
pub const MAX_ALLOC: u64 = 256 * 1024 * 1024;

/// What the cache holds for one (image, display size).
#[derive(Clone)]
pub enum Picture {
    Loading,
    Ready(egui::TextureHandle),
    /// Why there is no picture, in words for the placeholder.
    Missing(String),
}

type Key = (String, u32);

struct Decoded {
    key: Key,
    result: Result<egui::ColorImage, String>,
}

/// A bounded cache of decoded item images for one catalog folder.
pub struct ImageCache {
    root: Option<PathBuf>,
    capacity: usize,
    entries: HashMap<Key, Picture>,
    /// Least recently used first.
    order: VecDeque<Key>,
    requests: Option<Sender<(Key, PathBuf)>>,
    results: Option<Receiver<Decoded>>,
}

impl ImageCache {
    /// `root` is the catalog folder; None when the study has no catalog folder.
    pub fn new(root: Option<PathBuf>, capacity: usize) -> ImageCache {
        ImageCache {
            root,
            capacity: capacity.max(8),
            entries: HashMap::new(),
            order: VecDeque::new(),
            requests: None,
            results: None,
        }
    }

    pub fn len(&self) -> usize {
        self.entries.len()
    }

    pub fn is_empty(&self) -> bool {
        self.entries.is_empty()
    }

    fn worker(&mut self, ctx: &egui::Context) -> &Sender<(Key, PathBuf)> {
        if self.requests.is_none() {
            let (req_tx, req_rx) = channel::<(Key, PathBuf)>();
            let (res_tx, res_rx) = channel();
            let ctx = ctx.clone();
            std::thread::Builder::new()
                .name("image-decoder".into())
                .spawn(move || {
                    while let Ok((key, path)) = req_rx.recv() {
                        let result = decode_scaled(&path, key.1);
                        if res_tx.send(Decoded { key, result }).is_err() {
                            break;
                        }
                        ctx.request_repaint();
                    }
                })
                .expect("the image decoder thread starts");
            self.requests = Some(req_tx);
            self.results = Some(res_rx);
        }
        self.requests.as_ref().expect("set above")
    }

    /// Takes decoded images from the worker and turns them into textures. Cheap.
    pub fn collect(&mut self, ctx: &egui::Context) {
        let Some(results) = &self.results else { return };
        let arrived: Vec<Decoded> = results.try_iter().collect();
        for d in arrived {
            if !self.entries.contains_key(&d.key) {
                continue; // evicted while decoding
            }
            let picture = match d.result {
                Ok(image) => Picture::Ready(ctx.load_texture(
                    format!("item-image:{}:{}", d.key.0, d.key.1),
                    image,
                    egui::TextureOptions::LINEAR,
                )),
                Err(why) => Picture::Missing(why),
            };
            self.entries.insert(d.key, picture);
        }
    }

    /// Asks for `relative` scaled to fit `size` points; returns what is there now.
    pub fn request(&mut self, ctx: &egui::Context, relative: &str, size: u32) -> Picture {
        let key = (relative.to_string(), size);
        if let Some(p) = self.entries.get(&key) {
            let p = p.clone();
            self.touch(&key);
            return p;
        }
        let picture = match self.root.as_deref() {
            None => Picture::Missing("the study has no catalog folder".into()),
            Some(root) => match resolve(root, relative) {
                Err(why) => Picture::Missing(why),
                Ok(path) => {
                    let _ = self.worker(ctx).send((key.clone(), path));
                    Picture::Loading
                }
            },
        };
        self.entries.insert(key.clone(), picture.clone());
        self.order.push_back(key);
        self.evict();
        picture
    }

    fn touch(&mut self, key: &Key) {
        if self.order.back() == Some(key) {
            return;
        }
        if let Some(at) = self.order.iter().position(|k| k == key) {
            let k = self.order.remove(at).expect("found");
            self.order.push_back(k);
        }
    }

    fn evict(&mut self) {
        while self.order.len() > self.capacity {
            if let Some(old) = self.order.pop_front() {
                self.entries.remove(&old);
            }
        }
    }
}

/// Resolves an image path from items.csv inside the catalog folder; anything that
/// would leave the folder (absolute paths, `..`, links pointing out) is refused.
pub fn resolve(root: &Path, relative: &str) -> Result<PathBuf, String> {
    let relative = relative.trim();
    if relative.is_empty() {
        return Err("no image given for this item".into());
    }
    let rel = Path::new(relative);
    if rel
        .components()
        .any(|c| !matches!(c, Component::Normal(_) | Component::CurDir))
    {
        return Err(format!(
            "image path {relative} leaves the catalog folder; refused"
        ));
    }
    let root = root
        .canonicalize()
        .map_err(|e| format!("catalog folder {} unavailable: {e}", root.display()))?;
    let full = root.join(rel);
    let real = full
        .canonicalize()
        .map_err(|_| format!("image file missing: {relative}"))?;
    if !real.starts_with(&root) {
        return Err(format!(
            "image path {relative} leaves the catalog folder; refused"
        ));
    }
    Ok(real)
}

/// Decodes under the limits and scales down to fit `size` × `size` pixels.
pub fn decode_scaled(path: &Path, size: u32) -> Result<egui::ColorImage, String> {
    let mut reader = image::ImageReader::open(path)
        .map_err(|e| format!("image cannot be opened: {e}"))?
        .with_guessed_format()
        .map_err(|e| format!("image cannot be read: {e}"))?;
    let mut limits = image::Limits::default();
    limits.max_image_width = Some(MAX_SIDE);
    limits.max_image_height = Some(MAX_SIDE);
    limits.max_alloc = Some(MAX_ALLOC);
    reader.limits(limits);
    let image = reader.decode().map_err(|e| match e {
        image::ImageError::Limits(_) => {
            format!("image too large (over {MAX_SIDE} × {MAX_SIDE} pixels or 256 MiB)")
        }
        image::ImageError::Unsupported(_) => "image format not supported".to_string(),
        other => format!("image is broken: {other}"),
    })?;
    let size = size.max(1);
    let image = if image.width() > size || image.height() > size {
        image.resize(size, size, image::imageops::FilterType::Triangle)
    } else {
        image
    };
    let rgba = image.to_rgba8();
    Ok(egui::ColorImage::from_rgba_unmultiplied(
        [rgba.width() as usize, rgba.height() as usize],
        rgba.as_raw(),
    ))
}

/// Draws a picture in a square of `side` points, or a placeholder that says why not.
pub fn show(ui: &mut egui::Ui, picture: &Picture, side: f32, alt: &str) -> egui::Response {
    let size = egui::vec2(side, side);
    match picture {
        Picture::Ready(texture) => ui.add(
            egui::Image::new(texture)
                .fit_to_exact_size(size)
                .maintain_aspect_ratio(true)
                .alt_text(alt),
        ),
        Picture::Loading => {
            let (rect, response) = ui.allocate_exact_size(size, egui::Sense::hover());
            ui.painter()
                .rect_filled(rect, 4.0, ui.visuals().extreme_bg_color);
            egui::Spinner::new().paint_at(ui, rect.shrink(side * 0.35));
            response.widget_info(|| {
                egui::WidgetInfo::labeled(egui::Role::Image, true, "image loading")
            });
            response
        }
        Picture::Missing(why) => {
            let (rect, response) = ui.allocate_exact_size(size, egui::Sense::hover());
            ui.painter()
                .rect_filled(rect, 4.0, ui.visuals().extreme_bg_color);
            let font = if side >= 120.0 {
                egui::TextStyle::Body
            } else {
                egui::TextStyle::Small
            };
            let galley = ui.painter().layout(
                format!("No image\n{why}"),
                font.resolve(ui.style()),
                ui.visuals().weak_text_color(),
                rect.width() - 8.0,
            );
            ui.painter().galley(
                rect.center() - galley.size() / 2.0,
                galley,
                egui::Color32::GRAY,
            );
            let label = format!("no image: {why}");
            response.widget_info(|| egui::WidgetInfo::labeled(egui::Role::Image, true, &label));
            response
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn paths_that_leave_the_folder_are_refused() {
        let dir = tempfile::tempdir().unwrap();
        let root = dir.path().join("catalog");
        std::fs::create_dir_all(root.join("images")).unwrap();
        std::fs::write(dir.path().join("secret.png"), b"x").unwrap();
        std::fs::write(root.join("images/a.png"), b"x").unwrap();
        assert!(resolve(&root, "images/a.png").is_ok());
        for bad in ["../secret.png", "images/../../secret.png", "/etc/passwd"] {
            let err = resolve(&root, bad).unwrap_err();
            assert!(err.contains("refused"), "{bad}: {err}");
        }
        #[cfg(unix)]
        {
            std::os::unix::fs::symlink(dir.path().join("secret.png"), root.join("link.png"))
                .unwrap();
            assert!(resolve(&root, "link.png").unwrap_err().contains("refused"));
        }
        assert!(
            resolve(&root, "images/none.png")
                .unwrap_err()
                .contains("missing")
        );
        assert!(resolve(&root, "").unwrap_err().contains("no image"));
    }

    /// A PNG signature and an IHDR chunk declaring the given size (8-bit RGB), with its CRC.
    fn png_declaring(width: u32, height: u32) -> Vec<u8> {
        let mut chunk = b"IHDR".to_vec();
        chunk.extend(width.to_be_bytes());
        chunk.extend(height.to_be_bytes());
        chunk.extend([8, 2, 0, 0, 0]);
        let mut crc = 0xFFFF_FFFFu32;
        for byte in &chunk {
            crc ^= *byte as u32;
            for _ in 0..8 {
                crc = if crc & 1 == 1 {
                    (crc >> 1) ^ 0xEDB8_8320
                } else {
                    crc >> 1
                };
            }
        }
        let mut png = b"\x89PNG\r\n\x1a\n".to_vec();
        png.extend(13u32.to_be_bytes());
        png.extend(&chunk);
        png.extend((!crc).to_be_bytes());
        png
    }

    #[test]
    fn broken_and_oversized_images_say_why() {
        let dir = tempfile::tempdir().unwrap();
        let broken = dir.path().join("broken.png");
        std::fs::write(&broken, b"\x89PNG\r\n\x1a\nnot really").unwrap();
        let err = decode_scaled(&broken, 64).unwrap_err();
        assert!(
            err.contains("broken") || err.contains("not supported"),
            "{err}"
        );

        let big = dir.path().join("big.png");
        image::RgbImage::new(MAX_SIDE + 1, 1).save(&big).unwrap();
        assert!(decode_scaled(&big, 64).unwrap_err().contains("too large"));

        // A decompression bomb: a tiny file whose header declares 100 000 × 100 000
        // pixels. The limits refuse it before any pixel buffer is allocated.
        let bomb = dir.path().join("bomb.png");
        std::fs::write(&bomb, png_declaring(100_000, 100_000)).unwrap();
        assert!(decode_scaled(&bomb, 64).unwrap_err().contains("too large"));

        // A text file named .png, and a real PNG cut off half-way.
        let text = dir.path().join("notes.png");
        std::fs::write(&text, "just some words").unwrap();
        assert!(decode_scaled(&text, 64).is_err());
        let whole = dir.path().join("whole.png");
        image::RgbImage::from_pixel(40, 40, image::Rgb([200, 10, 10]))
            .save(&whole)
            .unwrap();
        let bytes = std::fs::read(&whole).unwrap();
        let cut = dir.path().join("cut.png");
        std::fs::write(&cut, &bytes[..bytes.len() / 2]).unwrap();
        assert!(decode_scaled(&cut, 64).is_err());

        let fine = dir.path().join("fine.png");
        image::RgbImage::new(300, 150).save(&fine).unwrap();
        let img = decode_scaled(&fine, 100).unwrap();
        assert_eq!(img.size, [100, 50]);
    }
}
