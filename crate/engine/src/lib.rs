//! noise-budget's engine: the image-sensor pixel noise model, pure computation.
//!
//! A scenario (sensor, readout, light, exposure, conditions; format version 1, SCENARIO.md)
//! is parsed and checked by [`validate`] into a [`Scenario`], then [`evaluate`]d into a
//! [`Report`]: signal, each noise source, SNR, minimum detectable signal, saturation,
//! dynamic range, the exposure for a threshold, and warnings.
//!
//! This crate does no I/O and knows nothing of the DOM, the terminal or files: it builds for
//! native targets and for `wasm32-unknown-unknown` alike. It never panics on input.

pub mod colour;
pub mod compare;
pub mod constants;
pub mod curves;
pub mod dark;
pub mod decimal;
pub mod demos;
pub mod detection;
pub mod frames;
pub mod hdr;
mod input;
pub mod keys;
pub mod light;
pub mod model;
pub mod output_noise;
pub mod photon;
pub mod ptc;
pub mod quantization;
pub mod report;
pub mod roots;
pub mod scenario;
pub mod sense_node;
pub mod simulate;
pub mod small_sort;
pub mod spectrum;
pub mod sweep;
pub mod validate;

pub use model::evaluate;
pub use report::Report;
pub use scenario::Scenario;
pub use validate::{Problem, ScenarioError};

/// Parse, check and evaluate a scenario given as JSON text.
///
/// # Errors
/// A [`ScenarioError`] listing every problem in the scenario, each naming its key.
///
/// ```
/// let err = engine::evaluate_json(r#"{"version":1}"#).unwrap_err();
/// assert!(err.problems().iter().any(|p| p.path == "sensor"));
/// ```
pub fn evaluate_json(text: &str) -> Result<Report, ScenarioError> {
    validate::scenario_from_json(text).map(|s| evaluate(&s))
}
