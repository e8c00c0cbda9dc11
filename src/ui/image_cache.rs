//! Item images: resolved inside the catalog folder, decoded and scaled on a small pool
//! of worker threads under size and time limits, uploaded as textures and kept in a
//! bounded cache. Only regular files are read (a FIFO named `x.png` would block a
//! decoder for good); a decode that takes longer than `DECODE_TIME_LIMIT` is given up
//! and a fresh worker takes the stuck one's place.
//!
//! `ui()` code only calls [`ImageCache::request`] and [`ImageCache::get`]; both are
//! hash-map look-ups. Decoding never happens on the UI thread.

use std::collections::{HashMap, VecDeque};
use std::io::Read;
use std::path::{Path, PathBuf};
use std::sync::mpsc::{Receiver, Sender, channel};
use std::sync::{Arc, Mutex, PoisonError};
use std::time::{Duration, Instant};

/// Largest width or height accepted from an image file.
pub const MAX_SIDE: u32 = 8192;
/// Largest allocation the decoder may make for one image.
pub const MAX_ALLOC: u64 = 256 * 1024 * 1024;
/// Largest image file read.
pub const MAX_FILE_BYTES: u64 = 64 * 1024 * 1024;
/// How long one image may take to decode before its card says so and moves on.
pub const DECODE_TIME_LIMIT: Duration = Duration::from_secs(10);
/// Decoder threads started at first; more join when one is stuck, up to the maximum.
pub const DECODERS: usize = 2;
pub const MAX_DECODERS: usize = 6;

/// What the cache holds for one (image, display size).
#[derive(Clone)]
pub enum Picture {
    Loading,
    Ready(egui::TextureHandle),
    /// Why there is no picture, in words for the placeholder.
    Missing(PictureProblem),
}

type Key = (String, u32);

/// Why an item has no picture; the words go on the placeholder.
#[derive(Debug, Clone, thiserror::Error)]
pub enum PictureProblem {
    /// items.csv names no image for the item.
    #[error("no image given for this item")]
    NotGiven,
    /// An absolute path, `..` or a link pointing out of the catalog folder.
    #[error("image path {0} leaves the catalog folder: not a picture; refused")]
    LeavesFolder(String),
    /// The catalog folder itself cannot be read.
    #[error("catalog folder {folder} unavailable: {why}")]
    NoFolder {
        /// The folder the study points at.
        folder: String,
        /// What the system said.
        why: String,
    },
    /// The named file is not there.
    #[error("image file missing: {0}")]
    FileMissing(String),
    /// A FIFO, a device, a folder: reading it could block or never end.
    #[error("image {0} is not a regular file: not a picture; refused")]
    NotAFile(String),
    /// The path names the study itself or one of its `-wal`/`-shm`/`-journal` files:
    /// opening it with plain file I/O would drop the study's locks.
    #[error("image {0} is a study file: not a picture; refused")]
    StudyFile(String),
    /// The file could not be opened or read.
    #[error("image cannot be read: {0}")]
    Unreadable(String),
    /// Over the size limits (bytes, pixels or decoded memory).
    #[error("image too large ({0})")]
    TooLarge(String),
    /// Not PNG or JPEG.
    #[error("image format not supported")]
    Unsupported,
    /// The decoder gave up on the contents.
    #[error("image is broken: {0}")]
    Broken(String),
    /// Decoding took longer than the time limit.
    #[error("the image took longer than {0} s to read; skipped")]
    TooSlow(u64),
    /// The study names no catalog folder.
    #[error("the study has no catalog folder")]
    NoCatalog,
}

struct Decoded {
    key: Key,
    result: Result<egui::ColorImage, PictureProblem>,
}

/// A bounded cache of decoded item images for one catalog folder.
pub struct ImageCache {
    root: Option<PathBuf>,
    capacity: usize,
    entries: HashMap<Key, Picture>,
    /// Least recently used first.
    order: VecDeque<Key>,
    pool: Option<Pool>,
    /// When each image still loading was asked for (for the time limit).
    asked: HashMap<Key, Instant>,
}

type Job = (Key, PathBuf);

/// The decoder threads: they share one queue of requests and one channel of results.
struct Pool {
    requests: Sender<Job>,
    queue: Arc<Mutex<Receiver<Job>>>,
    results: Receiver<Decoded>,
    sender: Sender<Decoded>,
    workers: usize,
}

impl Pool {
    fn start(ctx: &egui::Context) -> Pool {
        let (requests, queue) = channel::<Job>();
        let (sender, results) = channel();
        let mut pool = Pool {
            requests,
            queue: Arc::new(Mutex::new(queue)),
            results,
            sender,
            workers: 0,
        };
        for _ in 0..DECODERS {
            pool.add_worker(ctx);
        }
        pool
    }

