//! U.S. Standard Atmosphere 1976: temperature, pressure, density and speed
//! of sound as functions of altitude, from below sea level to beyond 1000 km.
//!
//! This module owns the static standard atmosphere only: no winds, no
//! day-to-day or solar-activity variation, no humidity. It has no state
//! and allocates nothing, so [`us1976`] can sit inside every right-hand-side
//! evaluation of the trajectory ODE. Callers use `density_kg_m3` for drag
//! and dynamic pressure, `pressure_pa` for the nozzle back-pressure term
//! and `speed_of_sound_mps` for Mach number.
//!
//! Regions (geometric altitude Z, geopotential altitude H = r0 Z / (r0 + Z)):
//!
//! | Z | model |
//! |---|---|
//! | below −5 km | held at the −5 km values |
//! | −5 km to 0 | first-layer formula continued downward (the standard's own range starts at −5 km) |
//! | 0 to 86 km | the standard's seven hydrostatic layers, exact |
//! | 86 km to 1000 km | kinetic temperature from the standard's closed-form segments; pressure and density log-linear between tabulated values |
//! | 1000 km to 100 000 km | pressure and density continue with the last tabulated scale height; temperature T∞ = 1000 K |
//! | above 100 000 km | held at the 100 000 km values (always finite and positive) |
//!
//! # References
//! - U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562 (NOAA, NASA, USAF,
//!   Washington D.C., 1976): eqs. 18 (geopotential altitude), 23
//!   (molecular-scale temperature), 33a/33b (pressure), 42 (density),
//!   50 (speed of sound), 25–31 (kinetic temperature above 86 km), Table I.
//!   Equation numbers are quoted from memory.
//! - Values above 86 km: see `UPPER` for which entries are from memory,
//!   from a public reproduction of Table I, or derived.

use std::sync::LazyLock;

/// Universal gas constant R* as defined by the standard, J/(kmol·K).
const R_STAR_J_PER_KMOL_K: f64 = 8314.32;
/// Sea-level mean molecular weight M0, kg/kmol.
const M0_KG_PER_KMOL: f64 = 28.9644;
/// Standard gravity g0, m/s² (also m²/(s²·m′) for geopotential metres).
const G0_M_PER_S2: f64 = 9.80665;
/// Effective Earth radius r0 used for geopotential altitude, m.
const R0_M: f64 = 6_356_766.0;
/// Ratio of specific heats γ of air (dimensionless).
const GAMMA: f64 = 1.4;
/// Specific gas constant of air R*/M0, J/(kg·K).
const R_AIR_J_PER_KG_K: f64 = R_STAR_J_PER_KMOL_K / M0_KG_PER_KMOL;
/// Hydrostatic constant g0 M0 / R*, K per geopotential metre.
const GMR_K_PER_M: f64 = G0_M_PER_S2 * M0_KG_PER_KMOL / R_STAR_J_PER_KMOL_K;

/// Lowest geometric altitude evaluated, m (the standard's tables start at −5 km).
const Z_MIN_M: f64 = -5_000.0;
/// Geometric altitude where the layered model hands over to the table, m.
const Z_JOIN_M: f64 = 86_000.0;
/// Top of the tabulated range, m.
const Z_TABLE_TOP_M: f64 = 1_000_000.0;
/// Highest geometric altitude evaluated, m; above it the state is held
/// constant so that the extrapolated density stays positive (≈ 7e-201 kg/m³).
const Z_MAX_M: f64 = 1.0e8;
/// Geopotential altitude of `Z_MIN_M`, m′ (eq. 18: H = r0 Z / (r0 + Z)).
const H_MIN_M: f64 = R0_M * Z_MIN_M / (R0_M + Z_MIN_M);
/// Geopotential altitude of `Z_JOIN_M`, m′ (84 852.05 m′).
const H_JOIN_M: f64 = R0_M * Z_JOIN_M / (R0_M + Z_JOIN_M);
/// Geopotential altitude of `Z_MAX_M`, m′.
const H_MAX_M: f64 = R0_M * Z_MAX_M / (R0_M + Z_MAX_M);

/// Atmospheric properties at one altitude.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AtmosphereState {
    /// Temperature, K. Up to 86 km this is the standard's molecular-scale
    /// temperature T_M (identical to the kinetic temperature below 80 km,
    /// at most 0.042 % above it between 80 and 86 km); above 86 km it is the
    /// kinetic temperature T. Hence a documented −0.079 K step at 86 km
    /// (and a −0.058 m/s step in `speed_of_sound_mps`).
    pub temperature_k: f64,
    /// Static pressure, Pa.
    pub pressure_pa: f64,
    /// Mass density, kg/m³.
    pub density_kg_m3: f64,
    /// Speed of sound √(γ R* T / M0), m/s. Defined by the standard only up
    /// to 86 km; above, it is computed with the kinetic temperature and the
    /// sea-level molecular weight, which is adequate for Mach-indexed drag
    /// tables (dynamic pressure there is negligible).
    pub speed_of_sound_mps: f64,
}

