//! The page's behaviour: wire the controls, and run the one flow every change goes through
//! (form → engine → results, address, storage), plus loading from demos, links, files and the
//! browser's store.
//!
//! It validates nothing itself (the engine refuses bad scenarios and names the rule) and
//! computes no figure. Every failure (missing element, refused storage, bad link or file)
//! becomes a message or a no-op, never a panic.

use std::cell::{Cell, RefCell};

use engine::Problem;
use serde_json::Value;
use wasm_bindgen::closure::Closure;
use wasm_bindgen::{JsCast, JsValue};
use web_sys::{Element, Event, HtmlButtonElement, HtmlInputElement, HtmlSelectElement};

use crate::events::{on, on_id, when_settled, Action};
use crate::{
    address, curves, demos, detection_plot, dom, fields, form, frame_ui, ids, plot, results, store,
};

/// Delay before the address bar and the browser's store follow an edit: edits in quick
/// succession are written once (browsers throttle frequent `history.replaceState` calls).
const FOLLOW_DELAY_MS: i32 = 120;

thread_local! {
    /// The last scenario the engine accepted: what the results, the address and a saved file show.
    static LAST_GOOD: RefCell<Option<Value>> = const { RefCell::new(None) };
    /// Whether the form as it stands is valid.
    static FORM_VALID: Cell<bool> = const { Cell::new(false) };
    /// Whether the address and store are waiting to follow the last edit.
    static FOLLOW_PENDING: Cell<bool> = const { Cell::new(false) };
    /// Whether the window-level listeners are in place (mount may run again in tests).
    static WINDOW_WIRED: Cell<bool> = const { Cell::new(false) };
    /// Whether the first results have been shown (for the performance mark).
    static FIRST_SHOWN: Cell<bool> = const { Cell::new(false) };
}

/// Set the page up: fill the stamps, build the demo buttons, wire every control, and load the
/// scenario from the address, else the last one kept, else the first demo. Does nothing on a
/// page without the scenario form (such as the browser-test page).
pub fn mount() {
    let Some(form_el) = dom::by_id(ids::SCENARIO_FORM) else {
        return;
    };
    if let Some(p) = dom::window().and_then(|w| w.performance()) {
        let _ = p.mark("noise-budget:mount-start");
    }
    if let Some(w) = dom::by_id(ids::BOOT_WAITING) {
        w.remove();
    }
    results::reset();
    dom::set_text_of(ids::TOOL_VERSION, env!("CARGO_PKG_VERSION"));
    stamp_date();
    build_demo_buttons();
    refresh_kept_list(None);
    wire(&form_el);
    load_initial();
    if let Some(root) = dom::document().and_then(|d| d.document_element()) {
        dom::set_attr(&root, "data-ready", "true");
    }
}

fn wire(form_el: &Element) {
    on(form_el, "input", |e: Event| {
        let is_choice = e
            .target()
            .and_then(|t| t.dyn_into::<Element>().ok())
            .is_some_and(|t| t.tag_name().eq_ignore_ascii_case("select"));
        if is_choice {
            if let Some(f) = dom::by_id(ids::SCENARIO_FORM) {
                form::show_chosen(&f);
            }
        }
        recompute();
    });
    on(form_el, "submit", |e: Event| e.prevent_default());
    on_id(ids::DEMO_LIST, "click", |e: Event| {
        let name = e
            .target()
            .and_then(|t| t.dyn_into::<Element>().ok())
            .and_then(|t| t.closest("[data-demo]").ok().flatten())
            .and_then(|b| b.get_attribute("data-demo"));
        if let Some(demo) = name.as_deref().and_then(demos::by_name) {
            clear_load_problems();
            load_text(demo.json, &format!("the demo “{}”", demo.label));
        }
    });
    on_id(ids::COPY_LINK, "click", |_| copy_link());
    on_id(ids::SAVE_FILE, "click", |_| save_file());
    on_id(ids::OPEN_FILE, "change", |_| open_file());
    on_id(ids::KEEP_SCENARIO, "click", |_| keep_scenario());
    on_id(ids::LOAD_SAVED, "click", |_| load_kept());
    on_id(ids::FORGET_SAVED, "click", |_| forget_kept());
    curves::wire(act);
    frame_ui::wire();
    if !WINDOW_WIRED.with(Cell::get) {
        WINDOW_WIRED.with(|w| w.set(true));
        if let Some(w) = dom::window() {
            on(&w, "hashchange", |_| load_from_address_change());
            on(&w, "beforeprint", |_| stamp_date());
            on(&w, "pagehide", |_| follow_now());
        }
    }
}

