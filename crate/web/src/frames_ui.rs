//! "Measure a camera": choose or drop frame files, say what each one is, read them one at a
//! time into the engine's stack accumulators, and show the engine's characterization (figures,
//! diagnostics, the photon transfer curve and the variance fit) and hand its sensor keys to the
//! scenario form.
//!
//! It computes no statistic and fits nothing (the engine's `frames` and `ptc` do); it only
//! groups the table's rows into stacks, scales the engine's plot series to an SVG, and formats.
//! Frames are read in this page, one file at a time with a pause for the screen between files
//! (not in a Web Worker), and never leave it: nothing here makes a request. No file is held
//! after its statistics are taken. Nothing here may panic on a file or on what a user types.

use std::cell::{Cell, RefCell};
use std::fmt::Write as _;

use engine::frames::{self, Format, RawGeometry};
use engine::ptc::{
    self, Characterization, CurveSeries, FrameKind, Roi, StackAccumulator, StackSpec, StackStats,
};
use serde_json::Value;
use wasm_bindgen::closure::Closure;
use wasm_bindgen::{JsCast, JsValue};
use web_sys::{DragEvent, Element, Event, File, FileList, HtmlInputElement, HtmlSelectElement};

use crate::display::{self, Style};
use crate::dom;

/// Samples of the model curve on the photon transfer plot.
const MODEL_SAMPLES: usize = 64;

thread_local! {
    /// The chosen frame files, in the order of the table's rows.
    static FILES: RefCell<Vec<File>> = const { RefCell::new(Vec::new()) };
    /// The region of interest from a manifest, if one gave it.
    static ROI: Cell<Option<Roi>> = const { Cell::new(None) };
    /// The number of the current analysis; a new run or a cancel changes it, so that callbacks
    /// of an older run do nothing.
    static RUN: Cell<u32> = const { Cell::new(0) };
    /// The analysis in progress.
    static JOB: RefCell<Option<Job>> = const { RefCell::new(None) };
    /// The last result shown.
    static RESULT: RefCell<Option<Characterization>> = const { RefCell::new(None) };
}

/// One stack to read: what its frames share and the table rows holding them.
struct Planned {
    spec: StackSpec,
    rows: Vec<usize>,
}

/// An analysis in progress: which file is next, the open stack, the stacks done.
struct Job {
    run: u32,
    stacks: Vec<Planned>,
    stack_i: usize,
    file_i: usize,
    acc: Option<StackAccumulator>,
    stack_ok: bool,
    stats: Vec<StackStats>,
    messages: Vec<String>,
    raw: Option<RawGeometry>,
    roi: Option<Roi>,
    done: u32,
}

/// Wire the section's controls; does nothing on a page without it.
pub fn mount() {
    if dom::by_id("measure").is_none() {
        return;
    }
    on_id("measure-files", "change", |_| {
        if let Some(input) = dom::by_id_as::<HtmlInputElement>("measure-files") {
            if let Some(list) = input.files() {
                add_files(&list);
            }
            input.set_value("");
        }
    });
    on_id("measure-drop", "dragover", |e| {
        e.prevent_default();
        if let Some(el) = dom::by_id("measure-drop") {
            dom::set_class(&el, "dragging", true);
        }
    });
    on_id("measure-drop", "dragleave", |_| {
        if let Some(el) = dom::by_id("measure-drop") {
            dom::set_class(&el, "dragging", false);
        }
    });
    on_id("measure-drop", "drop", |e| {
        e.prevent_default();
        if let Some(el) = dom::by_id("measure-drop") {
            dom::set_class(&el, "dragging", false);
        }
        let list = e
            .dyn_into::<DragEvent>()
            .ok()
            .and_then(|d| d.data_transfer())
            .and_then(|t| t.files());
        if let Some(list) = list {
            add_files(&list);
        }
    });
    on_id("measure-clear", "click", |_| clear_files());
    on_id("measure-run", "click", |_| start_run());
    on_id("measure-cancel", "click", |_| cancel());
    on_id("measure-use", "click", |_| use_sensor());
}

fn on_id(id: &'static str, kind: &str, handler: impl FnMut(Event) + 'static) {
    if let Some(el) = dom::by_id(id) {
        let cb = Closure::<dyn FnMut(Event)>::new(handler);
        let _ = el.add_event_listener_with_callback(kind, cb.as_ref().unchecked_ref());
        // The listener lives as long as the page.
        cb.forget();
    }
}

/// Run `ok` or `failed` once when a promise settles.
fn when_settled(
    promise: &js_sys::Promise,
    ok: impl FnOnce(JsValue) + 'static,
    failed: impl FnOnce(JsValue) + 'static,
) {
    let ok = Closure::once(ok);
    let failed = Closure::once(failed);
    let _ = promise.then2(&ok, &failed);
    // Each runs at most once, after this function returns.
    ok.forget();
    failed.forget();
}

/// Run `f` after the browser has had a turn (painting, a click on Cancel).
fn later(f: impl FnOnce() + 'static) {
    let cb = Closure::once_into_js(f);
    if let Some(w) = dom::window() {
        let _ = w.set_timeout_with_callback_and_timeout_and_arguments_0(cb.unchecked_ref(), 0);
    }
}

fn status(text: &str) {
    dom::set_text_of("measure-status", text);
}

fn show_problems(lines: &[String]) {
    let Some(list) = dom::by_id("measure-problems") else {
        return;
    };
    dom::clear(&list);
    for l in lines {
        if let Some(li) = dom::new_element("li", l) {
            let _ = list.append_child(&li);
        }
    }
}