/// U.S. Standard Atmosphere 1976 at GEOMETRIC altitude `altitude_m`
/// (metres above the ellipsoid/sea level).
///
/// From −5 km to 86 km this is the standard exactly: with H = r0 Z/(r0 + Z)
/// (r0 = 6 356 766 m) in layer b,
///
/// ```text
/// T = T_b + L_b (H − H_b)
/// p = p_b [T_b / T]^(g0 M0 / (R* L_b))          (L_b ≠ 0)
/// p = p_b exp[−g0 M0 (H − H_b) / (R* T_b)]      (L_b = 0)
/// ρ = p M0 / (R* T)
/// a = √(γ R* T / M0)
/// ```
///
/// with g0 = 9.80665 m/s², R* = 8314.32 J/(kmol·K), M0 = 28.9644 kg/kmol,
/// γ = 1.4 and L_b = −6.5, 0, +1.0, +2.8, 0, −2.8, −2.0 K/km′ from
/// H_b = 0, 11, 20, 32, 47, 51, 71 km′. Below 0 km the first layer's
/// formula is continued (the standard tabulates it down to −5 km); lower
/// inputs are clamped to −5 km.
///
/// From 86 to 1000 km the standard solves species diffusion; here its
/// tabulated pressure and density are interpolated linearly in ln p and
/// ln ρ versus Z, and the temperature is its closed-form kinetic
/// temperature: 186.8673 K to 91 km; T = Tc + A √(1 − ((Z − 91 km)/a)²),
/// Tc = 263.1905 K, A = −76.3232 K, a = −19.9429 km, to 110 km;
/// 240 K + 12 K/km (Z − 110 km) to 120 km; above,
/// T = T∞ − (T∞ − 360 K) exp(−λ ξ), T∞ = 1000 K, λ = 0.01875 /km,
/// ξ = (Z − 120 km)(r0 + 120 km)/(r0 + Z).
/// Above 1000 km pressure and density continue with the last tabulated
/// scale height (never zero) and T = T∞; above 100 000 km they are held.
///
/// Input handling: NaN is treated as 0 m, +∞ as the top, −∞ as −5 km; the
/// result is always finite and positive. Density and pressure are
/// continuous at 86 km; the temperature steps by −0.079 K there (molecular-
/// scale to kinetic temperature, see [`AtmosphereState::temperature_k`]).
///
/// # References
/// U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562, eqs. 18, 23, 33a,
/// 33b, 42, 50, 25–31 (numbers from memory) and Table I.
#[must_use]
pub fn us1976(altitude_m: f64) -> AtmosphereState {
    let z_m = if altitude_m.is_nan() {
        0.0
    } else {
        altitude_m.clamp(Z_MIN_M, Z_MAX_M)
    };
    if z_m < Z_JOIN_M {
        lower_atmosphere(R0_M * z_m / (R0_M + z_m))
    } else {
        upper_atmosphere(z_m)
    }
}

/// The speed of sound of [`us1976`] at geometric altitude `altitude_m` (m), m/s, computed as
/// `us1976` computes it but without the pressure and density (their `exp`/`ln_1p`): for
/// locating the Mach corners of a drag table.
#[must_use]
pub fn us1976_speed_of_sound_mps(altitude_m: f64) -> f64 {
    let z_m = if altitude_m.is_nan() {
        0.0
    } else {
        altitude_m.clamp(Z_MIN_M, Z_MAX_M)
    };
    let t_k = if z_m < Z_JOIN_M {
        let h_m = R0_M * z_m / (R0_M + z_m);
        let mut i = LAYERS.len() - 1;
        while i > 0 && h_m < LAYERS[i].base_h_m {
            i -= 1;
        }
        LAYERS[i].base_t_k + LAYERS[i].lapse_k_per_m * (h_m - LAYERS[i].base_h_m)
    } else {
        kinetic_temperature_k(z_m)
    };
    speed_of_sound(t_k)
}

/// U.S. Standard Atmosphere 1976 at GEOPOTENTIAL altitude `geopotential_m`
/// (geopotential metres, m′), the altitude the standard's layer table uses.
///
/// Intended for 0 to 84 852 m′ (the seven layers, 0 to 86 km geometric),
/// where it evaluates the layer equations of [`us1976`] directly in H.
/// Higher inputs are converted to geometric altitude Z = r0 H/(r0 − H) and
/// passed to [`us1976`]; inputs are clamped to the geopotential equivalents
/// of −5 km and 100 000 km geometric, and NaN is treated as 0 m′.
///
/// # References
/// U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562, eqs. 18, 23, 33a, 33b.
#[must_use]
pub fn us1976_geopotential(geopotential_m: f64) -> AtmosphereState {
    let h_m = if geopotential_m.is_nan() {
        0.0
    } else {
        geopotential_m.clamp(H_MIN_M, H_MAX_M)
    };
    if h_m < H_JOIN_M {
        lower_atmosphere(h_m)
    } else {
        upper_atmosphere(R0_M * h_m / (R0_M - h_m))
    }
}

/// One layer of the 0–86 km model (all base values at the layer base).
#[derive(Clone, Copy)]
struct Layer {
    /// Base geopotential altitude H_b, m′.
    base_h_m: f64,
    /// Base molecular-scale temperature T_b, K.
    base_t_k: f64,
    /// Lapse rate L_b, K/m′.
    lapse_k_per_m: f64,
    /// L_b / T_b, 1/m′ (so that T/T_b = 1 + (L_b/T_b)(H − H_b), no division).
    lapse_over_t_per_m: f64,
    /// Base pressure p_b, Pa.
    base_p_pa: f64,
    /// Gradient layer: exponent −g0 M0/(R* L_b) in p = p_b (T/T_b)^k.
    /// Isothermal layer: −g0 M0/(R* T_b), 1/m′, in p = p_b exp(k (H − H_b)).
    k: f64,
    /// True where L_b = 0 (kept as a flag to avoid comparing floats).
    isothermal: bool,
}

