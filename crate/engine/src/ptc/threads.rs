//! Two pieces of one computation on two threads, natively with the `threads` feature (the
//! stack pass over its rows, the spatial summaries of the colour phases). Callers split only
//! where the result is the same as in one thread, and compute in one thread when this gives
//! `None`.

/// `there` on a second thread while `here` runs on this one: both results, or `None` (neither
/// run, so whatever they would change is untouched) when the thread cannot start. The engine
/// does not panic; should `there` have, this thread panics with it.
pub(crate) fn on_two<H, T>(
    here: impl FnOnce() -> H,
    there: impl FnOnce() -> T + Send,
) -> Option<(H, T)>
where
    T: Send,
{
    std::thread::scope(|scope| {
        let other = std::thread::Builder::new()
            .spawn_scoped(scope, there)
            .ok()?;
        let h = here();
        let t = other
            .join()
            .unwrap_or_else(|e| std::panic::resume_unwind(e));
        Some((h, t))
    })
}