// ---- the file table ---------------------------------------------------------------------

fn is_manifest(f: &File) -> bool {
    let name = f.name().to_ascii_lowercase();
    name.ends_with(".json") || f.type_() == "application/json"
}

fn add_files(list: &FileList) {
    show_problems(&[]);
    let mut manifests = Vec::new();
    for i in 0..list.length() {
        let Some(f) = list.get(i) else { continue };
        if is_manifest(&f) {
            manifests.push(f);
        } else {
            add_frame_file(f);
        }
    }
    let count = FILES.with(|fs| fs.borrow().len());
    if let Some(t) = dom::by_id("measure-table") {
        dom::set_hidden(&t, count == 0);
    }
    status(&format!(
        "{count} frame file{} listed. Say what each is, then Analyse.",
        if count == 1 { "" } else { "s" }
    ));
    for m in manifests {
        let name = m.name();
        let failed_name = name.clone();
        when_settled(
            &m.text(),
            move |v| apply_manifest(&name, &v.as_string().unwrap_or_default()),
            move |_| show_problems(&[format!("{failed_name}: the browser could not read it")]),
        );
    }
}

fn add_frame_file(f: File) {
    let Some(body) = dom::by_id("measure-rows") else {
        return;
    };
    let name = f.name();
    // A file chosen again under the same name replaces the earlier one.
    let existing = FILES.with(|fs| fs.borrow().iter().position(|g| g.name() == name));
    if let Some(i) = existing {
        FILES.with(|fs| {
            if let Some(slot) = fs.borrow_mut().get_mut(i) {
                *slot = f;
            }
        });
        return;
    }
    let Some(tr) = dom::new_element("tr", "") else {
        return;
    };
    dom::set_attr(&tr, "data-file", &name);
    let cell = |text: &str, class: &str| {
        let td = dom::new_element("td", text)?;
        dom::set_attr(&td, "class", class);
        let _ = tr.append_child(&td);
        Some(td)
    };
    let _ = cell(&name, "measure-name");
    let _ = cell("not read yet", "measure-size");
    if let Some(td) = cell("", "") {
        if let Some(sel) = dom::new_element("select", "") {
            dom::set_attr(&sel, "class", "measure-kind");
            dom::set_attr(&sel, "aria-label", &format!("kind of {name}"));
            for (value, label) in [("", "choose"), ("dark", "dark"), ("flat", "flat")] {
                if let Some(o) = dom::new_element("option", label) {
                    dom::set_attr(&o, "value", value);
                    let _ = sel.append_child(&o);
                }
            }
            let _ = td.append_child(&sel);
        }
    }
    for (class, what) in [
        ("measure-exposure", "exposure time in seconds"),
        ("measure-level", "level label"),
        ("measure-photons", "photons per pixel"),
    ] {
        if let Some(td) = cell("", "") {
            if let Some(input) = dom::new_element("input", "") {
                dom::set_attr(&input, "class", class);
                dom::set_attr(&input, "aria-label", &format!("{what} of {name}"));
                dom::set_attr(&input, "autocomplete", "off");
                let _ = td.append_child(&input);
            }
        }
    }
    let _ = body.append_child(&tr);
    FILES.with(|fs| fs.borrow_mut().push(f));
}

fn clear_files() {
    cancel_quietly();
    FILES.with(|fs| fs.borrow_mut().clear());
    ROI.with(|r| r.set(None));
    if let Some(body) = dom::by_id("measure-rows") {
        dom::clear(&body);
    }
    if let Some(t) = dom::by_id("measure-table") {
        dom::set_hidden(&t, true);
    }
    show_problems(&[]);
    status("The list is empty.");
}

fn rows() -> Vec<Element> {
    dom::by_id("measure-rows").map_or_else(Vec::new, |b| dom::all(&b, "tr"))
}

fn row_input(row: &Element, class: &str) -> Option<HtmlInputElement> {
    row.query_selector(&format!("input.{class}"))
        .ok()
        .flatten()
        .and_then(|e| e.dyn_into::<HtmlInputElement>().ok())
}

fn row_kind(row: &Element) -> Option<HtmlSelectElement> {
    row.query_selector("select.measure-kind")
        .ok()
        .flatten()
        .and_then(|e| e.dyn_into::<HtmlSelectElement>().ok())
}

fn text_of(v: &Value) -> String {
    match v {
        Value::String(s) => s.clone(),
        Value::Number(n) => n.to_string(),
        _ => String::new(),
    }
}

