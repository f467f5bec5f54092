//! Stack high-water mark: paint the free stack with a pattern at start, and at the end find
//! the deepest word that no longer holds it.
//!
//! cortex-m-rt puts the stack at the top of RAM (`_stack_start`), growing down towards the
//! statics, which end at `_stack_end`. Nothing else uses that gap (no heap), so everything
//! between `_stack_end` and the current stack pointer is free when [`paint`] runs.

use core::ptr::{read_volatile, write_volatile};

const PATTERN: u32 = 0x5AC5_5AC5;
/// Left unpainted below the stack pointer: `paint`'s own frame and call overhead.
const MARGIN: usize = 64;

extern "C" {
    static _stack_start: u32;
    static _stack_end: u32;
}

/// The stack region, `(lowest, highest)` address.
fn region() -> (usize, usize) {
    (
        core::ptr::addr_of!(_stack_end) as usize,
        core::ptr::addr_of!(_stack_start) as usize,
    )
}

/// Paints the unused stack. Call first thing in `main`, before interrupts are enabled.
#[inline(never)]
pub fn paint() {
    let (bottom, _) = region();
    let sp = cortex_m::register::msp::read() as usize;
    let mut p = bottom;
    while p + 4 <= sp.saturating_sub(MARGIN) {
        // SAFETY: `p` is word-aligned (cortex-m-rt asserts `_stack_end % 4 == 0`) and lies
        // between the end of the statics and below the live stack, memory that nothing owns
        // yet; interrupts are not enabled, so no exception frame can be there.
        unsafe { write_volatile(p as *mut u32, PATTERN) };
        p += 4;
    }
}

/// `(used, size)` in bytes: the deepest the stack has been since [`paint`], and the room it
/// had. `used == size` means the stack reached the statics (and probably corrupted them).
pub fn high_water() -> (u32, u32) {
    let (bottom, top) = region();
    let mut p = bottom;
    // SAFETY: reads of word-aligned RAM inside the stack region, below the live stack
    // pointer for every address that still holds the pattern.
    while p < top && unsafe { read_volatile(p as *const u32) } == PATTERN {
        p += 4;
    }
    ((top - p) as u32, (top - bottom) as u32)
}