/// Gradient layer with base H (m′), T (K), L (K/m′), p (Pa).
macro_rules! gradient_layer {
    ($h:expr, $t:expr, $l:expr, $p:expr) => {
        Layer {
            base_h_m: $h,
            base_t_k: $t,
            lapse_k_per_m: $l,
            lapse_over_t_per_m: $l / $t,
            base_p_pa: $p,
            k: -GMR_K_PER_M / $l,
            isothermal: false,
        }
    };
}

/// Isothermal layer with base H (m′), T (K), p (Pa).
macro_rules! isothermal_layer {
    ($h:expr, $t:expr, $p:expr) => {
        Layer {
            base_h_m: $h,
            base_t_k: $t,
            lapse_k_per_m: 0.0,
            lapse_over_t_per_m: 0.0,
            base_p_pa: $p,
            k: -GMR_K_PER_M / $t,
            isothermal: true,
        }
    };
}

/// The standard's seven layers. Base temperatures follow from the lapse
/// rates; base pressures are recomputed to full f64 precision from
/// 101 325 Pa with eqs. 33a/33b (verified by a unit test; the standard
/// prints 22 632.06, 5474.889, 868.0187, 110.9063, 66.93887, 3.956420 Pa).
const LAYERS: [Layer; 7] = [
    gradient_layer!(0.0, 288.15, -6.5e-3, 101_325.0),
    isothermal_layer!(11_000.0, 216.65, 22_632.063_973_462_91),
    gradient_layer!(20_000.0, 216.65, 1.0e-3, 5_474.888_669_677_774),
    gradient_layer!(32_000.0, 228.65, 2.8e-3, 868.018_684_755_227_8),
    isothermal_layer!(47_000.0, 270.65, 110.906_305_554_965_9),
    gradient_layer!(51_000.0, 270.65, -2.8e-3, 66.938_873_118_687_27),
    gradient_layer!(71_000.0, 214.65, -2.0e-3, 3.956_420_428_040_725),
];

/// Geometric altitude (m) of geopotential altitude `h_m` (m′): Z = r0 H/(r0 − H) (eq. 18 inverted).
const fn geometric_of(h_m: f64) -> f64 {
    R0_M * h_m / (R0_M - h_m)
}

/// Geometric altitudes (m) where the model's temperature has a corner or a step, in increasing
/// order: the bases of layers 2–7 (11, 20, 32, 47, 51, 71 km′), where the lapse rate changes and
/// so the slopes of pressure, density and speed of sound jump, and the 86 km join, where the
/// temperature steps by −0.079 K (see [`AtmosphereState::temperature_k`]). Above 86 km the
/// tabulated rows are corners too, but the air there is too thin for them to matter to a flight
/// (none of the demos' rejected steps falls there).
pub const CORNER_ALTITUDES_M: [f64; 7] = [
    geometric_of(11_000.0),
    geometric_of(20_000.0),
    geometric_of(32_000.0),
    geometric_of(47_000.0),
    geometric_of(51_000.0),
    geometric_of(71_000.0),
    Z_JOIN_M,
];

/// Layered model (eqs. 23, 33a, 33b, 42) at geopotential altitude `h_m`, m′.
fn lower_atmosphere(h_m: f64) -> AtmosphereState {
    let mut i = LAYERS.len() - 1;
    while i > 0 && h_m < LAYERS[i].base_h_m {
        i -= 1;
    }
    let layer = LAYERS[i];
    let dh_m = h_m - layer.base_h_m;
    let t_k = layer.base_t_k + layer.lapse_k_per_m * dh_m;
    let p_pa = if layer.isothermal {
        layer.base_p_pa * (layer.k * dh_m).exp()
    } else {
        // p_b (T/T_b)^k written as p_b exp(k ln(1 + (L_b/T_b)(H − H_b))): one `ln_1p` and one
        // `exp` instead of `powf` (cheaper, equally accurate).
        layer.base_p_pa * (layer.k * (layer.lapse_over_t_per_m * dh_m).ln_1p()).exp()
    };
    state(t_k, p_pa, p_pa / (R_AIR_J_PER_KG_K * t_k))
}