/// Fill the table from a manifest: each entry's file is matched by its name.
fn apply_manifest(manifest_name: &str, text: &str) {
    let v: Value = match serde_json::from_str(text) {
        Ok(v) => v,
        Err(e) => {
            show_problems(&[format!("{manifest_name}: not valid JSON: {e}")]);
            return;
        }
    };
    let mut problems = Vec::new();
    let rows = rows();
    let frames = v.get("frames").and_then(Value::as_array);
    let Some(frames) = frames else {
        show_problems(&[format!("{manifest_name}: no \"frames\" list")]);
        return;
    };
    let mut matched = 0;
    for (i, entry) in frames.iter().enumerate() {
        let path = entry.get("path").map(text_of).unwrap_or_default();
        let base = path.rsplit(['/', '\\']).next().unwrap_or_default();
        let row = rows
            .iter()
            .find(|r| r.get_attribute("data-file").as_deref() == Some(base));
        let Some(row) = row else {
            problems.push(format!(
                "{manifest_name}: frames[{i}] names \"{path}\", which is not among the chosen files"
            ));
            continue;
        };
        matched += 1;
        if let (Some(sel), Some(kind)) = (row_kind(row), entry.get("kind")) {
            sel.set_value(&text_of(kind));
        }
        for (key, class) in [
            ("exposure_time_s", "measure-exposure"),
            ("level", "measure-level"),
            ("photons_per_pixel", "measure-photons"),
        ] {
            if let Some(input) = row_input(row, class) {
                input.set_value(&entry.get(key).map(text_of).unwrap_or_default());
            }
        }
        if let Some(raw) = entry.get("raw") {
            fill_raw(raw);
        }
    }
    if let Some(raw) = v.get("raw") {
        fill_raw(raw);
    }
    let roi = v.get("roi").and_then(|r| {
        let get = |k: &str| r.get(k)?.as_u64().and_then(|x| u32::try_from(x).ok());
        Some(Roi {
            x: get("x")?,
            y: get("y")?,
            width: get("width")?,
            height: get("height")?,
        })
    });
    if v.get("roi").is_some() && roi.is_none() {
        problems.push(format!(
            "{manifest_name}: roi needs whole numbers x, y, width and height"
        ));
    }
    ROI.with(|r| r.set(roi));
    show_problems(&problems);
    status(&format!(
        "{manifest_name} described {matched} of the listed files{}.",
        if roi.is_some() {
            ", with a region of interest"
        } else {
            ""
        }
    ));
}

fn fill_raw(raw: &Value) {
    for (key, id) in [("width", 0), ("height", 1), ("bits", 2)] {
        let input = match id {
            0 => dom::by_id_as::<HtmlInputElement>("measure-raw-width"),
            1 => dom::by_id_as::<HtmlInputElement>("measure-raw-height"),
            _ => dom::by_id_as::<HtmlInputElement>("measure-raw-bits"),
        };
        if let (Some(input), Some(v)) = (input, raw.get(key)) {
            input.set_value(&text_of(v));
        }
    }
}

// ---- planning a run -------------------------------------------------------------------------

fn input_text(id: &'static str) -> String {
    dom::by_id_as::<HtmlInputElement>(id)
        .map(|i| i.value().trim().to_string())
        .unwrap_or_default()
}

/// The raw geometry typed in the section: none when all three are empty.
fn raw_geometry(problems: &mut Vec<String>) -> Option<RawGeometry> {
    let w = input_text("measure-raw-width");
    let h = input_text("measure-raw-height");
    let b = input_text("measure-raw-bits");
    if w.is_empty() && h.is_empty() && b.is_empty() {
        return None;
    }
    let width = w.parse::<u32>().ok().filter(|x| *x > 0);
    let height = h.parse::<u32>().ok().filter(|x| *x > 0);
    let bits = b.parse::<u8>().ok().filter(|x| (1..=16).contains(x));
    match (width, height, bits) {
        (Some(width), Some(height), Some(bits)) => Some(RawGeometry {
            width,
            height,
            bits,
        }),
        _ => {
            problems.push(
                "raw files: width and height must be whole numbers from 1, bits from 1 to 16"
                    .into(),
            );
            None
        }
    }
}

/// Group the table's rows into stacks (same kind, exposure time and level label), as the
/// command-line manifest does; every problem is reported, each naming its file.
fn plan(problems: &mut Vec<String>) -> Vec<Planned> {
    let mut stacks: Vec<Planned> = Vec::new();
    for (i, row) in rows().iter().enumerate() {
        let name = row.get_attribute("data-file").unwrap_or_default();
        let kind = match row_kind(row).map(|s| s.value()).as_deref() {
            Some("dark") => Some(FrameKind::Dark),
            Some("flat") => Some(FrameKind::Flat),
            _ => {
                problems.push(format!("{name}: choose its kind, dark or flat"));
                None
            }
        };
        let value = |class| row_input(row, class).map(|x| x.value().trim().to_string());
        let exposure_text = value("measure-exposure").unwrap_or_default();
        let exposure = exposure_text
            .parse::<f64>()
            .ok()
            .filter(|x| x.is_finite() && *x > 0.0);
        if exposure.is_none() {
            problems.push(format!(
                "{name}: exposure time must be a number of seconds > 0, got \"{exposure_text}\""
            ));
        }
        let level = value("measure-level").filter(|l| !l.is_empty());
        let photons_text = value("measure-photons").unwrap_or_default();
        let photons = if photons_text.is_empty() {
            None
        } else {
            let p = photons_text
                .parse::<f64>()
                .ok()
                .filter(|x| x.is_finite() && *x >= 0.0);
            if p.is_none() {
                problems.push(format!(
                    "{name}: photons per pixel must be a number ≥ 0, got \"{photons_text}\""
                ));
            }
            if kind == Some(FrameKind::Dark) {
                problems.push(format!(
                    "{name}: photons per pixel are only for flat frames"
                ));
            }
            p
        };
        let (Some(kind), Some(exposure_time_s)) = (kind, exposure) else {
            continue;
        };
        let same = stacks.iter_mut().find(|s| {
            s.spec.kind == kind
                && s.spec.exposure_time_s == exposure_time_s
                && s.spec.level == level
        });
        match same {
            Some(s) => {
                if s.spec.photons_per_pixel != photons {
                    problems.push(format!(
                        "{name}: photons per pixel differ from another frame of its stack"
                    ));
                }
                s.rows.push(i);
            }
            None => stacks.push(Planned {
                spec: StackSpec {
                    kind,
                    exposure_time_s,
                    level,
                    photons_per_pixel: photons,
                    frames: 0,
                },
                rows: vec![i],
            }),
        }
    }
    for s in &mut stacks {
        s.spec.frames = u32::try_from(s.rows.len()).unwrap_or(u32::MAX);
        if s.rows.len() < 2 {
            let name = s
                .rows
                .first()
                .and_then(|i| rows().get(*i).and_then(|r| r.get_attribute("data-file")))
                .unwrap_or_default();
            problems.push(format!(
                "{name}: the only frame of its stack ({} at {} s): a stack needs two or more \
                 frames with the same kind, exposure and level",
                s.spec.kind.as_str(),
                display::full(s.spec.exposure_time_s)
            ));
        }
    }
    stacks
}

