//! The validated vehicle: stages, strap-on boosters, jettisoned masses and their propulsion.
//!
//! Propulsion model (Sutton & Biblarz, *Rocket Propulsion Elements*, eq. 2-14, from memory):
//! `F = ṁ v_e + (p_e − p_a) A_e`, written with the vacuum thrust as
//! `T = κ·T_vac − p_a·A_e` and `ṁ = κ·T_vac / (g0·Isp_vac)` for throttle κ. With a sea-level thrust
//! given instead of the exit area, `A_e = (T_vac − T_sl) / p_sl`, p_sl = 101 325 Pa.

use crate::core::physics::aero::DragTable;
use crate::core::physics::earth::G0_MPS2;

/// Sea-level standard pressure used to turn a sea-level thrust into an exit area, Pa.
pub const P_SL_PA: f64 = 101_325.0;

/// One engine set (all engines of a stage, or of one booster).
#[derive(Debug, Clone, PartialEq)]
pub struct Engine {
    /// Vacuum thrust at full throttle, N.
    pub thrust_vac_n: f64,
    /// Vacuum specific impulse, s.
    pub isp_vac_s: f64,
    /// Nozzle exit area, m².
    pub exit_area_m2: f64,
}

impl Engine {
    /// Mass flow at full throttle, kg/s: `T_vac / (g0 Isp_vac)`.
    pub fn mdot_full_kg_s(&self) -> f64 {
        self.thrust_vac_n / (G0_MPS2 * self.isp_vac_s)
    }

    /// Effective exhaust velocity in vacuum, m/s.
    pub fn exhaust_velocity_mps(&self) -> f64 {
        G0_MPS2 * self.isp_vac_s
    }
}

/// A serial stage.
#[derive(Debug, Clone, PartialEq)]
pub struct Stage {
    /// Name.
    pub name: String,
    /// Dry mass, kg.
    pub dry_mass_kg: f64,
    /// Usable propellant, kg.
    pub propellant_kg: f64,
    /// Engines.
    pub engine: Engine,
    /// Lowest throttle, fraction of full thrust.
    pub min_throttle: f64,
    /// Aerodynamics while this is the bottom stage.
    pub aero: DragTable,
}

/// A set of identical strap-on boosters, burning at full thrust from liftoff to depletion.
#[derive(Debug, Clone, PartialEq)]
pub struct Boosters {
    /// Name.
    pub name: String,
    /// Number of boosters.
    pub count: u32,
    /// Dry mass of one booster, kg.
    pub dry_mass_kg: f64,
    /// Propellant of one booster, kg.
    pub propellant_kg: f64,
    /// Engine of one booster.
    pub engine: Engine,
    /// Aerodynamics of the vehicle while they are attached.
    pub aero: DragTable,
}

impl Boosters {
    /// Burn time from ignition to depletion, s.
    pub fn burn_time_s(&self) -> f64 {
        self.propellant_kg / self.engine.mdot_full_kg_s()
    }

    /// Mass of all boosters `tau_s` seconds after ignition (clamped at burnout), kg.
    pub fn mass_at_kg(&self, tau_s: f64) -> f64 {
        let burned = (self.engine.mdot_full_kg_s() * tau_s.max(0.0)).min(self.propellant_kg);
        f64::from(self.count) * (self.dry_mass_kg + self.propellant_kg - burned)
    }
}

/// When a jettisoned mass is dropped.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum JettisonWhen {
    /// At this time after liftoff, s.
    Time(f64),
    /// When the altitude first exceeds this, m.
    Altitude(f64),
    /// When ½ρV³ has risen above and then falls below this, W/m².
    HeatingBelow(f64),
}

/// A mass dropped on a condition (fairing, interstage...).
#[derive(Debug, Clone, PartialEq)]
pub struct Jettison {
    /// Name.
    pub name: String,
    /// Mass, kg.
    pub mass_kg: f64,
    /// Condition.
    pub when: JettisonWhen,
}

/// The validated vehicle.
#[derive(Debug, Clone, PartialEq)]
pub struct Vehicle {
    /// Name.
    pub name: String,
    /// Payload, kg.
    pub payload_kg: f64,
    /// Serial stages, bottom first (at least one).
    pub stages: Vec<Stage>,
    /// Strap-on boosters.
    pub boosters: Option<Boosters>,
    /// Jettisoned masses.
    pub jettisons: Vec<Jettison>,
}

impl Vehicle {
    /// Liftoff mass, kg.
    pub fn liftoff_mass_kg(&self) -> f64 {
        let stages: f64 = self
            .stages
            .iter()
            .map(|s| s.dry_mass_kg + s.propellant_kg)
            .sum();
        let jett: f64 = self.jettisons.iter().map(|j| j.mass_kg).sum();
        let boost = self.boosters.as_ref().map_or(0.0, |b| b.mass_at_kg(0.0));
        self.payload_kg + stages + jett + boost
    }

    /// Total propellant loaded (stages and boosters), kg.
    pub fn propellant_loaded_kg(&self) -> f64 {
        let s: f64 = self.stages.iter().map(|s| s.propellant_kg).sum();
        s + self
            .boosters
            .as_ref()
            .map_or(0.0, |b| f64::from(b.count) * b.propellant_kg)
    }
}
