//! The scenario form's field markup in `www/index.html` is the one `markup.rs` makes from the
//! key catalogue: a codegen check in the style of rust-analyzer's. When the page is stale it
//! fails, saying how to write it (`NOISE_BUDGET_WRITE_MARKUP=1 cargo test -p noise-budget-web
//! --test markup` rewrites the marked region); CI runs it without the variable.

#![cfg(not(target_arch = "wasm32"))]

use std::fs;
use std::path::PathBuf;

use noise_budget_web::markup;

#[test]
fn the_pages_field_markup_is_generated_from_the_key_catalogue() {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../www/index.html");
    let page = fs::read_to_string(&path).unwrap_or_default();
    let fresh = markup::page_with_fields(&page);
    assert!(
        fresh.is_some(),
        "www/index.html must hold the markers `{}` and `{}`, once each",
        markup::BEGIN,
        markup::END
    );
    let fresh = fresh.unwrap_or_default();
    if fresh == page {
        return;
    }
    if std::env::var_os("NOISE_BUDGET_WRITE_MARKUP").is_some() {
        assert!(
            fs::write(&path, &fresh).is_ok(),
            "cannot write {}",
            path.display()
        );
        return;
    }
    let first = page
        .lines()
        .zip(fresh.lines())
        .position(|(a, b)| a != b)
        .map_or(0, |i| i + 1);
    assert!(
        fresh == page,
        "www/index.html's generated fields are stale (first difference at line {first}): run \
         NOISE_BUDGET_WRITE_MARKUP=1 cargo test -p noise-budget-web --test markup, and commit it"
    );
}