// ---- running ------------------------------------------------------------------------------

fn set_running(running: bool, total: u32) {
    if let Some(b) = dom::by_id("measure-cancel") {
        dom::set_hidden(&b, !running);
    }
    if let Some(b) = dom::by_id("measure-run") {
        if running {
            dom::set_attr(&b, "disabled", "");
        } else {
            dom::remove_attr(&b, "disabled");
        }
    }
    if let Some(p) = dom::by_id("measure-progress") {
        dom::set_hidden(&p, !running);
        dom::set_attr(&p, "max", &total.max(1).to_string());
        dom::set_attr(&p, "value", "0");
    }
    if let Some(s) = dom::by_id("measure") {
        dom::set_attr(&s, "aria-busy", if running { "true" } else { "false" });
    }
}

fn start_run() {
    show_problems(&[]);
    let mut problems = Vec::new();
    let raw = raw_geometry(&mut problems);
    if FILES.with(|fs| fs.borrow().is_empty()) {
        problems.push("choose or drop the frame files first".into());
    }
    let stacks = plan(&mut problems);
    if !problems.is_empty() {
        show_problems(&problems);
        status("Nothing was analysed: see the problems below.");
        return;
    }
    let run = RUN.with(|r| {
        r.set(r.get().wrapping_add(1));
        r.get()
    });
    let total: usize = stacks.iter().map(|s| s.rows.len()).sum();
    let total = u32::try_from(total).unwrap_or(u32::MAX);
    JOB.with(|j| {
        *j.borrow_mut() = Some(Job {
            run,
            stacks,
            stack_i: 0,
            file_i: 0,
            acc: None,
            stack_ok: true,
            stats: Vec::new(),
            messages: Vec::new(),
            raw,
            roi: ROI.with(Cell::get),
            done: 0,
        });
    });
    if let Some(r) = dom::by_id("measure-results") {
        dom::set_hidden(&r, true);
    }
    set_running(true, total);
    status(&format!("Reading {total} frame files on this computer…"));
    step(run);
}

fn cancel_quietly() {
    RUN.with(|r| r.set(r.get().wrapping_add(1)));
    JOB.with(|j| *j.borrow_mut() = None);
    set_running(false, 1);
}

fn cancel() {
    let was_running = JOB.with(|j| j.borrow().is_some());
    cancel_quietly();
    if was_running {
        status("Analysis cancelled; nothing was kept.");
    }
}

fn current(run: u32) -> bool {
    RUN.with(Cell::get) == run && JOB.with(|j| j.borrow().as_ref().is_some_and(|j| j.run == run))
}

/// What to do next in a run: read this file, or the run is over.
enum Next {
    Read(usize),
    Finished,
}

/// Close finished stacks, open the next one, and say which row to read next.
fn advance(job: &mut Job) -> Next {
    loop {
        let Some(stack) = job.stacks.get(job.stack_i) else {
            return Next::Finished;
        };
        if job.file_i == 0 && job.acc.is_none() && job.stack_ok {
            match StackAccumulator::new(stack.spec.clone(), job.roi) {
                Ok(a) => job.acc = Some(a),
                Err(e) => {
                    job.messages.push(format!(
                        "the {} stack at {} s: {e}",
                        stack.spec.kind.as_str(),
                        display::full(stack.spec.exposure_time_s)
                    ));
                    job.stack_ok = false;
                }
            }
        }
        if let Some(row) = stack.rows.get(job.file_i) {
            return Next::Read(*row);
        }
        if let (true, Some(acc)) = (job.stack_ok, job.acc.take()) {
            match acc.finish() {
                Ok(s) => job.stats.push(s),
                Err(e) => job.messages.push(format!(
                    "the {} stack at {} s: {e}",
                    stack.spec.kind.as_str(),
                    display::full(stack.spec.exposure_time_s)
                )),
            }
        }
        job.acc = None;
        job.stack_ok = true;
        job.stack_i += 1;
        job.file_i = 0;
    }
}

fn step(run: u32) {
    if !current(run) {
        return;
    }
    let next = JOB.with(|j| j.borrow_mut().as_mut().map(advance));
    match next {
        Some(Next::Read(row)) => {
            let Some(file) = FILES.with(|fs| fs.borrow().get(row).cloned()) else {
                return;
            };
            let name = file.name();
            when_settled(
                &file.array_buffer(),
                move |buf| {
                    let bytes = js_sys::Uint8Array::new(&buf).to_vec();
                    take_file(run, row, &name, &bytes);
                },
                move |_| {
                    let msg = format!("{}: the browser could not read the file", file.name());
                    take_message(run, msg);
                },
            );
        }
        Some(Next::Finished) => finish(run),
        None => {}
    }
}

