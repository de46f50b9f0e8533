//! The step's frame image beside the map: decoded on a background thread with size limits,
//! kept in a small cache, never blocking a frame. While a new image loads the last one stays.

use std::collections::VecDeque;
use std::path::{Path, PathBuf};
use std::sync::mpsc::{Receiver, TryRecvError, channel};

use egui::{ColorImage, TextureHandle, TextureOptions};

/// Decoded images kept.
pub const CACHE_CAP: usize = 24;
/// Largest side an image is shown at; bigger images are shrunk on the loading thread.
pub const MAX_SIDE: u32 = 1024;

type Decoded = Result<ColorImage, String>;

/// Lazily loaded frame images.
#[derive(Default)]
pub struct FrameCache {
    entries: VecDeque<(PathBuf, Result<TextureHandle, String>)>,
    pending: Option<(PathBuf, Receiver<Decoded>)>,
    last_shown: Option<TextureHandle>,
}

/// What can be shown for a requested frame.
pub enum FrameShow<'a> {
    /// The image.
    Ready(&'a TextureHandle),
    /// Still loading; the previous image, if any, can stand in.
    Loading(Option<&'a TextureHandle>),
    /// The image could not be read.
    Failed(&'a str),
}

impl FrameCache {
    /// Whether a decode is in flight.
    pub fn busy(&self) -> bool {
        self.pending.is_some()
    }

    /// The frame at `rel` (relative to `root`), starting its load when needed.
    pub fn request(&mut self, ctx: &egui::Context, root: &Path, rel: &str) -> FrameShow<'_> {
        let key = root.join(rel);
        self.collect(ctx);
        if let Some(i) = self.entries.iter().position(|(p, _)| *p == key) {
            if let Ok(t) = &self.entries[i].1 {
                self.last_shown = Some(t.clone());
            }
            return match &self.entries[i].1 {
                Ok(t) => FrameShow::Ready(t),
                Err(e) => FrameShow::Failed(e),
            };
        }
        if self.pending.as_ref().map(|(p, _)| p) != Some(&key) {
            self.pending = Some((key.clone(), spawn_decode(root, rel)));
        }
        FrameShow::Loading(self.last_shown.as_ref())
    }

    fn collect(&mut self, ctx: &egui::Context) {
        let Some((path, rx)) = &self.pending else {
            return;
        };
        let result = match rx.try_recv() {
            Ok(r) => r,
            Err(TryRecvError::Empty) => return,
            Err(TryRecvError::Disconnected) => Err("the image loader stopped".into()),
        };
        let name = path.display().to_string();
        let entry = result.map(|img| ctx.load_texture(name, img, TextureOptions::LINEAR));
        self.entries.push_back((path.clone(), entry));
        while self.entries.len() > CACHE_CAP {
            self.entries.pop_front();
        }
        self.pending = None;
    }
}

fn spawn_decode(root: &Path, rel: &str) -> Receiver<Decoded> {
    let (tx, rx) = channel();
    let rel = rel.to_string();
    let root = root.to_path_buf();
    let spawned = std::thread::Builder::new()
        .name("countersteer-frame".into())
        .spawn(move || {
            let _ = tx.send(decode(&root, &rel));
        });
    if let Err(e) = spawned {
        let (tx, rx2) = channel();
        let _ = tx.send(Err(format!("cannot start the image loader: {e}")));
        return rx2;
    }
    rx
}

/// Decodes a frame with the library's size limits and confinement to the campaign folder
/// ([`crate::campaign::frame::decode_frame`]), shrinking it to at most [`MAX_SIDE`] per side.
pub fn decode(root: &Path, rel: &str) -> Decoded {
    let img = crate::campaign::frame::decode_frame(root, rel)?;
    let img = if img.width() > MAX_SIDE || img.height() > MAX_SIDE {
        img.thumbnail(MAX_SIDE, MAX_SIDE)
    } else {
        img
    };
    let rgba = img.to_rgba8();
    let size = [rgba.width() as usize, rgba.height() as usize];
    Ok(ColorImage::from_rgba_unmultiplied(size, rgba.as_raw()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn refuses_paths_leaving_the_campaign() {
        let e = decode(Path::new("/tmp"), "../secret.png").unwrap_err();
        assert!(e.contains("leaves the campaign folder"), "{e}");
    }

    #[test]
    fn decodes_and_shrinks_a_large_png() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("big.png");
        image::RgbImage::from_pixel(2048, 512, image::Rgb([10, 20, 30]))
            .save(&path)
            .unwrap();
        let img = decode(dir.path(), "big.png").unwrap();
        assert_eq!(img.size, [1024, 256]);
        assert_eq!(img.pixels[0], egui::Color32::from_rgb(10, 20, 30));
    }

    #[test]
    fn a_broken_file_is_an_error_not_a_panic() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("bad.png");
        std::fs::write(&path, b"not an image").unwrap();
        assert!(decode(dir.path(), "bad.png").is_err());
    }
}
