//! Small DOM helpers: find elements, set text and attributes, without ever panicking.
//!
//! Elements with a fixed role are found only through [`by_id`] with a literal id, so the tidy
//! test can check that each one exists in `www/index.html`. Nothing here knows the scenario
//! format or the report.

use wasm_bindgen::JsCast;
use web_sys::{Document, Element, Window};

/// The browser window, if there is one.
#[must_use]
pub fn window() -> Option<Window> {
    web_sys::window()
}

/// The page's document, if there is one.
#[must_use]
pub fn document() -> Option<Document> {
    window().and_then(|w| w.document())
}

/// The element with this id (a literal from `www/index.html`), if the page has it.
#[must_use]
pub fn by_id(id: &'static str) -> Option<Element> {
    document().and_then(|d| d.get_element_by_id(id))
}

/// The element with this id, as a more specific element type.
#[must_use]
pub fn by_id_as<T: JsCast>(id: &'static str) -> Option<T> {
    by_id(id).and_then(|e| e.dyn_into::<T>().ok())
}

/// Every element under `root` that matches a CSS selector, in document order.
#[must_use]
pub fn all(root: &Element, selector: &str) -> Vec<Element> {
    let Ok(list) = root.query_selector_all(selector) else {
        return Vec::new();
    };
    (0..list.length())
        .filter_map(|i| list.get(i))
        .filter_map(|n| n.dyn_into::<Element>().ok())
        .collect()
}

/// Every element in the document that matches a CSS selector.
#[must_use]
pub fn all_in_document(selector: &str) -> Vec<Element> {
    match document().and_then(|d| d.document_element()) {
        Some(root) => all(&root, selector),
        None => Vec::new(),
    }
}

/// Set an attribute; a refusal (an invalid name) is ignored, as the names here are literals.
pub fn set_attr(el: &Element, name: &str, value: &str) {
    let _ = el.set_attribute(name, value);
}

/// Remove an attribute if present.
pub fn remove_attr(el: &Element, name: &str) {
    let _ = el.remove_attribute(name);
}

/// Show or hide an element with the `hidden` attribute.
pub fn set_hidden(el: &Element, hidden: bool) {
    if hidden {
        set_attr(el, "hidden", "");
    } else {
        remove_attr(el, "hidden");
    }
}

/// Add or remove a class.
pub fn set_class(el: &Element, class: &str, on: bool) {
    let _ = el.class_list().toggle_with_force(class, on);
}

/// Set the text of the element with this id, if it exists.
pub fn set_text_of(id: &'static str, text: &str) {
    if let Some(el) = by_id(id) {
        el.set_text_content(Some(text));
    }
}

/// Remove all children of an element.
pub fn clear(el: &Element) {
    el.set_text_content(None);
}

/// A new element of this tag with this text, if the document can make one.
#[must_use]
pub fn new_element(tag: &str, text: &str) -> Option<Element> {
    let el = document()?.create_element(tag).ok()?;
    el.set_text_content(Some(text));
    Some(el)
}

/// Offer `text` as a file download named `name`. Returns whether the browser took it.
pub fn download(name: &str, mime: &str, text: &str) -> bool {
    let parts = js_sys::Array::of1(&wasm_bindgen::JsValue::from_str(text));
    let opts = web_sys::BlobPropertyBag::new();
    opts.set_type(mime);
    web_sys::Blob::new_with_str_sequence_and_options(&parts, &opts)
        .is_ok_and(|blob| download_blob(name, &blob))
}

/// Offer a blob as a file download named `name`. Returns whether the browser took it.
pub fn download_blob(name: &str, blob: &web_sys::Blob) -> bool {
    let Ok(url) = web_sys::Url::create_object_url_with_blob(blob) else {
        return false;
    };
    let anchor = document()
        .and_then(|d| d.create_element("a").ok())
        .and_then(|a| a.dyn_into::<web_sys::HtmlAnchorElement>().ok());
    let done = anchor.is_some_and(|a| {
        a.set_href(&url);
        a.set_download(name);
        a.click();
        true
    });
    let _ = web_sys::Url::revoke_object_url(&url);
    done
}