fn take_message(run: u32, msg: String) {
    if !current(run) {
        return;
    }
    JOB.with(|j| {
        if let Some(job) = j.borrow_mut().as_mut() {
            job.messages.push(msg);
            job.stack_ok = false;
            job.acc = None;
            job.file_i += 1;
            job.done += 1;
        }
    });
    progressed(run);
}

/// Decode one file's bytes and push the frame into the open stack; the bytes and the frame
/// are dropped here (the accumulator keeps at most what it needs).
fn take_file(run: u32, row: usize, name: &str, bytes: &[u8]) {
    if !current(run) {
        return;
    }
    let raw = JOB.with(|j| j.borrow().as_ref().and_then(|j| j.raw));
    let decoded = match frames::sniff(bytes) {
        Some(Format::Pgm | Format::Png | Format::Tiff) => frames::decode(bytes, None),
        _ => frames::decode(bytes, raw),
    };
    let size_text = match &decoded {
        Ok(f) => format!("{} × {}, {}-bit", f.width(), f.height(), f.sample_bits()),
        Err(_) => "unreadable".to_string(),
    };
    if let Some(cell) = rows()
        .get(row)
        .and_then(|r| r.query_selector(".measure-size").ok().flatten())
    {
        cell.set_text_content(Some(&size_text));
    }
    JOB.with(|j| {
        let mut j = j.borrow_mut();
        let Some(job) = j.as_mut() else { return };
        match decoded {
            Ok(frame) => {
                if let (true, Some(acc)) = (job.stack_ok, job.acc.as_mut()) {
                    if let Err(e) = acc.push(frame) {
                        job.messages.push(format!("{name}: {e}"));
                        job.stack_ok = false;
                        job.acc = None;
                    }
                }
            }
            Err(e) => {
                let hint = if raw.is_none() && matches!(e, frames::FrameError::UnknownFormat) {
                    " (for a raw file, give its width, height and bits)"
                } else {
                    ""
                };
                job.messages.push(format!("{name}: {e}{hint}"));
                job.stack_ok = false;
                job.acc = None;
            }
        }
        job.file_i += 1;
        job.done += 1;
    });
    progressed(run);
}

fn progressed(run: u32) {
    let done = JOB.with(|j| j.borrow().as_ref().map_or(0, |j| j.done));
    if let Some(p) = dom::by_id("measure-progress") {
        dom::set_attr(&p, "value", &done.to_string());
    }
    // Let the page paint and take a click on Cancel before the next file.
    later(move || step(run));
}

fn finish(run: u32) {
    let Some(job) = JOB.with(|j| j.borrow_mut().take()) else {
        return;
    };
    if job.run != run {
        return;
    }
    set_running(false, 1);
    if !job.messages.is_empty() {
        show_problems(&job.messages);
        status("The frames could not be analysed: see the problems below.");
        return;
    }
    match ptc::analyse(&job.stats) {
        Ok(c) => {
            show_result(&c);
            status(&format!(
                "Analysed {} frame files in {} stacks, on this computer.",
                job.done,
                job.stats.len()
            ));
            RESULT.with(|r| *r.borrow_mut() = Some(c));
        }
        Err(e) => {
            show_problems(&[format!("analysis: {e}")]);
            status("The frames could not be analysed: see the problems below.");
        }
    }
}

// ---- results ------------------------------------------------------------------------------

fn figure_row(
    list: &Element,
    label: &str,
    key: &str,
    value: Option<f64>,
    unit: &str,
    u: Option<f64>,
    note: &str,
) {
    let Some(div) = dom::new_element("div", "") else {
        return;
    };
    if let Some(dt) = dom::new_element("dt", label) {
        let _ = div.append_child(&dt);
    }
    let Some(dd) = dom::new_element("dd", "") else {
        return;
    };
    match value {
        Some(x) => {
            let mut text = display::rounded(x, Style::Number);
            if let Some(u) = u {
                let _ = write!(text, " ± {}", display::rounded(u, Style::Number));
            }
            let _ = write!(text, " {unit}{note}");
            if let Some(span) = dom::new_element("span", &text) {
                dom::set_attr(&span, "data-measure", key);
                dom::set_attr(&span, "data-value", &display::full(x));
                let _ = dd.append_child(&span);
            }
        }
        None => {
            if let Some(span) = dom::new_element("span", "not measured by these frames") {
                dom::set_attr(&span, "data-measure", key);
                dom::set_attr(&span, "data-value", "null");
                let _ = dd.append_child(&span);
            }
        }
    }
    let _ = div.append_child(&dd);
    let _ = list.append_child(&div);
}

