//! Renderers: pure functions from the application layer's outcomes to text, CSV, figures (PNG and
//! SVG bytes) and a self-contained HTML page. Nothing here computes a result or touches a file:
//! the caller decides where the bytes go.

pub mod csv;
pub mod dispersions;
#[cfg(feature = "figures")]
pub mod figures;
#[cfg(feature = "figures")]
pub mod html;
#[cfg(feature = "figures")]
pub mod plots;
pub mod solve;
pub mod stream;
pub mod study;
pub mod table;
pub mod text;
