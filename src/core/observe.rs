//! The observer seam: how long-running library work (a solve, a study) reports progress and
//! diagnostics without printing. The caller implements [`Observer`]; the command line shows a
//! progress bar on a terminal, a test may count calls, a Python binding may forward them.
//!
//! Every method has an empty default, so an observer implements only what it shows. Observers are
//! called from worker threads (studies solve points in parallel) and must be `Sync`.

/// Receives progress and diagnostics. All methods default to doing nothing.
pub trait Observer: Sync {
    /// A unit of work of `total` units begins (`what`: a short name such as `sweep`).
    fn started(&self, _what: &str, _total: usize) {}
    /// One more unit finished (called once per unit, from any thread).
    fn advanced(&self) {}
    /// All units finished.
    fn finished(&self) {}
    /// A diagnostic for developers (the optimizer's search steps); not part of any result.
    fn diagnostic(&self, _message: &dyn Fn() -> String) {}
}

/// The observer that ignores everything.
#[derive(Debug, Clone, Copy, Default)]
pub struct Silent;

impl Observer for Silent {}

#[cfg(test)]
mod tests {
    use super::*;
    use std::sync::atomic::{AtomicUsize, Ordering};

    struct Count(AtomicUsize);
    impl Observer for Count {
        fn advanced(&self) {
            self.0.fetch_add(1, Ordering::Relaxed);
        }
    }

    #[test]
    fn an_observer_implements_only_what_it_needs() {
        let c = Count(AtomicUsize::new(0));
        let o: &dyn Observer = &c;
        o.started("x", 2);
        o.advanced();
        o.advanced();
        o.diagnostic(&|| unreachable!("a diagnostic is built only when shown"));
        o.finished();
        assert_eq!(c.0.load(Ordering::Relaxed), 2);
        Silent.advanced();
    }
}