fn show_result(c: &Characterization) {
    let s = &c.sensor;
    let f = &c.fit;
    if let Some(list) = dom::by_id("measure-figures") {
        dom::clear(&list);
        figure_row(
            &list,
            "system gain K",
            "system_gain_dn_per_e",
            Some(s.system_gain_dn_per_e),
            "DN/e⁻",
            f.system_gain.standard_uncertainty_dn_per_e,
            "",
        );
        let bound = if f.read_noise.upper_bound_only {
            " (an upper bound: the dark noise is below what the ADC resolves)"
        } else {
            ""
        };
        figure_row(
            &list,
            "read noise",
            "read_noise_e",
            s.read_noise_e,
            "e⁻ rms",
            f.read_noise.standard_uncertainty_e,
            bound,
        );
        figure_row(
            &list,
            "full well (saturation capacity)",
            "full_well_e",
            s.full_well_e,
            "e⁻",
            f.saturation.capacity_uncertainty_e,
            "",
        );
        figure_row(
            &list,
            "dark current",
            "dark_current_e_per_s",
            s.dark_current_e_per_s,
            "e⁻/s",
            f.dark_current
                .as_ref()
                .and_then(|d| d.standard_uncertainty_e_per_s),
            "",
        );
        figure_row(
            &list,
            "DSNU",
            "dsnu_e",
            s.dsnu_e,
            "e⁻ rms",
            f.nonuniformity.dsnu_uncertainty_e,
            "",
        );
        figure_row(
            &list,
            "PRNU",
            "prnu_percent",
            s.prnu_percent,
            "%",
            f.nonuniformity.prnu_uncertainty_percent,
            "",
        );
        figure_row(
            &list,
            "quantum efficiency",
            "quantum_efficiency",
            s.quantum_efficiency,
            "",
            f.responsivity
                .as_ref()
                .and_then(|r| r.quantum_efficiency_uncertainty),
            "",
        );
    }
    if let Some(list) = dom::by_id("measure-diagnostics") {
        dom::clear(&list);
        let used = f.points.iter().filter(|p| p.used_in_gain_fit).count();
        let flats = f
            .points
            .iter()
            .filter(|p| p.kind == FrameKind::Flat)
            .count();
        let mut lines = vec![format!(
            "the gain fit used {used} of {flats} flat levels; {} pixels per frame were analysed",
            f.pixels_per_frame
        )];
        lines.extend(f.diagnostics.iter().map(|d| d.message.clone()));
        for l in lines {
            if let Some(li) = dom::new_element("li", &l) {
                let _ = list.append_child(&li);
            }
        }
    }
    let series = ptc::curve_series(c, MODEL_SAMPLES);
    if let Some(el) = dom::by_id("measure-ptc") {
        el.set_inner_html(&ptc_svg(&series, s.system_gain_dn_per_e));
    }
    if let Some(el) = dom::by_id("measure-fit") {
        el.set_inner_html(&fit_svg(&series));
    }
    if let Some(r) = dom::by_id("measure-results") {
        dom::set_hidden(&r, false);
    }
}

/// Put the measured sensor keys into the scenario form's fields (named by their scenario key
/// paths); the form then recomputes as after any edit, and the engine judges the result.
fn use_sensor() {
    let Some(measured) = RESULT.with(|r| {
        r.borrow()
            .as_ref()
            .and_then(|c| serde_json::to_value(&c.sensor).ok())
    }) else {
        status("Analyse frames first.");
        return;
    };
    let Some(form_el) = dom::by_id("scenario-form") else {
        return;
    };
    let mut set = Vec::new();
    let mut last = None;
    for (key, v) in measured.as_object().into_iter().flatten() {
        let Some(x) = v.as_f64() else { continue };
        let field = form_el
            .query_selector(&format!("[name=\"sensor.{key}\"]"))
            .ok()
            .flatten()
            .and_then(|e| e.dyn_into::<HtmlInputElement>().ok());
        if let Some(input) = field {
            input.set_value(&display::full(x));
            set.push(key.clone());
            last = Some(input);
        }
    }
    // One input event, as a person's edit makes: the form reads every field again.
    if let Some(input) = last {
        let init = web_sys::EventInit::new();
        init.set_bubbles(true);
        if let Ok(e) = Event::new_with_event_init_dict("input", &init) {
            let _ = input.dispatch_event(&e);
        }
    }
    status(&format!(
        "The scenario's sensor now has the measured {}.",
        set.join(", ")
    ));
}

// ---- plots ----------------------------------------------------------------------------------

/// The drawing's size and margins, in SVG user units.
const W: f64 = 1000.0;
const H: f64 = 560.0;
const LEFT: f64 = 130.0;
const RIGHT: f64 = 30.0;
const TOP: f64 = 30.0;
const BOTTOM: f64 = 90.0;

fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// A whole number of user units (integer formatting keeps float formatting out of the wasm).
#[allow(clippy::cast_possible_truncation)] // clamped to the drawing's range first
fn px(x: f64) -> i32 {
    if x.is_finite() {
        x.clamp(-10_000.0, 10_000.0).round() as i32
    } else {
        0
    }
}

/// One axis: its range in data units and whether it is logarithmic.
#[derive(Clone, Copy)]
struct Axis {
    lo: f64,
    hi: f64,
    log: bool,
}

impl Axis {
    fn new(values: impl Iterator<Item = f64>, log: bool, zero: bool) -> Self {
        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
        for v in values.filter(|v| v.is_finite() && (!log || *v > 0.0)) {
            lo = lo.min(v);
            hi = hi.max(v);
        }
        if !lo.is_finite() {
            (lo, hi) = if log { (1.0, 10.0) } else { (0.0, 1.0) };
        }
        if log {
            lo = 10f64.powf(lo.log10().floor());
            hi = 10f64.powf(hi.log10().ceil());
            if hi <= lo {
                hi = lo * 10.0;
            }
        } else {
            if zero {
                lo = lo.min(0.0);
                hi = hi.max(0.0);
            }
            let pad = if hi > lo { (hi - lo) * 0.05 } else { 1.0 };
            lo -= pad;
            hi += pad;
        }
        Axis { lo, hi, log }
    }

