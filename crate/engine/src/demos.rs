//! The invented demo scenarios (www/demos/*.json), embedded at build time for every front end.
//!
//! Demo data only: plausible sensor classes and scenes, no real product. Nothing is computed
//! here and nothing is read at run time (the files are compiled in with `include_str!`).

/// One demo scenario.
#[derive(Debug)]
pub struct Demo {
    /// The file stem in `www/demos/`, used as its name (`noise-budget example NAME`).
    pub name: &'static str,
    /// A short label (the page's button).
    pub label: &'static str,
    /// One line on what it shows (`noise-budget example --list`).
    pub summary: &'static str,
    /// The scenario, JSON text.
    pub json: &'static str,
}

/// The demos, the default first.
pub const DEMOS: &[Demo] = &[
    Demo {
        name: "global-shutter-machine-vision",
        label: "3.45 µm global shutter, machine vision",
        summary: "3.45 µm global-shutter class, LED light as irradiance, SNR threshold 5",
        json: include_str!("../../../www/demos/global-shutter-machine-vision.json"),
    },
    Demo {
        name: "small-pixel-rolling-shutter",
        label: "1.0 µm rolling shutter, small pixel",
        summary: "1.0 µm rolling-shutter class, warm, 2×2 digital binning",
        json: include_str!("../../../www/demos/small-pixel-rolling-shutter.json"),
    },
    Demo {
        name: "cooled-scientific",
        label: "6.5 µm cooled scientific",
        summary: "cooled 6.5 µm class, faint light, 2×2 charge binning, 4 frames averaged",
        json: include_str!("../../../www/demos/cooled-scientific.json"),
    },
    Demo {
        name: "three-transistor-no-cds",
        label: "5.6 µm 3T pixel, no CDS",
        summary: "3T pixel with delta double sampling: reset noise dominates",
        json: include_str!("../../../www/demos/three-transistor-no-cds.json"),
    },
    Demo {
        name: "conveyor-lux-and-lens",
        label: "300 lx scene through an f/2.8 lens",
        summary: "300 lx white-LED conveyor seen through an f/2.8 lens: the answer in scene lux",
        json: include_str!("../../../www/demos/conveyor-lux-and-lens.json"),
    },
    Demo {
        name: "nir-illuminator-daylight",
        label: "850 nm illuminator with daylight",
        summary: "850 nm illuminator with daylight as background light, QE curve",
        json: include_str!("../../../www/demos/nir-illuminator-daylight.json"),
    },
    Demo {
        name: "colour-machine-vision",
        label: "3.45 µm colour machine vision",
        summary: "3.45 µm global-shutter colour class (BGGR) under white LEDs, white balance and colour matrix",
        json: include_str!("../../../www/demos/colour-machine-vision.json"),
    },
    Demo {
        name: "automotive-hdr-colour",
        label: "3.0 µm automotive HDR colour",
        summary: "3.0 µm automotive-class HDR colour sensor (RGGB, three exposures), hot, band-gap dark current",
        json: include_str!("../../../www/demos/automotive-hdr-colour.json"),
    },
];

/// The demo with this name.
#[must_use]
pub fn by_name(name: &str) -> Option<&'static Demo> {
    DEMOS.iter().find(|d| d.name == name)
}
