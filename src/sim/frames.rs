//! The rover's forward camera, sketched: what a camera on the rover's bonnet would see, one
//! picture per step, for the expert's eye.
//!
//! A pinhole camera (the standard central-projection model, e.g. Hartley & Zisserman 2004,
//! "Multiple View Geometry in Computer Vision", ch. 6) sits [`CAMERA_HEIGHT`] above the
//! ground at the rover's front, looking along the rover's heading and pitched down by
//! [`PITCH`]. The inter-row lane (bare soil with two wheel ruts) runs ahead between mown
//! strips; the two rows of trees and the trellis posts between them converge towards the
//! horizon; the rover's bonnet fills the bottom of the picture. Everything is drawn from the
//! rover's pose, so a lateral offset moves the lane sideways in the picture and a heading
//! error moves its vanishing point: drift is visible at a glance. Pictures are wider than
//! tall ([`ASPECT`]) and use flat colours, which keeps the PNG files small.

use image::{Rgb, RgbImage};

use super::lane::{Lane, Tree};
use super::vehicle::{Bicycle, Pose};

/// Height of the picture as a share of its width.
pub const ASPECT: f64 = 0.625;
/// Camera height above the ground (m).
pub const CAMERA_HEIGHT: f64 = 1.3;
/// Downward pitch of the camera (rad).
pub const PITCH: f64 = 0.14;
/// Horizontal field of view (rad).
pub const FIELD_OF_VIEW: f64 = 1.45;
/// Ground beyond this distance (m) is drawn as the far haze.
const FAR: f64 = 45.0;

const SKY_HIGH: Rgb<u8> = Rgb([150, 176, 196]);
const SKY_LOW: Rgb<u8> = Rgb([208, 214, 210]);
const HAZE: Rgb<u8> = Rgb([178, 190, 170]);
const SOIL: Rgb<u8> = Rgb([170, 140, 104]);
const RUT: Rgb<u8> = Rgb([138, 110, 80]);
const MOWN: Rgb<u8> = Rgb([112, 146, 82]);
const MULCH: Rgb<u8> = Rgb([96, 88, 62]);
const MEADOW: Rgb<u8> = Rgb([128, 156, 92]);
const TRUNK: Rgb<u8> = Rgb([84, 64, 46]);
const CANOPY: Rgb<u8> = Rgb([52, 100, 56]);
const CANOPY_SHADE: Rgb<u8> = Rgb([38, 76, 44]);
const POST: Rgb<u8> = Rgb([158, 150, 132]);
const BONNET: Rgb<u8> = Rgb([72, 104, 112]);
const BONNET_EDGE: Rgb<u8> = Rgb([34, 48, 52]);

/// Distance between trellis posts along a row (m); they stand halfway between trees.
const POST_SPACING: f64 = 5.0;

/// Height of a `width`-pixel picture.
pub fn frame_height(width: u32) -> u32 {
    ((f64::from(width) * ASPECT).round() as u32).max(1)
}

/// The camera: where it is, where it looks, and how it maps rays to pixels.
struct Camera {
    x: f64,
    y: f64,
    cos: f64,
    sin: f64,
    /// Focal length in pixels.
    f: f64,
    w: f64,
    h: f64,
}

impl Camera {
    fn new(pose: &Pose, car: &Bicycle, width: u32) -> Camera {
        let (sin, cos) = pose.yaw.sin_cos();
        let w = f64::from(width);
        Camera {
            x: pose.x + car.l_f * cos,
            y: pose.y + car.l_f * sin,
            cos,
            sin,
            f: w / 2.0 / (FIELD_OF_VIEW / 2.0).tan(),
            w,
            h: f64::from(frame_height(width)),
        }
    }

    /// The ground point seen through the pixel centre at (col, row): (world x, world y,
    /// distance ahead), or `None` above the horizon.
    fn ground(&self, col: u32, row: u32) -> Option<(f64, f64, f64)> {
        let xc = (f64::from(col) + 0.5 - self.w / 2.0) / self.f;
        let yc = (self.h / 2.0 - f64::from(row) - 0.5) / self.f;
        let (sp, cp) = PITCH.sin_cos();
        let ahead = cp + yc * sp;
        let up = yc * cp - sp;
        if up >= -1e-9 {
            return None;
        }
        let t = CAMERA_HEIGHT / -up;
        let (a, r) = (t * ahead, t * xc);
        Some((
            self.x + a * self.cos + r * self.sin,
            self.y + a * self.sin - r * self.cos,
            a,
        ))
    }

