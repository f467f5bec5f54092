//! A tally of named self-checks, and the report that ends the run with the right exit code.
//!
//! ```ignore
//! let mut checks = Checks::new();
//! checks.check("peak at bin 64", peak == 64);
//! checks.close("tone level", level, 0.75, 1e-4 * 0.75);
//! checks.report() // logs the tally, exits 0 if all passed, 1 otherwise
//! ```

use crate::exit::{exit, CHECK_FAILED, PASS};

/// Counts checks run and failed.
#[derive(Debug, Default)]
pub struct Checks {
    run: u32,
    failed: u32,
    context: &'static str,
}

impl Checks {
    /// No checks yet.
    pub const fn new() -> Self {
        Checks {
            run: 0,
            failed: 0,
            context: "",
        }
    }

    /// Prefixes the names of the checks that follow (e.g. the analyzer they are about).
    pub fn set_context(&mut self, context: &'static str) {
        self.context = context;
    }

    /// Records one check and logs it; returns `ok`.
    pub fn check(&mut self, name: &str, ok: bool) -> bool {
        self.run += 1;
        if ok {
            defmt::info!("ok   {=str}{=str}", self.context, name);
        } else {
            self.failed += 1;
            defmt::error!("FAIL {=str}{=str}", self.context, name);
        }
        ok
    }

    /// Checks `|value - expected| <= tolerance` and logs all three numbers. NaN fails.
    pub fn close(&mut self, name: &str, value: f32, expected: f32, tolerance: f32) -> bool {
        let error = value - expected;
        // Written so that a NaN anywhere makes the comparison false.
        let ok = error.abs() <= tolerance;
        let tag = if ok { "ok  " } else { "FAIL" };
        defmt::info!(
            "{=str} {=str}{=str}: {=f32} (expected {=f32} +- {=f32}, error {=f32})",
            tag,
            self.context,
            name,
            value,
            expected,
            tolerance,
            error
        );
        self.run += 1;
        if !ok {
            self.failed += 1;
        }
        ok
    }

    /// Checks `value >= bound` and logs both. NaN fails.
    pub fn at_least(&mut self, name: &str, value: f32, bound: f32) -> bool {
        let ok = value >= bound;
        let tag = if ok { "ok  " } else { "FAIL" };
        defmt::info!(
            "{=str} {=str}{=str}: {=f32} (bound >= {=f32})",
            tag,
            self.context,
            name,
            value,
            bound
        );
        self.run += 1;
        if !ok {
            self.failed += 1;
        }
        ok
    }

    /// Checks run so far.
    pub fn run(&self) -> u32 {
        self.run
    }

    /// Checks failed so far.
    pub fn failed(&self) -> u32 {
        self.failed
    }

    /// Logs the stack high-water mark and checks that the stack stayed clear of the statics
    /// (needs [`crate::stack::paint`] at the start of `main`).
    pub fn stack(&mut self) {
        let (used, size) = crate::stack::high_water();
        defmt::info!(
            "stack: {=u32} of {=u32} bytes used (high-water mark)",
            used,
            size
        );
        self.context = "";
        // The bottom word still painted means the stack never reached the statics; a stack
        // that did would have overwritten them without any fault.
        self.check("stack stayed clear of the statics", used < size);
    }

    /// Logs the tally and ends the run: exit 0 if every check passed, 1 if any failed or if
    /// no check ran at all (an empty self-check proves nothing).
    pub fn report(&self) -> ! {
        let passed = self.run - self.failed;
        if self.run > 0 && self.failed == 0 {
            defmt::info!(
                "self-check: {=u32} passed, {=u32} failed",
                passed,
                self.failed
            );
            exit(PASS)
        } else {
            defmt::error!(
                "self-check: {=u32} passed, {=u32} failed{=str}",
                passed,
                self.failed,
                if self.run == 0 {
                    " (no checks ran)"
                } else {
                    ""
                }
            );
            exit(CHECK_FAILED)
        }
    }
}