fn stamp_date() {
    let iso = String::from(js_sys::Date::new_0().to_iso_string());
    dom::set_text_of(ids::PRINT_DATE, iso.get(..10).unwrap_or(&iso));
}

fn build_demo_buttons() {
    let Some(list) = dom::by_id(ids::DEMO_LIST) else {
        return;
    };
    dom::clear(&list);
    for d in demos::DEMOS {
        if let Some(b) = dom::new_element("button", d.label) {
            dom::set_attr(&b, "type", "button");
            dom::set_attr(&b, "data-demo", d.name);
            let _ = list.append_child(&b);
        }
    }
}

/// The one flow after any change to the form: read it, let the engine judge and compute, show
/// the results (or mark the refused fields and keep the last results, marked stale).
pub fn recompute() {
    let Some(form_el) = dom::by_id(ids::SCENARIO_FORM) else {
        return;
    };
    form::clear_problems(&form_el);
    let read = match form::read(&form_el) {
        Ok(s) => s,
        Err(problems) => {
            form::show_problems(&form_el, &problems);
            results::set_stale(true);
            FORM_VALID.with(|v| v.set(false));
            curves::mark_stale();
            return;
        }
    };
    match engine::validate::scenario_from_value(&read.value) {
        Ok(valid) if read.own_problems.is_empty() => {
            let report = engine::evaluate(&valid);
            results::show(&report);
            plot::show(&valid);
            detection_plot::show(&valid, &report);
            curves::show(&read.value, &report);
            frame_ui::after_results(&read.value);
            FORM_VALID.with(|v| v.set(true));
            // The pins travel with the scenario (link, store, saved and kept files).
            LAST_GOOD.with(|g| *g.borrow_mut() = Some(curves::with_pins(read.value)));
            update_share_link();
            schedule_follow();
            if !FIRST_SHOWN.with(Cell::get) {
                FIRST_SHOWN.with(|f| f.set(true));
                if let Some(p) = dom::window().and_then(|w| w.performance()) {
                    let _ = p.mark("noise-budget:first-result");
                }
            }
        }
        outcome => {
            // Lines of a pasted list that are not two numbers, then the engine's problems
            // with the other points named by their lines.
            let mut problems = read.own_problems.clone();
            if let Err(e) = outcome {
                problems.extend(read.at_lines(e.problems()));
            }
            form::show_problems(&form_el, &problems);
            results::set_stale(true);
            FORM_VALID.with(|v| v.set(false));
            curves::mark_stale();
        }
    }
}

fn last_good_json() -> Option<String> {
    LAST_GOOD.with(|g| g.borrow().as_ref().map(Value::to_string))
}

/// The page's address without its fragment.
fn address_base() -> String {
    let href = dom::window()
        .and_then(|w| w.location().href().ok())
        .unwrap_or_default();
    match href.split_once('#') {
        Some((base, _)) => base.to_string(),
        None => href,
    }
}

fn update_share_link() {
    if let (Some(input), Some(json)) = (
        dom::by_id_as::<HtmlInputElement>(ids::SHARE_LINK),
        last_good_json(),
    ) {
        input.set_value(&format!(
            "{}{}",
            address_base(),
            address::fragment_for(&json)
        ));
    }
}

fn schedule_follow() {
    if FOLLOW_PENDING.with(Cell::get) {
        return;
    }
    let Some(w) = dom::window() else {
        return;
    };
    FOLLOW_PENDING.with(|p| p.set(true));
    let cb = Closure::once_into_js(follow_now);
    if w.set_timeout_with_callback_and_timeout_and_arguments_0(cb.unchecked_ref(), FOLLOW_DELAY_MS)
        .is_err()
    {
        follow_now();
    }
}

/// Make the address and the browser's store show the last valid scenario now.
fn follow_now() {
    FOLLOW_PENDING.with(|p| p.set(false));
    let Some(json) = last_good_json() else {
        return;
    };
    let fragment = address::fragment_for(&json);
    if let Some(w) = dom::window() {
        let same = w.location().hash().ok().as_deref() == Some(fragment.as_str());
        if !same {
            if let Ok(h) = w.history() {
                let _ = h.replace_state_with_url(&JsValue::NULL, "", Some(&fragment));
            }
        }
    }
    store::save_last(&json);
}

