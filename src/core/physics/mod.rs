//! Physics models: the WGS-84 Earth and gravity ([`earth`]), the standard atmosphere
//! ([`atmosphere`]), two-body orbits and launch azimuth ([`orbit`]), the vacuum impact point
//! ([`iip`]), drag tables ([`aero`]) and the
//! environment seen by the vehicle at one instant ([`environment`]).
//!
//! Nothing here knows about stages, programs or the integrator; `sim` calls these functions from the
//! right-hand side, so they must not allocate.

pub mod aero;
pub mod atmosphere;
pub mod earth;
pub mod environment;
pub mod iip;
pub mod orbit;