    fn add_worker(&mut self, ctx: &egui::Context) {
        if self.workers >= MAX_DECODERS {
            return;
        }
        let queue = Arc::clone(&self.queue);
        let sender = self.sender.clone();
        let ctx = ctx.clone();
        let started = std::thread::Builder::new()
            .name(format!("image-decoder-{}", self.workers + 1))
            .spawn(move || {
                loop {
                    let job = queue.lock().unwrap_or_else(PoisonError::into_inner).recv();
                    let Ok((key, path)) = job else { break };
                    let result = decode_scaled(&path, key.1);
                    if sender.send(Decoded { key, result }).is_err() {
                        break;
                    }
                    ctx.request_repaint();
                }
            });
        if started.is_ok() {
            self.workers += 1;
        }
    }
}

impl ImageCache {
    /// `root` is the catalog folder; None when the study has no catalog folder.
    pub fn new(root: Option<PathBuf>, capacity: usize) -> ImageCache {
        ImageCache {
            root,
            capacity: capacity.max(8),
            entries: HashMap::new(),
            order: VecDeque::new(),
            pool: None,
            asked: HashMap::new(),
        }
    }

    pub fn len(&self) -> usize {
        self.entries.len()
    }

    pub fn is_empty(&self) -> bool {
        self.entries.is_empty()
    }

