//! Containing panics of third-party readers on corrupt input: a Parquet file with damaged
//! metadata can make the decoder panic instead of returning an error. [`contain`] turns
//! such a panic into an error message, and keeps the panic's own report off stderr
//! (also when it happens on one of polars' worker threads, named `polars-N`, and reaches
//! the caller through the thread pool).

use std::cell::Cell;
use std::panic::{self, AssertUnwindSafe};
use std::sync::Once;
use std::sync::atomic::{AtomicUsize, Ordering};

/// How many threads are inside [`contain`].
static ACTIVE: AtomicUsize = AtomicUsize::new(0);

thread_local! {
    /// Whether this thread is inside [`contain`].
    static CONTAINED: Cell<bool> = const { Cell::new(false) };
}

static HOOK: Once = Once::new();

/// Runs `f`; a panic inside it becomes `Err` with the panic's message. The panic hook in
/// force stays in force for every other panic.
///
/// # Errors
/// The panic message when `f` panics.
pub(crate) fn contain<T>(f: impl FnOnce() -> T) -> Result<T, String> {
    HOOK.call_once(|| {
        let previous = panic::take_hook();
        panic::set_hook(Box::new(move |info| {
            let worker = std::thread::current()
                .name()
                .is_some_and(|n| n.starts_with("polars-"));
            let quiet = CONTAINED.with(Cell::get) || (worker && ACTIVE.load(Ordering::SeqCst) > 0);
            if !quiet {
                previous(info);
            }
        }));
    });
    let outer = CONTAINED.with(|c| c.replace(true));
    ACTIVE.fetch_add(1, Ordering::SeqCst);
    let result = panic::catch_unwind(AssertUnwindSafe(f));
    ACTIVE.fetch_sub(1, Ordering::SeqCst);
    CONTAINED.with(|c| c.set(outer));
    result.map_err(|payload| {
        payload
            .downcast_ref::<&str>()
            .map(|s| s.to_string())
            .or_else(|| payload.downcast_ref::<String>().cloned())
            .unwrap_or_else(|| "unknown failure".into())
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_panic_becomes_an_error_and_values_pass_through() {
        assert_eq!(contain(|| 7), Ok(7));
        let e = contain(|| -> u8 { panic!("broken {}", 3) }).unwrap_err();
        assert_eq!(e, "broken 3");
        let v: Vec<u8> = Vec::new();
        let i = v.len() + 3;
        assert!(contain(|| v[i]).unwrap_err().contains("out of bounds"));
    }
}
