//! The page's Curves and Compare sections: the engine's standard views of the scenario
//! (`engine::curves`) drawn as charts, the pinned scenarios overlaid and compared in a table
//! (`engine::compare`), values read by pointer or keys, and exports (SVG, PNG, CSV).
//!
//! Split by what can be tested natively: [`charts`] (which charts, which series, which words;
//! the contrast detection chart in `contrast.rs`),
//! [`table`] (the comparison's markup) and [`pins`] (the pinned scenarios carried in the
//! scenario JSON) are pure; `page.rs` puts them on the page and is the only part that touches
//! the DOM. Every figure is the engine's.

pub mod charts;
mod contrast;
pub mod pins;
pub mod table;

#[cfg(target_arch = "wasm32")]
mod page;

#[cfg(target_arch = "wasm32")]
pub use page::{first_pin, mark_stale, show, take_pins, wire, with_pins};
