//! The ids of the page's elements that the Rust code looks up, in one place: every one is
//! checked against `www/index.html` by the tidy test (`crate/web/tests/tidy.rs`), and the
//! generated field markup (`markup.rs`) uses the ones it writes.
//!
//! Ids only; no DOM here. (`frames_ui/` still writes its own as literals, which the tidy test
//! checks the same way.)

// The tools above the form: demos, links, files, kept scenarios, messages.
/// The line a page whose calculator never started keeps (removed at the start).
pub const BOOT_WAITING: &str = "boot-waiting";
/// The version stamp.
pub const TOOL_VERSION: &str = "tool-version";
/// The date stamp of a print.
pub const PRINT_DATE: &str = "print-date";
/// The status line.
pub const STATUS: &str = "status";
/// The box of problems with a scenario that could not be loaded.
pub const LOAD_PROBLEMS: &str = "load-problems";
/// Its heading.
pub const LOAD_PROBLEMS_HEAD: &str = "load-problems-head";
/// Its list.
pub const LOAD_PROBLEMS_LIST: &str = "load-problems-list";
/// The demo buttons.
pub const DEMO_LIST: &str = "demo-list";
/// Copy the link.
pub const COPY_LINK: &str = "copy-link";
/// Save as a file.
pub const SAVE_FILE: &str = "save-file";
/// Open a file.
pub const OPEN_FILE: &str = "open-file";
/// The link to the scenario.
pub const SHARE_LINK: &str = "share-link";
/// The name to keep a scenario under.
pub const SAVED_NAME: &str = "saved-name";
/// Keep the scenario.
pub const KEEP_SCENARIO: &str = "keep-scenario";
/// The kept scenarios.
pub const SAVED_LIST: &str = "saved-list";
/// Load a kept scenario.
pub const LOAD_SAVED: &str = "load-saved";
/// Forget a kept scenario.
pub const FORGET_SAVED: &str = "forget-saved";

// The scenario form.
/// The form.
pub const SCENARIO_FORM: &str = "scenario-form";
/// Problems that belong to no field.
pub const FORM_PROBLEMS: &str = "form-problems";
/// The box of scenario keys the form has no field for.
pub const EXTRA_JSON: &str = "extra-json";
/// The light's kind (a choice of the form, not a scenario key).
pub const LIGHT_KIND: &str = "light-kind";
/// The background light's kind.
pub const BACKGROUND_KIND: &str = "bg-kind";
/// The plot of the QE curve.
pub const PLOT_QE: &str = "plot-qe";
/// The plot of the light's spectrum.
pub const PLOT_LIGHT: &str = "plot-light";
/// The plot of the background light's spectrum.
pub const PLOT_BACKGROUND: &str = "plot-bg";

// The results.
/// The results section.
pub const RESULTS: &str = "results";
/// The note that the results are of the last valid scenario.
pub const STALE_NOTE: &str = "stale-note";
/// Warnings that belong to no group.
pub const WARNINGS_GENERAL: &str = "warnings-general";

// The curves and the comparison.
/// The curves section.
pub const CURVES: &str = "curves";
/// Points per curve.
pub const CURVE_POINTS: &str = "curve-points";
/// The problem with the points per curve.
pub const CURVE_POINTS_PROBLEM: &str = "curve-points-problem";
/// Curves that cannot be drawn.
pub const CURVE_PROBLEM: &str = "curve-problem";
/// The view the noise budget is drawn along.
pub const BUDGET_ALONG: &str = "budget-along";
/// The charts' slots.
pub const CHART_SIGNAL: &str = "chart-signal";
/// The exposure chart's slot.
pub const CHART_EXPOSURE: &str = "chart-exposure";
/// The light chart's slot.
pub const CHART_LIGHT: &str = "chart-light";
/// The temperature chart's slot.
pub const CHART_TEMPERATURE: &str = "chart-temperature";
/// The noise budget chart's slot.
pub const CHART_BUDGET: &str = "chart-budget";
/// The contrast detection chart's slot.
pub const CHART_CONTRAST: &str = "chart-contrast";
/// The charts' readouts.
pub const READOUT_SIGNAL: &str = "readout-signal";
/// The exposure chart's readout.
pub const READOUT_EXPOSURE: &str = "readout-exposure";
/// The light chart's readout.
pub const READOUT_LIGHT: &str = "readout-light";
/// The temperature chart's readout.
pub const READOUT_TEMPERATURE: &str = "readout-temperature";
/// The noise budget chart's readout.
pub const READOUT_BUDGET: &str = "readout-budget";
/// The contrast detection chart's readout.
pub const READOUT_CONTRAST: &str = "readout-contrast";
// The simulated frame and series (frame_ui.rs).
/// The section.
pub const FRAME_VIEW: &str = "frame-view";
/// Simulate the frame.
pub const FRAME_RUN: &str = "frame-run";
/// Its seed.
pub const FRAME_SEED: &str = "frame-seed";
/// What is wrong with the seed.
pub const FRAME_SEED_PROBLEM: &str = "frame-seed-problem";
/// One screen pixel per output pixel.
pub const FRAME_ACTUAL_PIXELS: &str = "frame-actual-pixels";
/// What the simulation did.
pub const FRAME_STATUS: &str = "frame-status";
/// The frames shown: the scenario's and a pinned one's.
pub const FRAME_VIEWS: &str = "frame-views";
/// Download the simulated series.
pub const SERIES_DOWNLOAD: &str = "series-download";
/// Hand the simulated series to Measure a camera.
pub const SERIES_MEASURE: &str = "series-measure";
/// What the series request did.
pub const SERIES_STATUS: &str = "series-status";
/// Pin the scenario.
pub const PIN_SCENARIO: &str = "pin-scenario";
/// What pinning did.
pub const PIN_STATUS: &str = "pin-status";
/// The comparison table.
pub const COMPARE_TABLE: &str = "compare-table";
/// Its head.
pub const COMPARE_HEAD: &str = "compare-head";
/// Its body.
pub const COMPARE_BODY: &str = "compare-body";
/// The comparison as CSV.
pub const COMPARE_CSV: &str = "compare-csv";

/// The Detection group's plot of the charge distributions.
pub const DETECTION_PLOT: &str = "detection-plot";