/// Tabulated (geometric altitude m, pressure Pa, density kg/m³), 86–1000 km,
/// U.S. Standard Atmosphere 1976, Table I. Provenance (the standard's text
/// was not at hand):
///
/// - Pressures: the public reproduction of Table I in danielmatz/COESA.jl
///   (`src/COESA.jl`, `Ptableupper`); the 100 km row (absent there) is from
///   memory. The pressures recalled from memory agree with it except at
///   350 km (recalled 3.4507e-6 Pa; the reproduction's 3.4498e-6 is used).
/// - Densities marked `mem`: the standard's Table I values, from memory.
///   91, 110 and 120 km agree with the table as reproduced in the poliastro documentation; every
///   `mem` entry agrees within 0.1 % with ρ = p M/(R* T) using the molecular
///   weights M of the same reproduction and T from [`kinetic_temperature_k`].
/// - Densities marked `der`: derived as ρ = p M/(R* T) in that way, rounded
///   to four figures like the standard.
/// - The 86 km row is the layered model's own value at Z = 86 km (the
///   standard prints 0.37338 Pa and 6.958e-6 kg/m³), so the join is
///   continuous.
const UPPER: [(f64, f64, f64); 88] = [
    (86_000.0, 0.373_380_461_831_057_6, 6.957_823_781_332_474e-6), // model
    (87_000.0, 3.1259e-1, 5.825e-6),                               // der
    (88_000.0, 2.6173e-1, 4.875e-6),                               // der
    (89_000.0, 2.1919e-1, 4.081e-6),                               // der
    (90_000.0, 1.8359e-1, 3.416e-6),                               // mem
    (91_000.0, 1.5381e-1, 2.860e-6),                               // mem
    (93_000.0, 1.0801e-1, 1.999e-6),                               // der
    (95_000.0, 7.5966e-2, 1.393e-6),                               // mem
    (97_000.0, 5.3571e-2, 9.685e-7),                               // der
    (99_000.0, 3.7948e-2, 6.725e-7),                               // der
    (100_000.0, 3.2011e-2, 5.604e-7),                              // mem
    (101_000.0, 2.7192e-2, 4.695e-7),                              // der
    (103_000.0, 1.9742e-2, 3.299e-7),                              // der
    (105_000.0, 1.4477e-2, 2.325e-7),                              // mem
    (107_000.0, 1.0751e-2, 1.642e-7),                              // der
    (109_000.0, 8.1142e-3, 1.161e-7),                              // der
    (110_000.0, 7.1042e-3, 9.708e-8),                              // mem
    (111_000.0, 6.2614e-3, 8.111e-8),                              // der
    (112_000.0, 5.5547e-3, 6.838e-8),                              // der
    (113_000.0, 4.9570e-3, 5.811e-8),                              // der
    (114_000.0, 4.4473e-3, 4.976e-8),                              // der
    (115_000.0, 4.0096e-3, 4.289e-8),                              // mem
    (116_000.0, 3.6312e-3, 3.721e-8),                              // der
    (117_000.0, 3.3022e-3, 3.246e-8),                              // der
    (118_000.0, 3.0144e-3, 2.846e-8),                              // der
    (119_000.0, 2.7615e-3, 2.509e-8),                              // der
    (120_000.0, 2.5382e-3, 2.222e-8),                              // mem
    (125_000.0, 1.7354e-3, 1.291e-8),                              // mem
    (130_000.0, 1.2505e-3, 8.152e-9),                              // mem
    (135_000.0, 9.3568e-4, 5.466e-9),                              // der
    (140_000.0, 7.2028e-4, 3.831e-9),                              // mem
    (145_000.0, 5.6691e-4, 2.781e-9),                              // der
    (150_000.0, 4.5422e-4, 2.076e-9),                              // mem
    (160_000.0, 3.0395e-4, 1.233e-9),                              // mem
    (170_000.0, 2.1210e-4, 7.815e-10),                             // mem
    (180_000.0, 1.5271e-4, 5.194e-10),                             // mem
    (190_000.0, 1.1266e-4, 3.581e-10),                             // mem
    (200_000.0, 8.4736e-5, 2.541e-10),                             // mem
    (210_000.0, 6.4756e-5, 1.846e-10),                             // der
    (220_000.0, 5.0149e-5, 1.367e-10),                             // der
    (230_000.0, 3.9276e-5, 1.029e-10),                             // der
    (240_000.0, 3.1059e-5, 7.859e-11),                             // der
    (250_000.0, 2.4767e-5, 6.073e-11),                             // mem
    (260_000.0, 1.9894e-5, 4.743e-11),                             // der
    (270_000.0, 1.6083e-5, 3.737e-11),                             // der
    (280_000.0, 1.3076e-5, 2.970e-11),                             // der
    (290_000.0, 1.0683e-5, 2.377e-11),                             // der
    (300_000.0, 8.7704e-6, 1.916e-11),                             // mem
    (310_000.0, 7.2285e-6, 1.553e-11),                             // der
    (320_000.0, 5.9796e-6, 1.265e-11),                             // der
    (330_000.0, 4.9630e-6, 1.035e-11),                             // der
    (340_000.0, 4.1320e-6, 8.505e-12),                             // der
    (350_000.0, 3.4498e-6, 7.014e-12),                             // mem
    (360_000.0, 2.8878e-6, 5.804e-12),                             // der
    (370_000.0, 2.4234e-6, 4.820e-12),                             // der
    (380_000.0, 2.0384e-6, 4.013e-12),                             // der
    (390_000.0, 1.7184e-6, 3.350e-12),                             // der
    (400_000.0, 1.4518e-6, 2.803e-12),                             // mem
    (410_000.0, 1.2291e-6, 2.350e-12),                             // der
    (420_000.0, 1.0427e-6, 1.975e-12),                             // der
    (430_000.0, 8.8645e-7, 1.662e-12),                             // der
    (440_000.0, 7.5517e-7, 1.402e-12),                             // der
    (450_000.0, 6.4468e-7, 1.184e-12),                             // mem
    (460_000.0, 5.5155e-7, 1.002e-12),                             // der
    (470_000.0, 4.7292e-7, 8.492e-13),                             // der
    (480_000.0, 4.0642e-7, 7.208e-13),                             // der
    (490_000.0, 3.5011e-7, 6.128e-13),                             // der
    (500_000.0, 3.0236e-7, 5.215e-13),                             // mem
    (525_000.0, 2.1200e-7, 3.510e-13),                             // der
    (550_000.0, 1.5137e-7, 2.384e-13),                             // mem
    (575_000.0, 1.1028e-7, 1.637e-13),                             // der
    (600_000.0, 8.2130e-8, 1.137e-13),                             // mem
    (625_000.0, 6.2601e-8, 7.997e-14),                             // der
    (650_000.0, 4.8865e-8, 5.712e-14),                             // mem
    (675_000.0, 3.9048e-8, 4.147e-14),                             // der
    (700_000.0, 3.1908e-8, 3.070e-14),                             // mem
    (725_000.0, 2.6611e-8, 2.317e-14),                             // der
    (750_000.0, 2.2599e-8, 1.788e-14),                             // mem
    (775_000.0, 1.9493e-8, 1.409e-14),                             // der
    (800_000.0, 1.7036e-8, 1.136e-14),                             // mem
    (825_000.0, 1.5051e-8, 9.341e-15),                             // der
    (850_000.0, 1.3415e-8, 7.824e-15),                             // mem
    (875_000.0, 1.2043e-8, 6.663e-15),                             // der
    (900_000.0, 1.0873e-8, 5.759e-15),                             // mem
    (925_000.0, 9.8635e-9, 5.042e-15),                             // der
    (950_000.0, 8.9816e-9, 4.453e-15),                             // mem
    (975_000.0, 8.2043e-9, 3.967e-15),                             // der
    (1_000_000.0, 7.5138e-9, 3.561e-15),                           // mem
];

