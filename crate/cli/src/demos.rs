//! The demo scenarios shipped with the tool, embedded from `www/demos/` at build time.
//!
//! Invented demo data only; this file holds no figures of its own.

/// One embedded demo scenario.
pub struct Demo {
    /// Short name for `noise-budget example NAME`.
    pub name: &'static str,
    /// One line on what it shows.
    pub summary: &'static str,
    /// The scenario file's text.
    pub json: &'static str,
}

/// The demos, the default first.
pub const DEMOS: &[Demo] = &[
    Demo {
        name: "global-shutter-machine-vision",
        summary: "3.45 µm global-shutter class, LED light as irradiance, SNR threshold 5",
        json: include_str!("../../../www/demos/global-shutter-machine-vision.json"),
    },
    Demo {
        name: "small-pixel-rolling-shutter",
        summary: "1.0 µm rolling-shutter class, warm, 2×2 digital binning",
        json: include_str!("../../../www/demos/small-pixel-rolling-shutter.json"),
    },
    Demo {
        name: "cooled-scientific",
        summary: "cooled 6.5 µm class, faint light, 2×2 charge binning, 4 frames averaged",
        json: include_str!("../../../www/demos/cooled-scientific.json"),
    },
    Demo {
        name: "three-transistor-no-cds",
        summary: "3T pixel with delta double sampling: reset noise dominates",
        json: include_str!("../../../www/demos/three-transistor-no-cds.json"),
    },
    Demo {
        name: "conveyor-lux-and-lens",
        summary: "300 lx white-LED conveyor seen through an f/2.8 lens: the answer in scene lux",
        json: include_str!("../../../www/demos/conveyor-lux-and-lens.json"),
    },
    Demo {
        name: "nir-illuminator-daylight",
        summary: "850 nm illuminator with daylight as background light, QE curve",
        json: include_str!("../../../www/demos/nir-illuminator-daylight.json"),
    },
];