    /// Pixel position (col, row) and depth of a world point at height `z`, or `None` behind.
    fn project(&self, wx: f64, wy: f64, z: f64) -> Option<(f64, f64, f64)> {
        let (dx, dy) = (wx - self.x, wy - self.y);
        let a = dx * self.cos + dy * self.sin;
        let r = dx * self.sin - dy * self.cos;
        let u = z - CAMERA_HEIGHT;
        let (sp, cp) = PITCH.sin_cos();
        let depth = a * cp - u * sp;
        if depth < 0.3 {
            return None;
        }
        let up = a * sp + u * cp;
        Some((
            self.w / 2.0 + self.f * r / depth,
            self.h / 2.0 - self.f * up / depth,
            depth,
        ))
    }
}

/// Draws the forward view of one pose, `width` pixels wide and [`frame_height`] tall.
pub fn render_frame(lane: &Lane, pose: &Pose, car: &Bicycle, width: u32) -> RgbImage {
    let cam = Camera::new(pose, car, width);
    let s = lane.project(pose.x, pose.y, None).s;
    let line = lane.polyline(s - 2.0, s + FAR + 5.0, 0.5);
    let row_offset = lane.params().row_offset;
    let hw = lane.half_width();
    let height = frame_height(width);
    let mut img = RgbImage::from_fn(width, height, |col, row| match cam.ground(col, row) {
        None => sky(row, height),
        Some((_, _, a)) if a > FAR => HAZE,
        Some((wx, wy, _)) => ground(polyline_distance(&line, wx, wy), hw, row_offset),
    });
    draw_uprights(&mut img, &cam, lane, s);
    draw_bonnet(&mut img);
    img
}

fn sky(row: u32, height: u32) -> Rgb<u8> {
    // Two bands: high sky and the paler band above the horizon.
    if f64::from(row) < f64::from(height) * 0.18 {
        SKY_HIGH
    } else {
        SKY_LOW
    }
}

/// The ground at unsigned distance `d` from the lane's centreline.
fn ground(d: f64, hw: f64, row_offset: f64) -> Rgb<u8> {
    if d < hw {
        if (d - 0.45).abs() < 0.1 { RUT } else { SOIL }
    } else if (d - row_offset).abs() < 0.45 {
        MULCH
    } else if d < row_offset {
        MOWN
    } else {
        MEADOW
    }
}

/// Trees and posts, far to near so that nearer ones cover farther ones.
fn draw_uprights(img: &mut RgbImage, cam: &Camera, lane: &Lane, s: f64) {
    let mut items: Vec<(f64, Upright)> = Vec::new();
    for t in lane.trees() {
        if let Some((_, _, depth)) = cam.project(t.x, t.y, 0.0)
            && depth < FAR
        {
            items.push((depth, Upright::Tree(*t)));
        }
    }
    let first = ((s - 2.0) / POST_SPACING).floor().max(0.0) as i64;
    let last = ((s + FAR) / POST_SPACING).ceil() as i64;
    let offset = lane.params().row_offset;
    for k in first..=last {
        let along = k as f64 * POST_SPACING + lane.params().tree_spacing / 2.0;
        for side in [1.0, -1.0] {
            let (x, y) = lane.offset_point(along, side * offset);
            if let Some((_, _, depth)) = cam.project(x, y, 0.0)
                && depth < FAR
            {
                items.push((depth, Upright::Post(x, y)));
            }
        }
    }
    items.sort_by(|a, b| b.0.total_cmp(&a.0));
    for (_, item) in items {
        match item {
            Upright::Tree(t) => draw_tree(img, cam, &t),
            Upright::Post(x, y) => draw_pole(img, cam, (x, y), 0.05, 1.7, POST),
        }
    }
}

enum Upright {
    Tree(Tree),
    Post(f64, f64),
}

