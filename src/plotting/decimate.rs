//! Plot decimation: Largest-Triangle-Three-Buckets (Steinarsson 2013, "Downsampling Time
//! Series for Visual Representation", MSc thesis, University of Iceland).
//!
//! Convention (pinned to the PyPI package `lttb` 0.3.2, whose output is the test fixture):
//! the first and last points are always kept; the `n - 2` interior points are split into
//! `n_out - 2` buckets by index, the first `(n - 2) mod (n_out - 2)` buckets holding one point
//! more (numpy's `array_split`); in each bucket the point forming the largest triangle with
//! the previously kept point and the mean of the next bucket is kept (the last bucket's "next"
//! is the last point alone); ties keep the earliest point.
//!
//! Buckets are by index, so the same routine thins a 2-D path (the map) as well as a time
//! series (the drift strip): the triangle areas are taken in whatever plane `point` returns.

/// Indices (ascending) of the points LTTB keeps out of `n`, with `point(i)` giving the i-th
/// point's coordinates. When `n_out >= n` or `n_out < 3` every index (or, for `n_out < 3`,
/// the first and last) is returned.
pub fn lttb_indices(n: usize, n_out: usize, point: impl Fn(usize) -> [f64; 2]) -> Vec<usize> {
    if n_out >= n {
        return (0..n).collect();
    }
    if n_out < 3 {
        return if n == 0 { vec![] } else { vec![0, n - 1] };
    }
    let buckets = n_out - 2;
    let interior = n - 2;
    let (base, extra) = (interior / buckets, interior % buckets);
    let start = |b: usize| 1 + b * base + b.min(extra);
    let mut out = Vec::with_capacity(n_out);
    out.push(0);
    let mut a = point(0);
    for b in 0..buckets {
        let (lo, hi) = (start(b), start(b + 1));
        let c = if b + 1 < buckets {
            mean(start(b + 1)..start(b + 2), &point)
        } else {
            point(n - 1)
        };
        let (best, p) = largest_triangle(lo..hi, a, c, &point);
        out.push(best);
        a = p;
    }
    out.push(n - 1);
    out
}

fn mean(range: std::ops::Range<usize>, point: &impl Fn(usize) -> [f64; 2]) -> [f64; 2] {
    let len = range.len() as f64;
    let (mut sx, mut sy) = (0.0, 0.0);
    for i in range {
        let [x, y] = point(i);
        sx += x;
        sy += y;
    }
    [sx / len, sy / len]
}

fn largest_triangle(
    range: std::ops::Range<usize>,
    a: [f64; 2],
    c: [f64; 2],
    point: &impl Fn(usize) -> [f64; 2],
) -> (usize, [f64; 2]) {
    let mut best = (range.start, point(range.start), f64::NEG_INFINITY);
    for i in range {
        let b = point(i);
        // Twice the triangle's area; the factor does not change which is largest.
        let area = ((a[0] - c[0]) * (b[1] - a[1]) - (a[0] - b[0]) * (c[1] - a[1])).abs();
        if area > best.2 {
            best = (i, b, area);
        }
    }
    (best.0, best.1)
}

/// LTTB over a slice of points: the kept points themselves.
pub fn lttb(points: &[[f64; 2]], n_out: usize) -> Vec<[f64; 2]> {
    lttb_indices(points.len(), n_out, |i| points[i])
        .into_iter()
        .map(|i| points[i])
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn keeps_everything_when_asked_for_more() {
        assert_eq!(lttb_indices(5, 9, |i| [i as f64, 0.0]), vec![0, 1, 2, 3, 4]);
        assert_eq!(lttb_indices(0, 3, |i| [i as f64, 0.0]), Vec::<usize>::new());
    }

    /// A hand-worked example: a flat line with one spike keeps the spike.
    #[test]
    fn keeps_a_lone_spike() {
        let ys = [0.0, 0.0, 0.0, 9.0, 0.0, 0.0, 0.0];
        let idx = lttb_indices(ys.len(), 3, |i| [i as f64, ys[i]]);
        assert_eq!(idx, vec![0, 3, 6]);
    }
}