    fn fraction(&self, v: f64) -> f64 {
        if self.log {
            (v.max(f64::MIN_POSITIVE).log10() - self.lo.log10())
                / (self.hi.log10() - self.lo.log10())
        } else {
            (v - self.lo) / (self.hi - self.lo)
        }
    }

    fn ticks(&self) -> Vec<f64> {
        if self.log {
            let (a, b) = (self.lo.log10().round(), self.hi.log10().round());
            let mut t = Vec::new();
            let mut e = a;
            while e <= b && t.len() < 20 {
                t.push(10f64.powf(e));
                e += 1.0;
            }
            t
        } else {
            let span = self.hi - self.lo;
            let raw = span / 5.0;
            let mag = 10f64.powf(raw.log10().floor());
            let step = [1.0, 2.0, 5.0, 10.0]
                .iter()
                .map(|m| m * mag)
                .find(|s| span / s <= 6.0)
                .unwrap_or(mag * 10.0);
            let mut t = Vec::new();
            let mut v = (self.lo / step).ceil() * step;
            while v <= self.hi && t.len() < 20 {
                t.push(if v.abs() < step * 1e-9 { 0.0 } else { v });
                v += step;
            }
            t
        }
    }
}

struct Plot {
    x: Axis,
    y: Axis,
    height: f64,
}

impl Plot {
    fn sx(&self, v: f64) -> i32 {
        px(LEFT + self.x.fraction(v) * (W - LEFT - RIGHT))
    }
    fn sy(&self, v: f64) -> i32 {
        px(self.height - BOTTOM - self.y.fraction(v) * (self.height - TOP - BOTTOM))
    }
}

fn open_svg(out: &mut String, height: f64, id: &str, title: &str, desc: &str) {
    let _ = write!(
        out,
        "<svg xmlns=\"http://www.w3.org/2000/svg\" viewBox=\"0 0 {} {}\" role=\"img\" \
         aria-labelledby=\"{id}-title {id}-desc\"><title id=\"{id}-title\">{}</title>\
         <desc id=\"{id}-desc\">{}</desc>",
        px(W),
        px(height),
        esc(title),
        esc(desc)
    );
}

fn axes(out: &mut String, f: &Plot, xlabel: &str, ylabel: &str) {
    let (x0, x1) = (px(LEFT), px(W - RIGHT));
    let (y0, y1) = (px(f.height - BOTTOM), px(TOP));
    for t in f.x.ticks() {
        let x = f.sx(t);
        let _ = write!(
            out,
            "<line class=\"grid\" x1=\"{x}\" y1=\"{y0}\" x2=\"{x}\" y2=\"{y1}\"/>\
             <text x=\"{x}\" y=\"{}\" text-anchor=\"middle\">{}</text>",
            y0 + 30,
            esc(&display::rounded(t, Style::Number))
        );
    }
    for t in f.y.ticks() {
        let y = f.sy(t);
        let _ = write!(
            out,
            "<line class=\"grid\" x1=\"{x0}\" y1=\"{y}\" x2=\"{x1}\" y2=\"{y}\"/>\
             <text x=\"{}\" y=\"{}\" text-anchor=\"end\">{}</text>",
            x0 - 10,
            y + 7,
            esc(&display::rounded(t, Style::Number))
        );
    }
    let _ = write!(
        out,
        "<polyline class=\"axis\" points=\"{x0},{y1} {x0},{y0} {x1},{y0}\"/>\
         <text x=\"{}\" y=\"{}\" text-anchor=\"middle\">{}</text>\
         <text x=\"24\" y=\"{}\" text-anchor=\"middle\" transform=\"rotate(-90 24 {})\">{}</text>",
        (x0 + x1) / 2,
        px(f.height - 20.0),
        esc(xlabel),
        (y0 + y1) / 2,
        (y0 + y1) / 2,
        esc(ylabel)
    );
}

fn polyline(out: &mut String, f: &Plot, pts: &[(f64, f64)], class: &str, dashed: bool) {
    if pts.len() < 2 {
        return;
    }
    let mut p = String::new();
    for (x, y) in pts {
        let _ = write!(p, "{},{} ", f.sx(*x), f.sy(*y));
    }
    let dash = if dashed {
        " stroke-dasharray=\"12 8\""
    } else {
        ""
    };
    let _ = write!(
        out,
        "<polyline class=\"{class}\"{dash} points=\"{}\"/>",
        p.trim_end()
    );
}

fn marks(out: &mut String, f: &Plot, pts: &[(f64, f64, bool)]) {
    for (x, y, used) in pts {
        let class = if *used { "used" } else { "unused" };
        let _ = write!(
            out,
            "<circle class=\"{class}\" cx=\"{}\" cy=\"{}\" r=\"8\"/>",
            f.sx(*x),
            f.sy(*y)
        );
    }
}

fn legend(out: &mut String, items: &[&str]) {
    for (i, text) in items.iter().enumerate() {
        let y = px(TOP + 10.0) + 30 * i32::try_from(i).unwrap_or(0);
        let _ = write!(
            out,
            "<text x=\"{}\" y=\"{y}\">{}</text>",
            px(LEFT + 20.0),
            esc(text)
        );
    }
}

