//! Binned density of points on the map: a 2-D histogram over a fixed grid.

/// Counts of points per cell of a `width x height` grid over a rectangle.
#[derive(Debug, Clone, PartialEq)]
pub struct Density {
    /// Number of columns.
    pub width: usize,
    /// Number of rows; row 0 is the lowest `y`.
    pub height: usize,
    /// Lower-left corner `[x, y]` of the grid.
    pub min: [f32; 2],
    /// Upper-right corner `[x, y]` of the grid.
    pub max: [f32; 2],
    /// Points per cell, row-major from the lowest row.
    pub counts: Vec<u32>,
}

impl Density {
    /// Bins `points` into a `width x height` grid spanning their bounding box (widened a
    /// little so no point sits on the outer edge). Non-finite points are skipped.
    pub fn of(points: &[[f32; 2]], width: usize, height: usize) -> Density {
        let (mut min, mut max) = ([f32::INFINITY; 2], [f32::NEG_INFINITY; 2]);
        for p in points
            .iter()
            .filter(|p| p[0].is_finite() && p[1].is_finite())
        {
            min = [min[0].min(p[0]), min[1].min(p[1])];
            max = [max[0].max(p[0]), max[1].max(p[1])];
        }
        if min[0] > max[0] {
            (min, max) = ([0.0; 2], [1.0; 2]);
        }
        for (lo, hi) in min.iter_mut().zip(max.iter_mut()) {
            let pad = ((*hi - *lo) * 0.02).max(1e-3);
            *lo -= pad;
            *hi += pad;
        }
        let mut d = Density {
            width: width.max(1),
            height: height.max(1),
            min,
            max,
            counts: vec![0; width.max(1) * height.max(1)],
        };
        for p in points {
            if let Some(i) = d.cell(*p) {
                d.counts[i] += 1;
            }
        }
        d
    }

    /// Index into `counts` of the cell holding `p`, if it lies inside the grid.
    pub fn cell(&self, p: [f32; 2]) -> Option<usize> {
        let fx = (p[0] - self.min[0]) / (self.max[0] - self.min[0]);
        let fy = (p[1] - self.min[1]) / (self.max[1] - self.min[1]);
        if !(0.0..1.0).contains(&fx) || !(0.0..1.0).contains(&fy) {
            return None;
        }
        let cx = (fx * self.width as f32) as usize;
        let cy = (fy * self.height as f32) as usize;
        Some(cy.min(self.height - 1) * self.width + cx.min(self.width - 1))
    }

    /// The largest count.
    pub fn peak(&self) -> u32 {
        self.counts.iter().copied().max().unwrap_or(0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn counts_every_finite_point_once() {
        let pts: Vec<[f32; 2]> = (0..100)
            .map(|i| [(i % 10) as f32, (i / 10) as f32])
            .chain([[f32::NAN, 0.0]])
            .collect();
        let d = Density::of(&pts, 10, 10);
        assert_eq!(d.counts.iter().sum::<u32>(), 100);
        assert_eq!(d.peak(), 1);
        assert_eq!(d.cell([0.0, 0.0]), Some(0));
        assert_eq!(d.cell([9.0, 9.0]), Some(99));
        assert_eq!(d.cell([50.0, 0.0]), None);
    }
}