    /// Takes decoded images from the workers and turns them into textures; gives up on
    /// images past the time limit. Cheap.
    pub fn collect(&mut self, ctx: &egui::Context) {
        let Some(pool) = &mut self.pool else { return };
        let arrived: Vec<Decoded> = pool.results.try_iter().collect();
        for d in arrived {
            self.asked.remove(&d.key);
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
        let now = Instant::now();
        let late: Vec<Key> = self
            .asked
            .iter()
            .filter(|(_, at)| now.duration_since(**at) >= DECODE_TIME_LIMIT)
            .map(|(k, _)| k.clone())
            .collect();
        for key in late {
            self.asked.remove(&key);
            if self.entries.contains_key(&key) {
                self.entries.insert(
                    key,
                    Picture::Missing(PictureProblem::TooSlow(DECODE_TIME_LIMIT.as_secs())),
                );
            }
            // Its worker may be stuck for good: let a fresh one take its place.
            pool.add_worker(ctx);
        }
        if let Some(first) = self.asked.values().min() {
            ctx.request_repaint_after((*first + DECODE_TIME_LIMIT).saturating_duration_since(now));
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
            None => Picture::Missing(PictureProblem::NoCatalog),
            Some(root) => match resolve(root, relative) {
                Err(why) => Picture::Missing(why),
                Ok(path) => {
                    let pool = self.pool.get_or_insert_with(|| Pool::start(ctx));
                    let _ = pool.requests.send((key.clone(), path));
                    self.asked.insert(key.clone(), Instant::now());
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
/// would leave the folder (absolute paths, `..`, links pointing out), anything that is
/// not a regular file, and the study's own files are refused (`study::file_guard`).
pub fn resolve(root: &Path, relative: &str) -> Result<PathBuf, PictureProblem> {
    use crate::study::file_guard::{PathRefusal, resolve_inside};
    let relative = relative.trim();
    if relative.is_empty() {
        return Err(PictureProblem::NotGiven);
    }
    let named = || relative.to_string();
    resolve_inside(root, relative).map_err(|refusal| match refusal {
        PathRefusal::LeavesFolder | PathRefusal::LinksOutside => {
            PictureProblem::LeavesFolder(named())
        }
        PathRefusal::Missing => PictureProblem::FileMissing(named()),
        PathRefusal::NotRegularFile => PictureProblem::NotAFile(named()),
        PathRefusal::StudyFile => PictureProblem::StudyFile(named()),
        PathRefusal::NoFolder(why) => PictureProblem::NoFolder {
            folder: root.display().to_string(),
            why,
        },
    })
}

/// Decodes under the limits and scales down to fit `size` × `size` pixels.
pub fn decode_scaled(path: &Path, size: u32) -> Result<egui::ColorImage, PictureProblem> {
    // Checked again right before opening: `open` itself blocks on a FIFO, and closing
    // a descriptor of an open study would drop its locks.
    if !std::fs::metadata(path).is_ok_and(|m| m.is_file()) {
        return Err(PictureProblem::NotAFile(path.display().to_string()));
    }
    if crate::study::file_guard::is_study_file(path) {
        return Err(PictureProblem::StudyFile(path.display().to_string()));
    }
    let file = std::fs::File::open(path).map_err(|e| PictureProblem::Unreadable(e.to_string()))?;
    if !file.metadata().is_ok_and(|m| m.is_file()) {
        return Err(PictureProblem::NotAFile(path.display().to_string()));
    }
    let mut bytes = Vec::new();
    file.take(MAX_FILE_BYTES + 1)
        .read_to_end(&mut bytes)
        .map_err(|e| PictureProblem::Unreadable(e.to_string()))?;
    if bytes.len() as u64 > MAX_FILE_BYTES {
        return Err(PictureProblem::TooLarge(format!(
            "over {} MiB",
            MAX_FILE_BYTES >> 20
        )));
    }
    let mut reader = image::ImageReader::new(std::io::Cursor::new(bytes))
        .with_guessed_format()
        .map_err(|e| PictureProblem::Unreadable(e.to_string()))?;
    let mut limits = image::Limits::default();
    limits.max_image_width = Some(MAX_SIDE);
    limits.max_image_height = Some(MAX_SIDE);
    limits.max_alloc = Some(MAX_ALLOC);
    reader.limits(limits);
    let image = reader.decode().map_err(|e| match e {
        image::ImageError::Limits(_) => {
            PictureProblem::TooLarge(format!("over {MAX_SIDE} × {MAX_SIDE} pixels or 256 MiB"))
        }
        image::ImageError::Unsupported(_) => PictureProblem::Unsupported,
        other => PictureProblem::Broken(other.to_string()),
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
            // A thumbnail has no room for the reason: it says "No image" and tells why on
            // hover. Either way the text is clipped to the picture's own square.
            let (text, font) = if side >= 120.0 {
                (format!("No image\n{why}"), egui::TextStyle::Body)
            } else {
                ("No image".to_string(), egui::TextStyle::Small)
            };
            let galley = ui.painter().layout(
                text,
                font.resolve(ui.style()),
                ui.visuals().weak_text_color(),
                rect.width() - 8.0,
            );
            ui.painter_at(rect).galley(
                rect.center() - galley.size() / 2.0,
                galley,
                egui::Color32::GRAY,
            );
            let label = format!("no image: {why}");
            response.widget_info(|| egui::WidgetInfo::labeled(egui::Role::Image, true, &label));
            if side < 120.0 {
                return response.on_hover_text(format!("No image: {why}"));
            }
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
            let err = resolve(&root, bad).unwrap_err().to_string();
            assert!(err.contains("refused"), "{bad}: {err}");
        }
        #[cfg(unix)]
        {
            std::os::unix::fs::symlink(dir.path().join("secret.png"), root.join("link.png"))
                .unwrap();
            assert!(
                resolve(&root, "link.png")
                    .unwrap_err()
                    .to_string()
                    .contains("refused")
            );
        }
        assert!(
            resolve(&root, "images/none.png")
                .unwrap_err()
                .to_string()
                .contains("missing")
        );
        assert!(
            resolve(&root, "")
                .unwrap_err()
                .to_string()
                .contains("no image")
        );
    }

    /// Promise: a FIFO named like a picture never blocks a decoder (it would wait for a
    /// writer for good); it is refused before anything opens it.
    #[test]
    fn a_fifo_named_png_is_refused_without_blocking() {
        let dir = tempfile::tempdir().unwrap();
        let fifo = dir.path().join("x.png");
        let made = std::process::Command::new("mkfifo")
            .arg(&fifo)
            .status()
            .unwrap();
        assert!(made.success());
        let err = resolve(dir.path(), "x.png").unwrap_err().to_string();
        assert!(err.contains("not a regular file"), "{err}");
        let (done, finished) = channel();
        let path = fifo.clone();
        std::thread::spawn(move || {
            let _ = done.send(decode_scaled(&path, 64));
        });
        let result = finished
            .recv_timeout(Duration::from_secs(10))
            .expect("decode_scaled returned instead of blocking on the FIFO");
        assert!(
            result
                .unwrap_err()
                .to_string()
                .contains("not a regular file")
        );
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
        let err = decode_scaled(&broken, 64).unwrap_err().to_string();
        assert!(
            err.contains("broken") || err.contains("not supported"),
            "{err}"
        );

        let big = dir.path().join("big.png");
        image::RgbImage::new(MAX_SIDE + 1, 1).save(&big).unwrap();
        assert!(
            decode_scaled(&big, 64)
                .unwrap_err()
                .to_string()
                .contains("too large")
        );

        // A decompression bomb: a tiny file whose header declares 100 000 × 100 000
        // pixels. The limits refuse it before any pixel buffer is allocated.
        let bomb = dir.path().join("bomb.png");
        std::fs::write(&bomb, png_declaring(100_000, 100_000)).unwrap();
        assert!(
            decode_scaled(&bomb, 64)
                .unwrap_err()
                .to_string()
                .contains("too large")
        );

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
