//! Diagnostic plots: the figures as data ([`data`]), drawn by one module
//! ([`draw`]) on any plotters backend: PNG in the CLI ([`png`]), canvas on
//! the page.

pub mod data;
pub mod draw;
#[cfg(not(target_arch = "wasm32"))]
pub mod png;
