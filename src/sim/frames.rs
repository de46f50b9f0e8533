//! Small top-down pictures of the rover in its lane, one per step, for the expert's eye.
//!
//! The view is centred ahead of the rover and turned so that the rover's heading points up:
//! left in the picture is left for the rover. Soil is the lane, grass lies beyond its
//! edges, dark discs are tree canopies, the orange block is the rover with a light front.

use image::{Rgb, RgbImage};

use super::lane::Lane;
use super::vehicle::{Bicycle, Pose};

/// Metres shown across the picture.
pub const VIEW_METRES: f64 = 12.0;

const GRASS: Rgb<u8> = Rgb([104, 134, 76]);
const SOIL: Rgb<u8> = Rgb([184, 158, 118]);
const RUT: Rgb<u8> = Rgb([160, 134, 98]);
const EDGE: Rgb<u8> = Rgb([132, 110, 80]);
const CANOPY: Rgb<u8> = Rgb([40, 88, 50]);
const CANOPY_CORE: Rgb<u8> = Rgb([30, 70, 40]);
const BODY: Rgb<u8> = Rgb([236, 124, 32]);
const FRONT: Rgb<u8> = Rgb([250, 240, 210]);

/// Draws the frame of one pose (square, `size` pixels).
pub fn render_frame(lane: &Lane, pose: &Pose, car: &Bicycle, size: u32) -> RgbImage {
    let px = VIEW_METRES / size as f64;
    let s = lane.project(pose.x, pose.y, None).s;
    let line = lane.polyline(s - 9.0, s + 15.0, 0.5);
    let near_trees: Vec<_> = lane
        .trees()
        .iter()
        .filter(|t| (t.x - pose.x).hypot(t.y - pose.y) < VIEW_METRES)
        .collect();
    let (sin, cos) = pose.yaw.sin_cos();
    let hw = lane.half_width();
    RgbImage::from_fn(size, size, |col, row| {
        // Picture coordinates: right and forward of the rover, in metres; the rover sits
        // at 65% of the height so more of the lane ahead is visible.
        let right = (col as f64 + 0.5 - size as f64 / 2.0) * px;
        let ahead = (size as f64 * 0.65 - row as f64 - 0.5) * px;
        let wx = pose.x + ahead * cos + right * sin;
        let wy = pose.y + ahead * sin - right * cos;
        if let Some(c) = rover_pixel(car, ahead, right) {
            return c;
        }
        for t in &near_trees {
            let d = (t.x - wx).hypot(t.y - wy);
            if d < 0.45 * t.radius {
                return CANOPY_CORE;
            }
            if d < t.radius {
                return CANOPY;
            }
        }
        let d = polyline_distance(&line, wx, wy);
        if d > hw + px {
            GRASS
        } else if d > hw - px {
            EDGE
        } else if (d - 0.4).abs() < 0.09 {
            RUT
        } else {
            SOIL
        }
    })
}

fn rover_pixel(car: &Bicycle, ahead: f64, right: f64) -> Option<Rgb<u8>> {
    let half_width = 0.35;
    let (back, front) = (-car.l_r - 0.2, car.l_f + 0.2);
    if right.abs() > half_width || ahead < back || ahead > front {
        return None;
    }
    Some(if ahead > front - 0.25 { FRONT } else { BODY })
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
mod tests {
    use super::*;
    use crate::sim::lane::LaneParams;

    #[test]
    fn rover_is_centred_and_lane_edges_sit_at_the_half_width() {
        let lane = Lane::generate(
            2,
            &LaneParams {
                max_curvature: 0.0,
                ..LaneParams::default()
            },
        );
        let (x, y, yaw) = lane.pose_at(30.0);
        let car = Bicycle::default();
        let img = render_frame(&lane, &Pose { x, y, yaw, v: 1.0 }, &car, 96);
        let row = (96.0 * 0.65) as u32;
        assert_eq!(*img.get_pixel(48, row), BODY);
        // 8 px per metre: 1.2 m half-width is 9.6 px beside the centre column.
        let at = |dx: i32| *img.get_pixel((48 + dx) as u32, row - 30);
        assert_eq!(at(5), SOIL);
        assert_eq!(at(-7), SOIL);
        assert!(matches!(at(14), GRASS | CANOPY | CANOPY_CORE));
        let png = encode_png(&img).unwrap();
        assert_eq!(&png[1..4], b"PNG");
    }
}