/// Load a scenario given as JSON text into the form, if the engine accepts it. On refusal the
/// form is left exactly as it was and the problems are listed, naming `source`.
fn load_text(text: &str, source: &str) -> bool {
    if let Err(e) = engine::validate::scenario_from_json(text) {
        show_load_problems(source, e.problems());
        return false;
    }
    let (Ok(value), Some(form_el)) = (
        serde_json::from_str::<Value>(text),
        dom::by_id(ids::SCENARIO_FORM),
    ) else {
        return false;
    };
    let (value, pin_problems) = curves::take_pins(value);
    form::fill(&form_el, &value);
    recompute();
    follow_now();
    status(&format!("Showing {source}."));
    if !pin_problems.is_empty() {
        show_load_problems(
            &format!("all the pinned scenarios of {source}"),
            &pin_problems,
        );
    }
    true
}

/// What the app does when a section asks (see `events::Action`).
fn act(action: Action) {
    match action {
        Action::Recompute => recompute(),
        Action::Load { value, source } => {
            clear_load_problems();
            load_text(&value.to_string(), &source);
        }
    }
}

fn load_initial() {
    let hash = dom::window()
        .and_then(|w| w.location().hash().ok())
        .unwrap_or_default();
    match address::scenario_text(&hash) {
        Ok(Some(text)) => {
            if load_text(&text, "the scenario from the link") {
                return;
            }
        }
        Ok(None) => {}
        Err(e) => show_link_error(&e),
    }
    if let Some(last) = store::last() {
        if load_text(&last, "your last scenario") {
            return;
        }
    }
    if let Some(d) = demos::DEMOS.first() {
        load_text(d.json, &format!("the demo “{}”", d.label));
    }
}

fn load_from_address_change() {
    let hash = dom::window()
        .and_then(|w| w.location().hash().ok())
        .unwrap_or_default();
    let current = last_good_json().map(|j| address::fragment_for(&j));
    if current.as_deref() == Some(hash.as_str()) {
        return;
    }
    clear_load_problems();
    let loaded = match address::scenario_text(&hash) {
        Ok(Some(text)) => load_text(&text, "the scenario from the link"),
        Ok(None) => false,
        Err(e) => {
            show_link_error(&e);
            false
        }
    };
    if !loaded {
        // Put the address back to what is on screen.
        follow_now();
    }
}

fn show_link_error(e: &address::LinkError) {
    show_load_problems(
        "the scenario from the link",
        &[Problem {
            path: "link".into(),
            message: e.to_string(),
        }],
    );
}

fn status(text: &str) {
    dom::set_text_of(ids::STATUS, text);
}

fn show_load_problems(source: &str, problems: &[Problem]) {
    dom::set_text_of(
        ids::LOAD_PROBLEMS_HEAD,
        &format!("Could not load {source}; the scenario on screen is unchanged. Problems found:"),
    );
    if let Some(list) = dom::by_id(ids::LOAD_PROBLEMS_LIST) {
        dom::clear(&list);
        for p in problems {
            if let Some(li) = dom::new_element("li", &p.to_string()) {
                let _ = list.append_child(&li);
            }
        }
    }
    if let Some(b) = dom::by_id(ids::LOAD_PROBLEMS) {
        dom::set_hidden(&b, false);
    }
    status("");
}

fn clear_load_problems() {
    if let Some(b) = dom::by_id(ids::LOAD_PROBLEMS) {
        dom::set_hidden(&b, true);
    }
}

/// The valid scenario on screen, or a message saying why there is none to share.
fn valid_scenario_or_say(action: &str) -> Option<Value> {
    if !FORM_VALID.with(Cell::get) {
        status(&format!(
            "Some fields are marked invalid; fix them first, then {action}."
        ));
        return None;
    }
    LAST_GOOD.with(|g| g.borrow().clone())
}

fn copy_link() {
    if valid_scenario_or_say("copy the link").is_none() {
        return;
    }
    follow_now();
    let Some(input) = dom::by_id_as::<HtmlInputElement>(ids::SHARE_LINK) else {
        return;
    };
    let link = input.value();
    let clipboard = dom::window()
        .map(|w| w.navigator())
        .and_then(|n| js_sys::Reflect::get(&n, &JsValue::from_str("clipboard")).ok())
        .filter(|c| c.is_object());
    let write = clipboard.as_ref().and_then(|c| {
        js_sys::Reflect::get(c, &JsValue::from_str("writeText"))
            .ok()
            .and_then(|f| f.dyn_into::<js_sys::Function>().ok())
    });
    let by_hand = "Select the link shown under “Link to this scenario” and copy it.";
    let promise = match (clipboard, write) {
        (Some(c), Some(f)) => f
            .call1(&c, &JsValue::from_str(&link))
            .ok()
            .and_then(|p| p.dyn_into::<js_sys::Promise>().ok()),
        _ => None,
    };
    let Some(promise) = promise else {
        input.select();
        status(by_hand);
        return;
    };
    when_settled(
        &promise,
        |_| status("Link copied."),
        move |_| {
            if let Some(i) = dom::by_id_as::<HtmlInputElement>(ids::SHARE_LINK) {
                i.select();
            }
            status(by_hand);
        },
    );
}

