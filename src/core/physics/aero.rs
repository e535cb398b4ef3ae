//! Drag coefficient against Mach number for one vehicle configuration.
//!
//! Drag force (point mass, along the Earth-relative velocity):
//! `F = −½ ρ |v_rel| v_rel C_D(M) S_ref`, `M = |v_rel| / a(h)` (any flight-mechanics text, e.g.
//! Curtis, *Orbital Mechanics for Engineering Students*, §11.3).

/// Reference area and a C_D(Mach) table, linear between points and constant beyond the ends.
#[derive(Debug, Clone, PartialEq)]
pub struct DragTable {
    /// Reference area, m².
    pub ref_area_m2: f64,
    /// Mach numbers, strictly increasing.
    mach: Vec<f64>,
    /// Drag coefficients at `mach`.
    cd: Vec<f64>,
    /// Factor on every tabulated C_D (1 as written; a dispersion or trade factor changes it).
    pub cd_scale: f64,
}

impl DragTable {
    /// Builds a table from validated `[Mach, C_D]` pairs (Mach strictly increasing, at least one
    /// point; checked by the problem validator).
    pub fn new(ref_area_m2: f64, points: &[[f64; 2]]) -> Self {
        Self {
            ref_area_m2,
            mach: points.iter().map(|p| p[0]).collect(),
            cd: points.iter().map(|p| p[1]).collect(),
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
        let n = self.mach.len();
        if n == 0 {
            return 0.0;
        }
        if mach <= self.mach[0] {
            return self.cd[0];
        }
        for i in 1..n {
            if mach <= self.mach[i] {
                let f = (mach - self.mach[i - 1]) / (self.mach[i] - self.mach[i - 1]);
                return self.cd[i - 1] + f * (self.cd[i] - self.cd[i - 1]);
            }
        }
        self.cd[n - 1]
    }

    /// Product C_D·S_ref at Mach `mach`, m².
    pub fn cd_area_m2(&self, mach: f64) -> f64 {
        self.cd(mach) * self.ref_area_m2
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn interpolates_linearly_and_holds_the_ends() {
        let t = DragTable::new(2.0, &[[0.5, 0.3], [1.0, 0.5], [3.0, 0.25]]);
        assert_relative_eq!(t.cd(0.0), 0.3);
        assert_relative_eq!(t.cd(0.75), 0.4, epsilon = 1e-15);
        assert_relative_eq!(t.cd(2.0), 0.375, epsilon = 1e-15);
        assert_relative_eq!(t.cd(10.0), 0.25);
        assert_relative_eq!(t.cd_area_m2(1.0), 1.0);
    }
}
