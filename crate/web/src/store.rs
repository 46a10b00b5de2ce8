//! What the browser keeps between visits (localStorage): the last valid scenario, and the
//! scenarios the user kept by name.
//!
//! Storage may be missing, full or refused (private windows, file:// policies): every call
//! degrades to "nothing kept" and reports failure, never panics. Stored text is not trusted:
//! it is validated by the engine like any link or file before use.

use serde_json::{Map, Value};
use web_sys::Storage;

use crate::dom;

const LAST_KEY: &str = "noise-budget/last-scenario";
const KEPT_KEY: &str = "noise-budget/kept-scenarios";

fn storage() -> Option<Storage> {
    dom::window()?.local_storage().ok().flatten()
}

/// Remember the last valid scenario (compact JSON). Returns whether it was stored.
pub fn save_last(json: &str) -> bool {
    storage().is_some_and(|s| s.set_item(LAST_KEY, json).is_ok())
}

/// The last valid scenario, if one was kept.
#[must_use]
pub fn last() -> Option<String> {
    storage()?.get_item(LAST_KEY).ok().flatten()
}

/// The kept scenarios, by name (an unreadable store counts as empty).
#[must_use]
pub fn kept() -> Map<String, Value> {
    storage()
        .and_then(|s| s.get_item(KEPT_KEY).ok().flatten())
        .and_then(|text| serde_json::from_str::<Value>(&text).ok())
        .and_then(|v| match v {
            Value::Object(m) => Some(m),
            _ => None,
        })
        .unwrap_or_default()
}

fn write_kept(m: &Map<String, Value>) -> bool {
    let text = Value::Object(m.clone()).to_string();
    storage().is_some_and(|s| s.set_item(KEPT_KEY, &text).is_ok())
}

/// Keep a scenario under a name, replacing one of the same name. Returns whether it was stored.
pub fn keep(name: &str, scenario: Value) -> bool {
    let mut m = kept();
    m.insert(name.to_string(), scenario);
    write_kept(&m)
}

/// Forget a kept scenario. Returns whether the store was written.
pub fn forget(name: &str) -> bool {
    let mut m = kept();
    m.remove(name);
    write_kept(&m)
}
