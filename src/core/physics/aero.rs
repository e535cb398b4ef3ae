//! Drag coefficient against Mach number for one vehicle configuration.
//!
//! With `monotone_cubic`, C_D between table points is a monotone piecewise-cubic Hermite interpolant (Fritsch &
//! Carlson, "Monotone Piecewise Cubic Interpolation", SIAM J. Numer. Anal. 17(2), 238–246, 1980;
//! from memory): continuous in value and slope, so the integrator meets no corner at the
//! table's points (a linear table's corners caused over half the rejected steps of an ascent),
//! and it never overshoots the data (no C_D above the table's peak near Mach 1). Opt-in
//! (`cd_interpolation: "monotone_cubic"`): the default stays `linear`, see docs/method.md.
//!
//! Drag force (point mass, along the Earth-relative velocity):
//! `F = −½ ρ |v_rel| v_rel C_D(M) S_ref`, `M = |v_rel| / a(h)` (any flight-mechanics text, e.g.
//! Curtis, *Orbital Mechanics for Engineering Students*, §11.3).

/// How C_D varies between table points.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum CdInterpolation {
    /// Straight lines between points (the default).
    #[default]
    Linear,
    /// Monotone cubic (Fritsch–Carlson): smooth, no overshoot.
    MonotoneCubic,
}

/// Reference area and a C_D(Mach) table, interpolated between points and constant beyond the
/// ends.
#[derive(Debug, Clone, PartialEq)]
pub struct DragTable {
    /// Reference area, m².
    pub ref_area_m2: f64,
    /// Mach numbers, strictly increasing.
    mach: Vec<f64>,
    /// Drag coefficients at `mach`.
    cd: Vec<f64>,
    /// dC_D/dM at `mach` (Fritsch–Carlson; empty for linear interpolation).
    slope: Vec<f64>,
    /// Factor on every tabulated C_D (1 as written; a dispersion or trade factor changes it).
    pub cd_scale: f64,
}

impl DragTable {
    /// Builds a table from validated `[Mach, C_D]` pairs (Mach strictly increasing, at least one
    /// point; checked by the problem validator), linear between points.
    pub fn new(ref_area_m2: f64, points: &[[f64; 2]]) -> Self {
        Self::with(ref_area_m2, points, CdInterpolation::Linear)
    }

    /// [`DragTable::new`] with the interpolation chosen.
    pub fn with(ref_area_m2: f64, points: &[[f64; 2]], how: CdInterpolation) -> Self {
        let mach: Vec<f64> = points.iter().map(|p| p[0]).collect();
        let cd: Vec<f64> = points.iter().map(|p| p[1]).collect();
        let slope = match how {
            CdInterpolation::Linear => Vec::new(),
            CdInterpolation::MonotoneCubic => fritsch_carlson(&mach, &cd),
        };
        Self {
            ref_area_m2,
            mach,
            cd,
            slope,
            cd_scale: 1.0,
        }
    }

    /// A constant drag coefficient at every Mach number.
    pub fn constant(ref_area_m2: f64, cd: f64) -> Self {
        Self::new(ref_area_m2, &[[0.0, cd]])
    }

    /// C_D at Mach `mach` (no allocation: linear scan of a short table).
    pub fn cd(&self, mach: f64) -> f64 {
        self.table_cd(mach) * self.cd_scale
    }

    /// Tabulated C_D at `mach` (linear between nodes, held beyond the ends), without the scale.
    fn table_cd(&self, mach: f64) -> f64 {
        let (Some(&first), Some(&last)) = (self.mach.first(), self.mach.last()) else {
            return 0.0;
        };
        // Beyond the last node first: most of an ascent (and every orbital coast) flies there.
        if mach > last {
            return self.cd[self.cd.len() - 1];
        }
        if mach <= first {
            return self.cd[0];
        }
        let n = self.mach.len();
        for i in 1..n {
            if mach <= self.mach[i] {
                let h = self.mach[i] - self.mach[i - 1];
                let f = (mach - self.mach[i - 1]) / h;
                let (y0, y1) = (self.cd[i - 1], self.cd[i]);
                if self.slope.len() != n {
                    return y0 + f * (y1 - y0);
                }
                // Cubic Hermite basis on [0, 1].
                let f2 = f * f;
                let f3 = f2 * f;
                let h00 = 2.0 * f3 - 3.0 * f2 + 1.0;
                let h10 = f3 - 2.0 * f2 + f;
                let h01 = -2.0 * f3 + 3.0 * f2;
                let h11 = f3 - f2;
                return h00 * y0 + h10 * h * self.slope[i - 1] + h01 * y1 + h11 * h * self.slope[i];
            }
        }
        self.cd[n - 1]
    }