fn ptc_svg(s: &CurveSeries, k: f64) -> String {
    let used = s.points.iter().filter(|p| p.used_in_fit).count();
    let xs = s.points.iter().map(|p| p.signal_dn);
    let ys = s
        .points
        .iter()
        .map(|p| p.noise_dn)
        .chain(s.model.iter().map(|m| m.1))
        .chain(std::iter::once(s.dark_noise_dn));
    let f = Plot {
        x: Axis::new(xs, true, false),
        y: Axis::new(ys, true, false),
        height: H,
    };
    let mut out = String::new();
    open_svg(
        &mut out,
        H,
        "measure-ptc-svg",
        "Photon transfer curve",
        &format!(
            "Temporal noise against signal above dark, both in DN, on logarithmic axes: {} flat \
             levels, of which the {used} drawn filled were used by the gain fit; the line is \
             the fitted model with K = {} DN/e⁻, the dashed line the dark noise.",
            s.points.len(),
            display::rounded(k, Style::Number)
        ),
    );
    axes(
        &mut out,
        &f,
        "signal above dark, DN",
        "temporal noise, DN rms",
    );
    if s.dark_noise_dn > 0.0 {
        polyline(
            &mut out,
            &f,
            &[(f.x.lo, s.dark_noise_dn), (f.x.hi, s.dark_noise_dn)],
            "model",
            true,
        );
    }
    polyline(&mut out, &f, &s.model, "model", false);
    let pts: Vec<(f64, f64, bool)> = s
        .points
        .iter()
        .map(|p| (p.signal_dn, p.noise_dn, p.used_in_fit))
        .collect();
    marks(&mut out, &f, &pts);
    legend(
        &mut out,
        &[
            "● used by the fit   ○ not used",
            "— fitted model   - - dark noise",
        ],
    );
    out.push_str("</svg>");
    out
}

fn fit_svg(s: &CurveSeries) -> String {
    let used: Vec<_> = s.points.iter().filter(|p| p.used_in_fit).collect();
    let f = Plot {
        x: Axis::new(s.points.iter().map(|p| p.signal_dn), false, true),
        y: Axis::new(
            s.points
                .iter()
                .map(|p| p.variance_above_dark_dn2)
                .chain(s.fit_line.iter().map(|l| l.1)),
            false,
            true,
        ),
        height: H,
    };
    let mut out = String::new();
    open_svg(
        &mut out,
        H,
        "measure-fit-svg",
        "Variance against mean, with the fitted line",
        &format!(
            "Temporal variance above dark (DN²) against mean above dark (DN), linear axes: {} \
             flat levels; the {} drawn filled are those the straight-line fit used, and its \
             slope is the system gain K.",
            s.points.len(),
            used.len()
        ),
    );
    axes(
        &mut out,
        &f,
        "mean above dark, DN",
        "variance above dark, DN²",
    );
    polyline(&mut out, &f, &s.fit_line, "model", false);
    let pts: Vec<(f64, f64, bool)> = s
        .points
        .iter()
        .map(|p| (p.signal_dn, p.variance_above_dark_dn2, p.used_in_fit))
        .collect();
    marks(&mut out, &f, &pts);
    out.push_str("</svg>");

    // The residuals of the fit, on their own axes below.
    let rh = 360.0;
    let res: Vec<(f64, f64)> = used
        .iter()
        .filter_map(|p| p.residual_dn2.map(|r| (p.signal_dn, r)))
        .collect();
    let g = Plot {
        x: f.x,
        y: Axis::new(res.iter().map(|r| r.1), false, true),
        height: rh,
    };
    open_svg(
        &mut out,
        rh,
        "measure-res-svg",
        "Residuals of the variance fit",
        &format!(
            "Measured variance minus the fitted line, in DN², at the {} levels the fit used; \
             points scattered evenly about zero mean the line describes them.",
            res.len()
        ),
    );
    axes(&mut out, &g, "mean above dark, DN", "residual, DN²");
    polyline(&mut out, &g, &[(g.x.lo, 0.0), (g.x.hi, 0.0)], "axis", true);
    let rp: Vec<(f64, f64, bool)> = res.iter().map(|(x, y)| (*x, *y, true)).collect();
    marks(&mut out, &g, &rp);
    out.push_str("</svg>");
    out
}

/// Time the frame-pair statistics of two synthetic 16-bit frames of `width` × `height` in this
/// wasm module: the best of `repeats` passes, in milliseconds (`performance.now`). For the
/// measurement script; the frames are made here so that no copy from JavaScript is timed.
#[must_use]
pub fn time_pair_stats_ms(width: u32, height: u32, repeats: u32) -> f64 {
    let n = usize::try_from(u64::from(width) * u64::from(height)).unwrap_or(0);
    // A fixed linear congruential sequence: values like a 16-bit frame near mid-scale.
    let mut state: u32 = 0x2545_f491;
    let mut next = || {
        state = state.wrapping_mul(1_664_525).wrapping_add(1_013_904_223);
        u16::try_from(30_000 + (state >> 20)).unwrap_or(u16::MAX)
    };
    let a: Vec<u16> = (0..n).map(|_| next()).collect();
    let b: Vec<u16> = (0..n).map(|_| next()).collect();
    let Some(perf) = dom::window().and_then(|w| w.performance()) else {
        return f64::NAN;
    };
    let mut best = f64::INFINITY;
    let mut check = 0u64;
    for _ in 0..repeats.max(1) {
        let t0 = perf.now();
        let s = ptc::pair_sums(&a, &b);
        let t1 = perf.now();
        check = check.wrapping_add(s.sum_diff_sq);
        best = best.min(t1 - t0);
    }
    // Keep the sums observable so the pass cannot be optimised away.
    if check == u64::MAX {
        return f64::NAN;
    }
    best
}