/// Natural logarithms (dimensionless) of the pressure and density ratios
/// p_{i+1}/p_i and ρ_{i+1}/ρ_i of each `UPPER` segment, computed once on first
/// use (no allocation), so that an evaluation needs two `exp` and no `powf`.
static UPPER_LOG_RATIOS: LazyLock<[(f64, f64); UPPER.len() - 1]> = LazyLock::new(|| {
    let mut t = [(0.0, 0.0); UPPER.len() - 1];
    for (i, w) in UPPER.windows(2).enumerate() {
        t[i] = ((w[1].1 / w[0].1).ln(), (w[1].2 / w[0].2).ln());
    }
    t
});

/// Region above 86 km at geometric altitude `z_m` (86 km ≤ z_m ≤ Z_MAX_M):
/// ln p and ln ρ linear in Z between table rows; beyond the last row the
/// last segment is continued (constant scale height). With s the fraction of
/// the segment, p = p_i (p_{i+1}/p_i)^s = p_i exp(s ln(p_{i+1}/p_i)), the
/// logarithm taken from `UPPER_LOG_RATIOS` (likewise ρ).
fn upper_atmosphere(z_m: f64) -> AtmosphereState {
    // Index of the segment [i, i + 1] holding z_m; the last one extrapolates.
    let i = UPPER
        .partition_point(|row| row.0 <= z_m)
        .clamp(1, UPPER.len() - 1)
        - 1;
    let (z_lo_m, p_lo_pa, rho_lo) = UPPER[i];
    let z_hi_m = UPPER[i + 1].0;
    let (ln_p_ratio, ln_rho_ratio) = UPPER_LOG_RATIOS[i];
    let s = (z_m - z_lo_m) / (z_hi_m - z_lo_m);
    let p_pa = p_lo_pa * (s * ln_p_ratio).exp();
    let rho_kg_m3 = rho_lo * (s * ln_rho_ratio).exp();
    state(kinetic_temperature_k(z_m), p_pa, rho_kg_m3)
}

/// Kinetic temperature above 86 km, K, at geometric altitude `z_m`
/// (U.S. Standard Atmosphere 1976, eqs. 25–31); T∞ above 1000 km.
fn kinetic_temperature_k(z_m: f64) -> f64 {
    const T_86_91_K: f64 = 186.8673;
    const TC_K: f64 = 263.1905;
    const A_K: f64 = -76.3232;
    const A_ELLIPSE_M: f64 = -19_942.9;
    const T_110_K: f64 = 240.0;
    const LAPSE_110_120_K_PER_M: f64 = 12.0e-3;
    const T_120_K: f64 = 360.0;
    const T_INF_K: f64 = 1000.0;
    const LAMBDA_PER_M: f64 = 0.01875e-3;
    if z_m < 91_000.0 {
        T_86_91_K
    } else if z_m < 110_000.0 {
        let x = (z_m - 91_000.0) / A_ELLIPSE_M;
        TC_K + A_K * (1.0 - x * x).max(0.0).sqrt()
    } else if z_m < 120_000.0 {
        T_110_K + LAPSE_110_120_K_PER_M * (z_m - 110_000.0)
    } else if z_m <= Z_TABLE_TOP_M {
        let xi_m = (z_m - 120_000.0) * (R0_M + 120_000.0) / (R0_M + z_m);
        T_INF_K - (T_INF_K - T_120_K) * (-LAMBDA_PER_M * xi_m).exp()
    } else {
        T_INF_K
    }
}

/// Speed of sound a = √(γ R* T / M0) at temperature `t_k` (K), m/s (eq. 50).
fn speed_of_sound(t_k: f64) -> f64 {
    (GAMMA * R_AIR_J_PER_KG_K * t_k).sqrt()
}

