//! Decoding a step's frame image with limits, so that a hostile or broken image file costs a
//! located error, never a crash or gigabytes of memory.
//!
//! The image crate's [`image::Limits`] refuse an image whose header declares sides larger
//! than [`MAX_DECODE_SIDE`] before any pixel buffer is allocated, and cap what the decoder may
//! allocate at [`MAX_DECODE_BYTES`]: a small PNG that declares 100,000 x 100,000 pixels (a
//! decompression bomb) is refused at its header.

use std::io::{BufRead, Cursor, Seek};
use std::path::Path;

use image::{DynamicImage, ImageReader};

use super::confine::confined;

/// Largest accepted image side before decoding.
pub const MAX_DECODE_SIDE: u32 = 8192;
/// Largest allocation the decoder may make (an 8192 x 8192 RGBA image is 256 MiB).
pub const MAX_DECODE_BYTES: u64 = 256 << 20;

/// The limits every frame is decoded under.
pub fn frame_limits() -> image::Limits {
    let mut limits = image::Limits::default();
    limits.max_image_width = Some(MAX_DECODE_SIDE);
    limits.max_image_height = Some(MAX_DECODE_SIDE);
    limits.max_alloc = Some(MAX_DECODE_BYTES);
    limits
}

/// Decodes the frame at `rel` (relative to the campaign folder `root`). The path must stay
/// inside the campaign folder, also through links; the error names the frame.
pub fn decode_frame(root: &Path, rel: &str) -> Result<DynamicImage, String> {
    let fail = |e: &dyn std::fmt::Display| format!("frame `{rel}`: {e}");
    let inside = Path::new(rel).components().all(|c| {
        matches!(
            c,
            std::path::Component::Normal(_) | std::path::Component::CurDir
        )
    });
    if !inside {
        return Err(fail(&"the path leaves the campaign folder"));
    }
    let path = confined(root, Path::new(rel)).map_err(|e| fail(&e))?;
    let file = std::fs::File::open(path).map_err(|e| fail(&e))?;
    decode_reader(std::io::BufReader::new(file)).map_err(|e| fail(&e))
}

/// Decodes image bytes (PNG or JPEG, told by their content) under [`frame_limits`].
pub fn decode_frame_bytes(bytes: &[u8]) -> Result<DynamicImage, String> {
    decode_reader(Cursor::new(bytes))
}

fn decode_reader<R: BufRead + Seek>(r: R) -> Result<DynamicImage, String> {
    let mut reader = ImageReader::new(r)
        .with_guessed_format()
        .map_err(|e| e.to_string())?;
    reader.limits(frame_limits());
    reader.decode().map_err(|e| e.to_string())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn png(w: u32, h: u32) -> Vec<u8> {
        let mut out = Cursor::new(Vec::new());
        image::RgbImage::from_pixel(w, h, image::Rgb([10, 20, 30]))
            .write_to(&mut out, image::ImageFormat::Png)
            .unwrap();
        out.into_inner()
    }

    #[test]
    fn a_small_png_decodes() {
        let img = decode_frame_bytes(&png(3, 2)).unwrap();
        assert_eq!((img.width(), img.height()), (3, 2));
        assert_eq!(img.to_rgb8().get_pixel(2, 1).0, [10, 20, 30]);
    }

    #[test]
    fn paths_that_leave_the_folder_are_refused() {
        let dir = tempfile::tempdir().unwrap();
        for rel in ["../secret.png", "/etc/passwd", "a/../../b.png"] {
            let e = decode_frame(dir.path(), rel).unwrap_err();
            assert!(e.contains("leaves the campaign folder"), "{e}");
        }
    }

    #[test]
    fn garbage_is_an_error_not_a_panic() {
        assert!(decode_frame_bytes(b"not an image").is_err());
        assert!(decode_frame_bytes(&png(4, 4)[..40]).is_err());
    }
}