    /// Mach numbers where C_D has a corner (its slope jumps): every table point of a linear
    /// table (the held ends included); none for the monotone cubic, whose slope is continuous.
    pub fn corner_machs(&self) -> &[f64] {
        if self.slope.is_empty() && self.mach.len() > 1 {
            &self.mach
        } else {
            &[]
        }
    }

    /// Product C_D·S_ref at Mach `mach`, m².
    pub fn cd_area_m2(&self, mach: f64) -> f64 {
        self.cd(mach) * self.ref_area_m2
    }
}

/// Node slopes of the monotone cubic through (`x`, `y`) (Fritsch & Carlson 1980, with the
/// three-point harmonic-mean initial slopes of Fritsch & Butland, 1984, from memory): zero at a
/// local extremum and at the ends (the table is held constant beyond them, so the curve is C¹
/// there too), and the harmonic mean of the neighbouring secants elsewhere, which keeps every
/// interval's cubic monotone.
fn fritsch_carlson(x: &[f64], y: &[f64]) -> Vec<f64> {
    let n = x.len();
    let mut m = vec![0.0; n];
    if n < 3 {
        return m;
    }
    let secant: Vec<f64> = (0..n - 1)
        .map(|i| (y[i + 1] - y[i]) / (x[i + 1] - x[i]))
        .collect();
    for i in 1..n - 1 {
        let (d0, d1) = (secant[i - 1], secant[i]);
        if d0 * d1 <= 0.0 {
            continue;
        }
        let (h0, h1) = (x[i] - x[i - 1], x[i + 1] - x[i]);
        // Weighted harmonic mean (Fritsch–Butland): w1 = 2h1 + h0, w2 = h1 + 2h0.
        let (w1, w2) = (2.0 * h1 + h0, h1 + 2.0 * h0);
        m[i] = (w1 + w2) / (w1 / d0 + w2 / d1);
    }
    m
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn the_monotone_cubic_passes_the_points_never_overshoots_and_has_no_corners() {
        // Source: Fritsch & Carlson (1980), monotonicity: on every interval the interpolant
        // stays between its end values; it passes through the data; its slope is continuous
        // at the nodes (checked by one-sided differences).
        let pts = [
            [0.0, 0.3],
            [0.8, 0.32],
            [1.05, 0.55],
            [1.3, 0.5],
            [3.0, 0.25],
            [6.0, 0.2],
        ];
        let t = DragTable::with(1.0, &pts, CdInterpolation::MonotoneCubic);
        for p in &pts {
            assert_relative_eq!(t.cd(p[0]), p[1], epsilon = 1e-15);
        }
        for w in pts.windows(2) {
            let (lo, hi) = (w[0][1].min(w[1][1]), w[0][1].max(w[1][1]));
            for k in 0..=100 {
                let m = w[0][0] + (w[1][0] - w[0][0]) * k as f64 / 100.0;
                let c = t.cd(m);
                assert!(
                    c >= lo - 1e-15 && c <= hi + 1e-15,
                    "M {m}: {c} outside [{lo}, {hi}]"
                );
            }
        }
        let h = 1e-7;
        for p in &pts[1..pts.len() - 1] {
            let left = (t.cd(p[0]) - t.cd(p[0] - h)) / h;
            let right = (t.cd(p[0] + h) - t.cd(p[0])) / h;
            assert!(
                (left - right).abs() < 1e-5,
                "M {}: slopes {left} {right}",
                p[0]
            );
        }
        // The peak node is a local extremum: zero slope there.
        assert!(t.cd(1.05 + 1e-3) < 0.55 && t.cd(1.05 - 1e-3) < 0.55);
    }

    #[test]
    fn a_linear_table_has_corners_at_its_points_and_the_cubic_none() {
        let pts = [[0.5, 0.3], [1.0, 0.5], [3.0, 0.25]];
        let lin = DragTable::with(2.0, &pts, CdInterpolation::Linear);
        assert_eq!(lin.corner_machs(), &[0.5, 1.0, 3.0]);
        let cubic = DragTable::with(2.0, &pts, CdInterpolation::MonotoneCubic);
        assert!(cubic.corner_machs().is_empty());
        assert!(DragTable::constant(2.0, 0.3).corner_machs().is_empty());
    }

    #[test]
    fn interpolates_linearly_and_holds_the_ends() {
        let t = DragTable::with(
            2.0,
            &[[0.5, 0.3], [1.0, 0.5], [3.0, 0.25]],
            CdInterpolation::Linear,
        );
        assert_relative_eq!(t.cd(0.0), 0.3);
        assert_relative_eq!(t.cd(0.75), 0.4, epsilon = 1e-15);
        assert_relative_eq!(t.cd(2.0), 0.375, epsilon = 1e-15);
        assert_relative_eq!(t.cd(10.0), 0.25);
        assert_relative_eq!(t.cd_area_m2(1.0), 1.0);
    }
}
