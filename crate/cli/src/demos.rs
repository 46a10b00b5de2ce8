//! The demo scenarios the `example` command prints: the engine's embedded list.
//!
//! Nothing of its own: the list lives in `engine::demos` so the page and this tool agree.

pub use engine::demos::DEMOS;