/// A file name from the scenario's title: letters and digits kept, the rest as dashes.
fn file_name(scenario: &Value) -> String {
    let title = scenario.get("title").and_then(Value::as_str);
    format!("{}.json", fields::name_words(title, 60))
}

fn save_file() {
    let Some(scenario) = valid_scenario_or_say("save the file") else {
        return;
    };
    let Ok(text) = serde_json::to_string_pretty(&scenario) else {
        return;
    };
    let name = file_name(&scenario);
    if dom::download(&name, "application/json", &format!("{text}\n")) {
        status(&format!(
            "Saved as {name} (in your downloads). Open it here or with `noise-budget eval`."
        ));
    } else {
        status("This browser refused to make the file.");
    }
}

fn open_file() {
    let Some(input) = dom::by_id_as::<HtmlInputElement>(ids::OPEN_FILE) else {
        return;
    };
    let Some(file) = input.files().and_then(|l| l.get(0)) else {
        return;
    };
    // Let the same file be chosen again later.
    input.set_value("");
    let name = file.name();
    clear_load_problems();
    let done = move |text: JsValue| {
        let source = format!("the file “{name}”");
        match text.as_string() {
            Some(t) => {
                load_text(&t, &source);
            }
            None => show_load_problems(
                &source,
                &[Problem {
                    path: "file".into(),
                    message: "could not be read as text".into(),
                }],
            ),
        }
    };
    let failed = |_: JsValue| {
        show_load_problems(
            "the file",
            &[Problem {
                path: "file".into(),
                message: "the browser could not read it".into(),
            }],
        );
    };
    when_settled(&file.text(), done, failed);
}

fn refresh_kept_list(select_name: Option<&str>) {
    let Some(select) = dom::by_id_as::<HtmlSelectElement>(ids::SAVED_LIST) else {
        return;
    };
    select.set_text_content(None);
    let kept = store::kept();
    for name in kept.keys() {
        if let Some(opt) = dom::new_element("option", name) {
            dom::set_attr(&opt, "value", name);
            let _ = select.append_child(&opt);
        }
    }
    if kept.is_empty() {
        if let Some(opt) = dom::new_element("option", "none kept yet") {
            dom::set_attr(&opt, "value", "");
            let _ = select.append_child(&opt);
        }
    }
    if let Some(n) = select_name {
        select.set_value(n);
    }
    let buttons = [
        dom::by_id_as::<HtmlButtonElement>(ids::LOAD_SAVED),
        dom::by_id_as::<HtmlButtonElement>(ids::FORGET_SAVED),
    ];
    for b in buttons.into_iter().flatten() {
        b.set_disabled(kept.is_empty());
    }
    select.set_disabled(kept.is_empty());
}

fn keep_scenario() {
    let Some(scenario) = valid_scenario_or_say("keep the scenario") else {
        return;
    };
    let typed = dom::by_id_as::<HtmlInputElement>(ids::SAVED_NAME)
        .map(|i| i.value().trim().to_string())
        .unwrap_or_default();
    let name = if typed.is_empty() {
        scenario
            .get("title")
            .and_then(Value::as_str)
            .map(str::trim)
            .filter(|t| !t.is_empty())
            .unwrap_or("Untitled scenario")
            .to_string()
    } else {
        typed
    };
    let replaced = store::kept().contains_key(&name);
    if store::keep(&name, scenario) {
        refresh_kept_list(Some(&name));
        status(&if replaced {
            format!("Replaced the kept scenario “{name}”.")
        } else {
            format!("Kept as “{name}” in this browser.")
        });
    } else {
        status("This browser refused to keep it (storage is off or full).");
    }
}

fn selected_kept_name() -> Option<String> {
    dom::by_id_as::<HtmlSelectElement>(ids::SAVED_LIST)
        .map(|s| s.value())
        .filter(|v| !v.is_empty())
}

fn load_kept() {
    let Some(name) = selected_kept_name() else {
        return;
    };
    clear_load_problems();
    let source = format!("the kept scenario “{name}”");
    match store::kept().get(&name) {
        Some(v) => {
            load_text(&v.to_string(), &source);
        }
        None => status(&format!("{source} is no longer kept.")),
    }
}

fn forget_kept() {
    let Some(name) = selected_kept_name() else {
        return;
    };
    if store::forget(&name) {
        refresh_kept_list(None);
        status(&format!("Forgot “{name}”."));
    }
}
