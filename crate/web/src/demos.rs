//! The invented demo scenarios, embedded in the wasm at build time so the single file has them.
//!
//! Only the list: loading one goes through the same validation as a link or a file. The data
//! lives in `www/demos/*.json` (owned with the command-line tool's demos); nothing is computed here.

/// One demo: a stable name (the file's stem), a short label for its button, and the scenario.
pub struct Demo {
    /// The file stem in `www/demos/`.
    pub name: &'static str,
    /// Button text.
    pub label: &'static str,
    /// The scenario, JSON text.
    pub json: &'static str,
}

/// The demos, in the order the page shows them. The first is loaded on a first visit.
pub const DEMOS: &[Demo] = &[
    Demo {
        name: "global-shutter-machine-vision",
        label: "3.45 µm global shutter, machine vision",
        json: include_str!("../../../www/demos/global-shutter-machine-vision.json"),
    },
    Demo {
        name: "small-pixel-rolling-shutter",
        label: "1.0 µm rolling shutter, small pixel",
        json: include_str!("../../../www/demos/small-pixel-rolling-shutter.json"),
    },
    Demo {
        name: "cooled-scientific",
        label: "6.5 µm cooled scientific",
        json: include_str!("../../../www/demos/cooled-scientific.json"),
    },
    Demo {
        name: "three-transistor-no-cds",
        label: "5.6 µm 3T pixel, no CDS",
        json: include_str!("../../../www/demos/three-transistor-no-cds.json"),
    },
    Demo {
        name: "conveyor-lux-and-lens",
        label: "300 lx scene through an f/2.8 lens",
        json: include_str!("../../../www/demos/conveyor-lux-and-lens.json"),
    },
    Demo {
        name: "nir-illuminator-daylight",
        label: "850 nm illuminator with daylight",
        json: include_str!("../../../www/demos/nir-illuminator-daylight.json"),
    },
];

/// The demo with this name.
#[must_use]
pub fn by_name(name: &str) -> Option<&'static Demo> {
    DEMOS.iter().find(|d| d.name == name)
}

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
