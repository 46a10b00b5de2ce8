//! The page's frame analysis, run in a Web Worker: the frame files the user chose, given one at
//! a time to the engine's photon transfer analysis (read four ahead, see `boot.js`), and the
//! result as JSON text.
//!
//! Not a wasm of its own in the page: `crate/web` links these exports into the page's wasm
//! (its `frames` feature), and the worker instantiates the page's compiled module, so one
//! engine runs in both. It has no DOM and no worker scope of its own: `boot.js` (put in the
//! page's app script by `scripts/single-file.mjs`) reads each file and posts progress and the
//! result. It computes nothing itself: manifest rules, decoding, statistics and fits are the
//! engine's (`engine::ptc::parse_manifest`, `engine::ptc::Measurement`), the same code as
//! `noise-budget characterize`. It also runs the page's simulations (`sim`: the test-scene
//! frame and a photon transfer series, `engine::simulate`, the code of `noise-budget simulate`),
//! so that neither the simulator nor its work is on the page's thread; `zip` packs a series
//! for download. Nothing here may panic on a file, a manifest or a scenario.

pub mod job;
pub mod sim;
pub mod zip;

#[cfg(target_arch = "wasm32")]
mod bindings;
