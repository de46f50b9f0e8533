//! The camera sketch against the pinhole model written out independently (Hartley &
//! Zisserman 2004, ch. 6: x = K [R | t] X with K = [[f, 0, w/2], [0, f, h/2], [0, 0, 1]]).

use super::*;
use crate::sim::lane::LaneParams;

const W: u32 = 320;

fn straight() -> Lane {
    Lane::generate(
        2,
        &LaneParams {
            max_curvature: 0.0,
            ..LaneParams::default()
        },
    )
}

/// Pixel column and row of world point `p` (x, y, z) for a camera at `c` (x, y, z) with yaw
/// `yaw` and downward pitch `PITCH`: world to camera axes (right, down, forward) by an
/// explicit rotation matrix, then K.
fn textbook(c: [f64; 3], yaw: f64, p: [f64; 3]) -> (f64, f64) {
    let (w, h) = (f64::from(W), f64::from(frame_height(W)));
    let f = w / 2.0 / (FIELD_OF_VIEW / 2.0).tan();
    let (sy, cy) = yaw.sin_cos();
    let (sp, cp) = PITCH.sin_cos();
    // Rows of R: the camera's right, down and forward axes in world coordinates.
    let forward = [cp * cy, cp * sy, -sp];
    let right = [sy, -cy, 0.0];
    let down = [-sp * cy, -sp * sy, -cp];
    let d = [p[0] - c[0], p[1] - c[1], p[2] - c[2]];
    let dot = |a: [f64; 3]| a[0] * d[0] + a[1] * d[1] + a[2] * d[2];
    let (x, y, z) = (dot(right), dot(down), dot(forward));
    (w / 2.0 + f * x / z, h / 2.0 + f * y / z)
}

/// The first and last column of `row` showing the lane's soil (or ruts).
fn lane_span(img: &RgbImage, row: u32) -> (f64, f64) {
    let cols: Vec<u32> = (0..img.width())
        .filter(|&c| matches!(*img.get_pixel(c, row), SOIL | RUT))
        .collect();
    (f64::from(cols[0]), f64::from(*cols.last().unwrap()) + 1.0)
}

/// Renders the pose at arc length 10 with `offset` (m, left positive) and `turn` (rad, left
/// positive); returns the picture, the camera position and its yaw.
fn view(offset: f64, turn: f64) -> (RgbImage, [f64; 3], f64) {
    let lane = straight();
    let (x, y) = lane.offset_point(10.0, offset);
    let (_, _, h) = lane.pose_at(10.0);
    let car = Bicycle::default();
    let yaw = h + turn;
    let img = render_frame(&lane, &Pose { x, y, yaw, v: 1.0 }, &car, W);
    let c = [
        x + car.l_f * yaw.cos(),
        y + car.l_f * yaw.sin(),
        CAMERA_HEIGHT,
    ];
    (img, c, yaw)
}

/// The lane's edges at ground points 4 and 12 m ahead land where the pinhole model puts
/// them (within 1.5 px, the pixel grid); the picture is 320 x 200.
#[test]
fn lane_edges_sit_where_the_pinhole_model_puts_them() {
    let lane = straight();
    let (img, c, yaw) = view(0.0, 0.0);
    assert_eq!(img.dimensions(), (320, 200));
    let hw = lane.half_width();
    for ahead in [4.0, 12.0] {
        let s = 10.0 + Bicycle::default().l_f + ahead;
        let (lx, ly) = lane.offset_point(s, hw);
        let (rx, ry) = lane.offset_point(s, -hw);
        let (left, row) = textbook(c, yaw, [lx, ly, 0.0]);
        let (right, _) = textbook(c, yaw, [rx, ry, 0.0]);
        let (a, b) = lane_span(&img, row as u32);
        assert!((a - left).abs() < 1.5, "{ahead} m: left edge {a} vs {left}");
        assert!(
            (b - right).abs() < 1.5,
            "{ahead} m: right edge {b} vs {right}"
        );
    }
}

/// A rover 0.5 m left of the centreline sees the lane shifted right, by what the model says.
#[test]
fn lateral_offset_moves_the_lane_sideways() {
    let lane = straight();
    let (img, c, yaw) = view(0.5, 0.0);
    let s = 10.0 + Bicycle::default().l_f + 6.0;
    let (mx, my) = lane.offset_point(s, 0.0);
    let (mid, row) = textbook(c, yaw, [mx, my, 0.0]);
    let (a, b) = lane_span(&img, row as u32);
    assert!(mid > f64::from(W) / 2.0 + 10.0, "{mid}");
    assert!(((a + b) / 2.0 - mid).abs() < 1.5, "{a}..{b} vs {mid}");
}

/// Turned 0.15 rad to the left, the lane's far part swings right of the centre column as the
/// model says; the picture of a centred, straight pose is symmetric about its centre column.
#[test]
fn heading_error_moves_the_vanishing_point() {
    let lane = straight();
    let (img, c, yaw) = view(0.0, 0.15);
    let s = 10.0 + 20.0;
    let (mx, my) = lane.offset_point(s, 0.0);
    let (mid, row) = textbook(c, yaw, [mx, my, 0.0]);
    let (a, b) = lane_span(&img, row as u32);
    assert!(mid > f64::from(W) / 2.0 + 20.0, "{mid}");
    assert!(((a + b) / 2.0 - mid).abs() < 2.0, "{a}..{b} vs {mid}");
    let (img, _, _) = view(0.0, 0.0);
    let (a, b) = lane_span(&img, row as u32);
    assert!(((a + b) / 2.0 - f64::from(W) / 2.0).abs() < 1.0, "{a}..{b}");
}

/// Sky above, the bonnet along the bottom, and a PNG that decodes to the same picture.
#[test]
fn sky_on_top_bonnet_below_and_png_round_trip() {
    let (img, _, _) = view(0.0, 0.0);
    let (w, h) = img.dimensions();
    assert_eq!(*img.get_pixel(w / 2, 0), SKY_HIGH);
    assert_eq!(*img.get_pixel(w / 2, h - 1), BONNET);
    assert_eq!(frame_height(160), 100);
    let png = encode_png(&img).unwrap();
    let back = image::load_from_memory(&png).unwrap().to_rgb8();
    assert_eq!(back, img);
}