fn draw_tree(img: &mut RgbImage, cam: &Camera, t: &Tree) {
    draw_pole(img, cam, (t.x, t.y), 0.09, 1.2, TRUNK);
    let Some((cx, cy, depth)) = cam.project(t.x, t.y, 1.75) else {
        return;
    };
    let r = cam.f * t.radius / depth;
    // The lower part of the canopy is in its own shade.
    fill_ellipse(img, (cx, cy), (r, r * 0.95), |_, dy| {
        if dy > 0.35 * r { CANOPY_SHADE } else { CANOPY }
    });
}

/// A vertical pole of half-width `half` (m) from the ground to `top` (m).
fn draw_pole(img: &mut RgbImage, cam: &Camera, at: (f64, f64), half: f64, top: f64, c: Rgb<u8>) {
    let (Some((x0, y0, depth)), Some((_, y1, _))) =
        (cam.project(at.0, at.1, 0.0), cam.project(at.0, at.1, top))
    else {
        return;
    };
    let hw = (cam.f * half / depth).max(0.5);
    fill_rect(img, (x0 - hw, y1), (x0 + hw, y0), c);
}

fn fill_rect(img: &mut RgbImage, from: (f64, f64), to: (f64, f64), c: Rgb<u8>) {
    let (w, h) = (img.width() as f64, img.height() as f64);
    let (c0, c1) = (from.0.round().max(0.0), to.0.round().min(w));
    let (r0, r1) = (from.1.round().max(0.0), to.1.round().min(h));
    let mut col = c0;
    while col < c1 {
        let mut row = r0;
        while row < r1 {
            img.put_pixel(col as u32, row as u32, c);
            row += 1.0;
        }
        col += 1.0;
    }
}

fn fill_ellipse(
    img: &mut RgbImage,
    centre: (f64, f64),
    radii: (f64, f64),
    colour: impl Fn(f64, f64) -> Rgb<u8>,
) {
    let (w, h) = (img.width() as i64, img.height() as i64);
    let (rx, ry) = (radii.0.max(0.5), radii.1.max(0.5));
    let rows = ((centre.1 - ry).floor() as i64).max(0)..((centre.1 + ry).ceil() as i64).min(h);
    for row in rows {
        let cols = ((centre.0 - rx).floor() as i64).max(0)..((centre.0 + rx).ceil() as i64).min(w);
        for col in cols {
            let dx = col as f64 + 0.5 - centre.0;
            let dy = row as f64 + 0.5 - centre.1;
            if (dx / rx).powi(2) + (dy / ry).powi(2) <= 1.0 {
                img.put_pixel(col as u32, row as u32, colour(dx, dy));
            }
        }
    }
}

/// The bonnet: the bottom eighth of the picture, its top edge rounded down at the sides.
fn draw_bonnet(img: &mut RgbImage) {
    let (w, h) = (f64::from(img.width()), f64::from(img.height()));
    for col in 0..img.width() {
        let x = (f64::from(col) + 0.5) / w * 2.0 - 1.0;
        let top = h * (0.875 + 0.05 * x * x);
        for row in 0..img.height() {
            let y = f64::from(row) + 0.5;
            if y >= top {
                let c = if y < top + h * 0.02 {
                    BONNET_EDGE
                } else {
                    BONNET
                };
                img.put_pixel(col, row, c);
            }
        }
    }
}

fn polyline_distance(line: &[(f64, f64)], x: f64, y: f64) -> f64 {
    let mut best = f64::INFINITY;
    for w in line.windows(2) {
        let ((ax, ay), (bx, by)) = (w[0], w[1]);
        let (dx, dy) = (bx - ax, by - ay);
        let len2 = dx * dx + dy * dy;
        let t = if len2 > 0.0 {
            (((x - ax) * dx + (y - ay) * dy) / len2).clamp(0.0, 1.0)
        } else {
            0.0
        };
        let d2 = (ax + t * dx - x).powi(2) + (ay + t * dy - y).powi(2);
        best = best.min(d2);
    }
    best.sqrt()
}

/// Encodes a frame as PNG bytes (deterministic for equal pictures).
pub fn encode_png(img: &RgbImage) -> Result<Vec<u8>, image::ImageError> {
    let mut out = std::io::Cursor::new(Vec::new());
    img.write_to(&mut out, image::ImageFormat::Png)?;
    Ok(out.into_inner())
}

#[cfg(test)]
#[path = "frames_tests.rs"]
mod tests;