/// Assemble a state; speed of sound from [`speed_of_sound`].
fn state(t_k: f64, p_pa: f64, rho_kg_m3: f64) -> AtmosphereState {
    AtmosphereState {
        temperature_k: t_k,
        pressure_pa: p_pa,
        density_kg_m3: rho_kg_m3,
        speed_of_sound_mps: speed_of_sound(t_k),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    /// Expected (T K, p Pa, ρ kg/m³, a m/s) at one altitude.
    type Row = (f64, f64, f64, f64, f64);

    /// Compare with relative tolerances T 1e-5, p 1e-4, ρ 1e-4, a `a_tol`.
    fn check(label: &str, got: AtmosphereState, row: Row, a_tol: f64) {
        println!("checking {label} = {} : {got:?}", row.0);
        assert_relative_eq!(got.temperature_k, row.1, max_relative = 1e-5);
        assert_relative_eq!(got.pressure_pa, row.2, max_relative = 1e-4);
        assert_relative_eq!(got.density_kg_m3, row.3, max_relative = 1e-4);
        assert_relative_eq!(got.speed_of_sound_mps, row.4, max_relative = a_tol);
    }

    #[test]
    fn layer_bases_at_geopotential_altitudes() {
        // Source: U.S. Standard Atmosphere 1976 (NOAA-S/T 76-1562) layer bases,
        // recomputed from its defining equations; they match the standard as reproduced in
        // the poliastro documentation. Columns: H m', T, p, rho, a.
        let rows: [Row; 8] = [
            (0.0, 288.150, 101_325.0, 1.22500, 340.294),
            (11_000.0, 216.650, 22_632.1, 0.363_918, 295.070),
            (20_000.0, 216.650, 5_474.89, 0.088_034_8, 295.070),
            (32_000.0, 228.650, 868.019, 0.013_225_0, 303.131),
            (47_000.0, 270.650, 110.906, 1.427_53e-3, 329.799),
            (51_000.0, 270.650, 66.9389, 8.616_05e-4, 329.799),
            (71_000.0, 214.650, 3.956_42, 6.421_10e-5, 293.704),
            // T here is the molecular-scale temperature T_M (kinetic 186.87 K).
            (84_852.0, 186.946, 0.373_384, 6.957_88e-6, 274.096),
        ];
        for row in rows {
            check("H m'", us1976_geopotential(row.0), row, 1e-5);
        }
    }

    #[test]
    fn speed_of_sound_alone_is_the_full_models() {
        for z in [
            -3e3, 0.0, 5e3, 11_019.0, 30e3, 60e3, 85_999.0, 86e3, 95e3, 115e3, 300e3, 2e6,
        ] {
            assert_eq!(
                us1976_speed_of_sound_mps(z).to_bits(),
                us1976(z).speed_of_sound_mps.to_bits(),
                "{z}"
            );
        }
    }

    /// The corners are the layer bases at their geometric altitudes and the 86 km join.
    /// Source: U.S. Standard Atmosphere 1976 layer table, geometric Z of the bases as in the
    /// domain brief §3(f) (11.019, 20.063, 32.162, 47.350, 51.412, 71.802, 86.000 km).
    #[test]
    fn corner_altitudes_are_the_layer_bases() {
        let want_km = [11.019, 20.063, 32.162, 47.350, 51.412, 71.802, 86.000];
        for (z, w) in CORNER_ALTITUDES_M.iter().zip(want_km) {
            assert!((z / 1e3 - w).abs() < 5e-4, "{z} m vs {w} km");
        }
        // Either side of each base the lapse rate differs: the slope of T jumps there.
        for &z in &CORNER_ALTITUDES_M[..6] {
            let slope =
                |a: f64, b: f64| (us1976(b).temperature_k - us1976(a).temperature_k) / (b - a);
            let (below, above) = (slope(z - 20.0, z - 10.0), slope(z + 10.0, z + 20.0));
            assert!((below - above).abs() > 5e-4, "{z}: {below} {above} K/m");
        }
    }

    #[test]
    fn geometric_altitudes_differ_from_geopotential() {
        // Source: U.S. Standard Atmosphere 1976 (NOAA-S/T 76-1562), values at geometric
        // altitudes derived from the standard's equations. Columns: Z m, T, p, rho, a.
        // The 5 km speed of sound is printed to 0.01 m/s only (half a unit is
        // 1.6e-5 relative), hence its own tolerance (last column).
        let rows: [(Row, f64); 7] = [
            ((5_000.0, 255.676, 54_048.3, 0.736_429, 320.55), 2e-5),
            ((11_000.0, 216.774, 22_700.0, 0.364_802, 295.154), 1e-5),
            ((20_000.0, 216.650, 5_529.31, 0.088_909_9, 295.070), 1e-5),
            ((32_000.0, 228.490, 889.064, 0.013_555_2, 303.025), 1e-5),
            ((47_000.0, 269.684, 115.851, 1.496_52e-3, 329.210), 1e-5),
            ((51_000.0, 270.650, 70.4580, 9.069_02e-4, 329.799), 1e-5),
            ((71_000.0, 216.846, 4.479_56, 7.196_52e-5, 295.203), 1e-5),
        ];
        for (row, a_tol) in rows {
            check("Z m", us1976(row.0), row, a_tol);
        }
        // Source: U.S. Standard Atmosphere 1976 (NOAA-S/T 76-1562), derived from its
        // equations: 5 km geopotential differs.
        let h5 = us1976_geopotential(5_000.0);
        assert_relative_eq!(h5.temperature_k, 255.650, max_relative = 1e-5);
        assert_relative_eq!(h5.pressure_pa, 54_019.9, max_relative = 1e-5);
        assert_relative_eq!(h5.density_kg_m3, 0.736_115, max_relative = 1e-5);
    }

    #[test]
    fn table_i_spot_values_below_86km() {
        // Source: U.S. Standard Atmosphere 1976, Table I and Table III (speed of
        // sound), as quoted in the public poliastro test suite
        // (tests/tests_earth/tests_atmosphere/test_coesa76.py) and the
        // danielmatz/COESA.jl test suite (test/runtests.jl). Five significant
        // figures, so 1e-4 on every column. Columns: Z m, T, p, rho, a.
        let rows: [Row; 6] = [
            (500.0, 284.90, 95_461.0, 1.1673, 338.37),
            (10_000.0, 223.252, 26_499.0, 0.413_51, 299.53),
            (25_000.0, 221.552, 2_549.2, 4.0084e-2, 298.39),
            (60_000.0, 247.021, 21.958, 3.0968e-4, 315.07),
            (75_000.0, 208.399, 2.3881, 3.9921e-5, 289.40),
            // T_M at 85 km (kinetic is 188.893 K x M/M0 = 188.835 K).
            (85_000.0, 188.893, 0.445_68, 8.2196e-6, 275.52),
        ];
        for row in rows {
            let got = us1976(row.0);
            println!("Z = {} m: {got:?}", row.0);
            assert_relative_eq!(got.temperature_k, row.1, max_relative = 1e-4);
            assert_relative_eq!(got.pressure_pa, row.2, max_relative = 1e-4);
            assert_relative_eq!(got.density_kg_m3, row.3, max_relative = 1e-4);
            assert_relative_eq!(got.speed_of_sound_mps, row.4, max_relative = 1e-4);
        }
    }

    #[test]
    fn stored_layer_constants_match_recomputation() {
        // Source: U.S. Standard Atmosphere 1976, eqs. 23, 33a, 33b: base values
        // follow from T0 = 288.15 K, p0 = 101325 Pa and the lapse rates.
        let mut t_k = 288.15;
        let mut p_pa = 101_325.0;
        let lapse_k_per_m = [-6.5e-3, 0.0, 1.0e-3, 2.8e-3, 0.0, -2.8e-3, -2.0e-3];
        let base_h_m = [0.0, 11e3, 20e3, 32e3, 47e3, 51e3, 71e3, 84_852.0];
        for i in 0..7 {
            assert_relative_eq!(LAYERS[i].base_h_m, base_h_m[i]);
            assert_relative_eq!(LAYERS[i].base_t_k, t_k, max_relative = 1e-12);
            assert_relative_eq!(LAYERS[i].base_p_pa, p_pa, max_relative = 1e-12);
            assert_relative_eq!(LAYERS[i].lapse_k_per_m, lapse_k_per_m[i]);
            assert_eq!(LAYERS[i].isothermal, lapse_k_per_m[i] == 0.0);
            let dh_m = base_h_m[i + 1] - base_h_m[i];
            let t_next_k = t_k + lapse_k_per_m[i] * dh_m;
            p_pa *= if lapse_k_per_m[i] == 0.0 {
                (-GMR_K_PER_M * dh_m / t_k).exp()
            } else {
                (t_k / t_next_k).powf(GMR_K_PER_M / lapse_k_per_m[i])
            };
            t_k = t_next_k;
        }
        // Source: the standard's printed base pressures, 7 significant figures
        // (from memory; the same digits appear in public reproductions).
        let printed_pa = [
            101_325.0, 22_632.06, 5_474.889, 868.0187, 110.9063, 66.93887, 3.956_420,
        ];
        for (layer, p) in LAYERS.iter().zip(printed_pa) {
            assert_relative_eq!(layer.base_p_pa, p, max_relative = 1e-6);
        }
    }

    #[test]
    fn densities_above_86km_match_standard() {
        // Source: U.S. Standard Atmosphere 1976, Table I, as reproduced in the poliastro
        // documentation.
        for (z_m, rho) in [(91e3, 2.860e-6), (110e3, 9.708e-8), (120e3, 2.222e-8)] {
            assert_relative_eq!(us1976(z_m).density_kg_m3, rho, max_relative = 1e-3);
        }
    }

    #[test]
    fn interpolated_values_above_86km_match_standard() {
        // Source: U.S. Standard Atmosphere 1976, Table I, as quoted in the public
        // poliastro test suite (test_coesa76.py, "directly taken from COESA76
        // report"); 92 km lies between table rows (91, 93 km), so this checks
        // the interpolation. Columns: Z m, T, p, rho.
        let rows = [
            (92e3, 186.96, 0.128_87, 2.393e-6),
            (230e3, 915.78, 3.9276e-5, 1.029e-10),
            (1000e3, 1000.0, 7.5138e-9, 3.561e-15),
        ];
        for (z_m, t_k, p_pa, rho) in rows {
            let got = us1976(z_m);
            println!("Z = {z_m} m: {got:?}");
            assert_relative_eq!(got.temperature_k, t_k, max_relative = 1e-4);
            assert_relative_eq!(got.pressure_pa, p_pa, max_relative = 1e-3);
            assert_relative_eq!(got.density_kg_m3, rho, max_relative = 1e-3);
        }
    }

    #[test]
    fn kinetic_temperature_segments() {
        // Source: U.S. Standard Atmosphere 1976, Table I kinetic temperatures
        // (from memory; 195.08, 300.00, 854.56 also in the COESA.jl test suite).
        let rows = [
            (86e3, 186.87),
            (100e3, 195.08),
            (110e3, 240.00),
            (115e3, 300.00),
            (120e3, 360.00),
            (150e3, 634.39),
            (200e3, 854.56),
            (500e3, 999.24),
            (2000e3, 1000.0),
        ];
        for (z_m, t_k) in rows {
            assert_relative_eq!(us1976(z_m).temperature_k, t_k, max_relative = 3e-5);
        }
    }

    #[test]
    fn density_and_pressure_decrease_monotonically_to_1000km() {
        // Source: hydrostatic equilibrium dp/dZ = -rho g < 0 (any text);
        // density falls too in every region of the standard.
        let mut prev = us1976(0.0);
        for k in 1..=10_000 {
            let z_m = f64::from(k) * 100.0;
            let cur = us1976(z_m);
            assert!(cur.pressure_pa < prev.pressure_pa, "p at {z_m} m");
            assert!(cur.density_kg_m3 < prev.density_kg_m3, "rho at {z_m} m");
            prev = cur;
        }
    }

    #[test]
    fn join_at_86km_is_continuous() {
        // Source: U.S. Standard Atmosphere 1976, Table I: 86 km is one row
        // (0.37338 Pa, 6.958e-6 kg/m3) reached from both sides.
        let below = us1976(Z_JOIN_M - 1e-6);
        let at = us1976(Z_JOIN_M);
        assert_relative_eq!(below.pressure_pa, at.pressure_pa, max_relative = 1e-6);
        assert_relative_eq!(below.density_kg_m3, at.density_kg_m3, max_relative = 1e-6);
        assert_relative_eq!(at.pressure_pa, 0.37338, max_relative = 1e-5);
        assert_relative_eq!(at.density_kg_m3, 6.958e-6, max_relative = 1e-4);
        // Documented step: T_M = 186.946 K below, kinetic 186.8673 K above.
        assert_relative_eq!(below.temperature_k, 186.946, max_relative = 1e-5);
        assert_relative_eq!(at.temperature_k, 186.8673, max_relative = 1e-7);
    }

    #[test]
    fn below_sea_level_continues_first_layer() {
        // Source: U.S. Standard Atmosphere 1976, Table I, Z = -5000 m, as quoted
        // in the danielmatz/COESA.jl test suite: 320.676 K, 1.7776e5 Pa,
        // 1.9311 kg/m3, 358.99 m/s.
        let low = us1976(-5_000.0);
        assert_relative_eq!(low.temperature_k, 320.676, max_relative = 1e-5);
        assert_relative_eq!(low.pressure_pa, 1.7776e5, max_relative = 1e-4);
        assert_relative_eq!(low.density_kg_m3, 1.9311, max_relative = 1e-4);
        assert_relative_eq!(low.speed_of_sound_mps, 358.99, max_relative = 1e-4);
        // Clamped below -5 km.
        assert_eq!(us1976(-6_000.0), low);
        // Source: first-layer formula, T = 288.15 K + 6.5 K/km x 10 m'.
        let t_k = 288.15 + 6.5e-3 * (R0_M * 10.0 / (R0_M - 10.0));
        assert_relative_eq!(us1976(-10.0).temperature_k, t_k, max_relative = 1e-12);
    }

    #[test]
    fn above_1000km_extrapolates_with_last_scale_height() {
        // Source: exponential atmosphere rho = rho_1000 exp(-(Z - 1000 km)/H),
        // H from the last two table rows (975, 1000 km): 100 km = 4 intervals.
        let (_, p975, rho975) = UPPER[UPPER.len() - 2];
        let (_, p1000, rho1000) = UPPER[UPPER.len() - 1];
        let got = us1976(1_100e3);
        assert_relative_eq!(
            got.density_kg_m3,
            rho1000 * (rho1000 / rho975).powi(4),
            max_relative = 1e-12
        );
        assert_relative_eq!(
            got.pressure_pa,
            p1000 * (p1000 / p975).powi(4),
            max_relative = 1e-12
        );
        assert_relative_eq!(got.temperature_k, 1000.0);
    }

    #[test]
    fn extreme_inputs_give_finite_positive_states() {
        // Source: API contract (never NaN, never zero), common practice.
        let inputs = [-1e6, -10.0, 0.0, 1e7, f64::NAN, f64::INFINITY];
        let more = [f64::NEG_INFINITY, f64::MAX, f64::MIN, 1e300, -1e300];
        for z_m in inputs.into_iter().chain(more) {
            let s = us1976(z_m);
            let g = us1976_geopotential(z_m);
            for v in [s, g].iter().flat_map(|x| {
                [
                    x.temperature_k,
                    x.pressure_pa,
                    x.density_kg_m3,
                    x.speed_of_sound_mps,
                ]
            }) {
                assert!(v.is_finite() && v > 0.0, "input {z_m}: {s:?} {g:?}");
            }
        }
        assert_eq!(us1976(f64::NAN), us1976(0.0));
        assert_eq!(us1976(f64::INFINITY), us1976(Z_MAX_M));
        assert_eq!(us1976_geopotential(f64::NAN), us1976(0.0));
        assert!(us1976(1e7).density_kg_m3 < us1976(Z_TABLE_TOP_M).density_kg_m3);
    }

    #[test]
    fn geopotential_entry_agrees_with_geometric_above_86km() {
        // Source: NOAA-S/T 76-1562 eq. 18, H = r0 Z / (r0 + Z).
        for z_m in [86e3, 100e3, 400e3, 2_000e3] {
            let h_m = R0_M * z_m / (R0_M + z_m);
            let a = us1976(z_m);
            let b = us1976_geopotential(h_m);
            assert_relative_eq!(a.density_kg_m3, b.density_kg_m3, max_relative = 1e-9);
            assert_relative_eq!(a.temperature_k, b.temperature_k, max_relative = 1e-9);
        }
    }

    #[test]
    fn upper_table_is_ordered_and_starts_at_model_value() {
        // Source: U.S. Standard Atmosphere 1976, Table I: altitude increases,
        // pressure and density decrease row by row; first row = model at 86 km.
        for w in UPPER.windows(2) {
            assert!(w[1].0 > w[0].0 && w[1].1 < w[0].1 && w[1].2 < w[0].2);
        }
        let model = lower_atmosphere(H_JOIN_M);
        assert_relative_eq!(UPPER[0].1, model.pressure_pa, max_relative = 1e-13);
        assert_relative_eq!(UPPER[0].2, model.density_kg_m3, max_relative = 1e-13);
    }
}
