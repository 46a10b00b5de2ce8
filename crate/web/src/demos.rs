//! The invented demo scenarios, embedded in the wasm at build time so the single file has them.
//!
//! Only the list, shared with the command-line tool through `engine::demos`: loading one goes
//! through the same validation as a link or a file. Nothing is computed here.

pub use engine::demos::{by_name, DEMOS};

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_demo_is_a_valid_scenario_with_a_unique_name() {
        for d in DEMOS {
            assert!(engine::evaluate_json(d.json).is_ok(), "{}", d.name);
            assert_eq!(DEMOS.iter().filter(|e| e.name == d.name).count(), 1);
            assert!(by_name(d.name).is_some());
        }
        assert!(by_name("nope").is_none());
    }

    #[test]
    fn every_demo_file_is_listed() {
        let dir = concat!(env!("CARGO_MANIFEST_DIR"), "/../../www/demos");
        let entries = std::fs::read_dir(dir);
        assert!(entries.is_ok(), "www/demos is readable");
        for e in entries.into_iter().flatten().flatten() {
            let path = e.path();
            if path.extension().and_then(|x| x.to_str()) == Some("json") {
                let stem = path.file_stem().and_then(|s| s.to_str()).unwrap_or("");
                assert!(
                    by_name(stem).is_some(),
                    "demo {stem} not listed in demos.rs"
                );
            }
        }
    }
}
