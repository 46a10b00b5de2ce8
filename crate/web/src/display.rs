//! How a figure is written on the page: rounded text by the browser's `Intl.NumberFormat`,
//! full precision by JavaScript's `Number.prototype.toString` (shortest round-trip form).
//!
//! Formatting only. It computes no figure and rounds nothing that is passed back to the engine;
//! it leaves number formatting to JavaScript because Rust's is large in wasm. The [`Numbers`]
//! trait lets the page's pure parts (the curves' readouts, the comparison table) be tested
//! natively with a formatter of their own; [`Browser`] is the page's.

#[cfg(target_arch = "wasm32")]
use js_sys::{Array, Function, Intl, Object, Reflect};
#[cfg(target_arch = "wasm32")]
use wasm_bindgen::JsValue;

/// Significant digits shown for a figure: enough to compare designs, few enough to read.
#[cfg(target_arch = "wasm32")]
const SHOWN_DIGITS: u32 = 4;
/// Significant digits shown for a share or a fill, in percent.
#[cfg(target_arch = "wasm32")]
const SHOWN_PERCENT_DIGITS: u32 = 3;
/// Magnitudes outside [1e-3, 1e6) are written with an exponent.
#[cfg(target_arch = "wasm32")]
const PLAIN_MIN: f64 = 1e-3;
#[cfg(target_arch = "wasm32")]
const PLAIN_MAX: f64 = 1e6;

/// How a figure is shown, from its element's `data-fmt`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Style {
    /// A number with [`SHOWN_DIGITS`] significant digits.
    Number,
    /// A fraction shown as a percentage.
    Percent,
}

/// How figures become text: rounded for reading, or in full (reading back the same number).
pub trait Numbers {
    /// The rounded text for a figure.
    fn rounded(&self, x: f64, style: Style) -> String;
    /// The figure at full precision.
    fn full(&self, x: f64) -> String;
}

/// The browser's formatting: [`rounded`] and [`full`].
#[cfg(target_arch = "wasm32")]
pub struct Browser;

#[cfg(target_arch = "wasm32")]
impl Numbers for Browser {
    fn rounded(&self, x: f64, style: Style) -> String {
        rounded(x, style)
    }
    fn full(&self, x: f64) -> String {
        full(x)
    }
}

#[cfg(target_arch = "wasm32")]
fn formatter(options: &[(&str, JsValue)]) -> Option<Function> {
    let opts = Object::new();
    for (k, v) in options {
        Reflect::set(&opts, &JsValue::from_str(k), v).ok()?;
    }
    let locales = Array::of1(&JsValue::from_str("en"));
    let nf = Intl::NumberFormat::new(&locales, &opts);
    Some(nf.format())
}

#[cfg(target_arch = "wasm32")]
thread_local! {
    static PLAIN: Option<Function> = formatter(&[
        ("maximumSignificantDigits", SHOWN_DIGITS.into()),
    ]);
    static SCIENTIFIC: Option<Function> = formatter(&[
        ("maximumSignificantDigits", SHOWN_DIGITS.into()),
        ("notation", "scientific".into()),
    ]);
    static PERCENT: Option<Function> = formatter(&[
        ("maximumSignificantDigits", SHOWN_PERCENT_DIGITS.into()),
        ("style", "percent".into()),
    ]);
}

#[cfg(target_arch = "wasm32")]
fn apply(f: Option<&Function>, x: f64) -> Option<String> {
    f?.call1(&JsValue::NULL, &JsValue::from_f64(x))
        .ok()?
        .as_string()
}

/// The rounded text for a figure.
#[cfg(target_arch = "wasm32")]
#[must_use]
pub fn rounded(x: f64, style: Style) -> String {
    let text = match style {
        Style::Percent => PERCENT.with(|f| apply(f.as_ref(), x)),
        Style::Number => {
            let a = x.abs();
            if a == 0.0 || (PLAIN_MIN..PLAIN_MAX).contains(&a) {
                PLAIN.with(|f| apply(f.as_ref(), x))
            } else {
                SCIENTIFIC.with(|f| apply(f.as_ref(), x))
            }
        }
    };
    text.unwrap_or_else(|| full(x))
}

/// The figure at full precision, as JavaScript writes it (reads back to the same number).
#[cfg(target_arch = "wasm32")]
#[must_use]
pub fn full(x: f64) -> String {
    js_sys::Number::from(x)
        .to_string_with_radix(10)
        .map_or_else(|_| String::new(), String::from)
}
