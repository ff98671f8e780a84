//! stemcast: fit periodic tree survival and diameter-growth models from remeasurement
//! data, and chain them into Monte Carlo and expected-value stand projections.
//!
//! The library never prints and never exits; the `stemcast` binary is a thin layer over it.
//! Layers: [`data`] reads CSV files into validated frames, [`model`] fits and stores models,
//! [`scenario`] reads projection scenarios, [`project`] runs them, [`report`] writes results.

pub mod atomic;
pub mod data;
pub mod demo;
pub mod error;
pub mod fit;
pub mod model;
pub mod project;
pub mod report;
pub mod scenario;
pub mod tolerance;

pub use error::Error;
