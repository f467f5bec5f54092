//! Instructions spent in a stage, counted deterministically under QEMU.
//!
//! # How
//!
//! QEMU run with `-icount shift=0` advances its virtual clock by exactly 1 ns per executed
//! guest instruction, and SysTick (clock source = core) counts that virtual clock at the
//! machine's core clock: 25 MHz on mps2-an386, so one tick is 40 instructions; 16 MHz on
//! microbit, 62.5 instructions. [`measure`] reads SysTick before and after the closure and
//! converts ticks to instructions, so the result is the same on every run and on every host,
//! to within one tick.
//!
//! Each measured region is also bracketed by calls to [`bench_start`] and [`bench_stop`].
//! Run under the plugin in `boards/tools/insn-count` (`count.sh`), QEMU reports the exact
//! number of instructions between the two markers for every region, and the script sets them
//! side by side with what the firmware logged.
//!
//! # Caveats
//!
//! * These are instruction counts from an emulator, not cycles: on silicon loads, branches,
//!   divisions and flash wait states cost more than one cycle. Use them to track regressions
//!   and to compare implementations, not as a time budget.
//! * Without `-icount shift=0` SysTick follows host time and the numbers mean nothing; the
//!   calibration check in [`calibrate`] catches that.
//! * SysTick is taken over: its exception counts wraps of the 24-bit counter (2^24 ticks,
//!   about 671 M instructions at 25 MHz), and those few instructions are counted too.
//! * Counts change with the compiler, opt-level, LTO and target-cpu: keep baselines per
//!   toolchain.

use core::sync::atomic::{compiler_fence, AtomicU32, Ordering};

use cortex_m::peripheral::syst::SystClkSource;
use cortex_m::peripheral::{SCB, SYST};
use cortex_m_rt::exception;

use crate::checks::Checks;

const RELOAD: u32 = 0x00FF_FFFF;
const PERIOD: u64 = RELOAD as u64 + 1;

/// Core clock in Hz, 0 until [`init`].
static CLOCK_HZ: AtomicU32 = AtomicU32::new(0);
/// Completed SysTick periods. Written only by the SysTick exception (load + store: thumbv6m
/// has no atomic read-modify-write, and the exception cannot be pre-empted by main).
static WRAPS: AtomicU32 = AtomicU32::new(0);
/// Regions measured so far; the index of the next one.
static REGIONS: AtomicU32 = AtomicU32::new(0);
/// Written by the markers so that they have distinct bodies (see [`mark`]).
static MARK: AtomicU32 = AtomicU32::new(0);

/// Starts SysTick as a free-running counter of the core clock `core_clock_hz`.
pub fn init(mut syst: SYST, core_clock_hz: u32) {
    assert!(core_clock_hz > 0, "core clock must be non-zero");
    syst.disable_counter();
    syst.set_clock_source(SystClkSource::Core);
    syst.set_reload(RELOAD);
    syst.clear_current();
    WRAPS.store(0, Ordering::Relaxed);
    CLOCK_HZ.store(core_clock_hz, Ordering::Relaxed);
    syst.enable_interrupt();
    syst.enable_counter();
}

#[exception]
fn SysTick() {
    WRAPS.store(
        WRAPS.load(Ordering::Relaxed).wrapping_add(1),
        Ordering::Relaxed,
    );
}

/// SysTick ticks since [`init`], 64 bits wide.
fn now_ticks() -> u64 {
    loop {
        let before = WRAPS.load(Ordering::Relaxed);
        let current = SYST::get_current();
        let pending = SCB::is_pendst_pending();
        let after = WRAPS.load(Ordering::Relaxed);
        if before != after {
            continue; // the exception ran in between: read again
        }
        // A wrap whose exception has not run yet (interrupts masked, or taken a few
        // instructions late): the counter has already reloaded, so it reads high.
        let wraps = u64::from(before) + u64::from(pending && current > RELOAD / 2);
        return wraps * PERIOD + u64::from(RELOAD - current);
    }
}

/// The counter now, in SysTick ticks since [`init`]: for timing without plugin markers
/// (see [`ticks_to_instructions`]). Many short readings summed keep each reading's error of
/// one tick, so sum ticks, not rounded instruction counts.
pub fn ticks() -> u64 {
    now_ticks()
}

/// Instructions in `ticks` SysTick ticks under `-icount shift=0`.
pub fn ticks_to_instructions(ticks: u64) -> u64 {
    ticks * 1_000_000_000 / u64::from(clock_hz())
}

/// Logs `insns[index] name: instructions`, the line `count.sh` pairs with the plugin's exact
/// count of region `index` (from [`end`]).
pub fn log(index: u32, name: &str, instructions: u32) {
    defmt::info!("insns[{=u32}] {=str}: {=u32}", index, name, instructions);
}

/// Instructions per SysTick tick, rounded up: the resolution of [`measure`].
pub fn resolution() -> u32 {
    let hz = clock_hz();
    1_000_000_000u32.div_ceil(hz)
}

fn clock_hz() -> u32 {
    let hz = CLOCK_HZ.load(Ordering::Relaxed);
    assert!(hz != 0, "count::init was not called");
    hz
}

/// A store the optimiser must keep: without it both markers would have empty bodies and be
/// merged into one address, which the plugin cannot tell apart.
#[inline(always)]
fn mark(value: u32) {
    compiler_fence(Ordering::SeqCst);
    // SAFETY: `as_ptr` points at a live, aligned static; a single core and no other writer
    // of MARK but these markers, so a plain volatile store cannot race.
    unsafe { core::ptr::write_volatile(MARK.as_ptr(), value) };
    compiler_fence(Ordering::SeqCst);
}

/// Marks the start of a measured region for the QEMU plugin. Do not call directly.
#[no_mangle]
#[inline(never)]
pub extern "C" fn bench_start() {
    mark(1);
}

/// Marks the end of a measured region for the QEMU plugin. Do not call directly.
#[no_mangle]
#[inline(never)]
pub extern "C" fn bench_stop() {
    mark(2);
}

/// An open measured region: started by [`begin`], closed by [`end`]. For regions whose start
/// and end are not in one closure, such as the stages of an analyzer's block seen through its
/// probe.
#[derive(Debug)]
#[must_use = "a region that is never ended confuses the plugin's pairing"]
pub struct Span {
    index: u32,
    t0: u64,
}

/// Opens a measured region: takes the next region index and starts the count. Everything
/// until [`end`] is counted, by SysTick and, between the markers, by the plugin.
#[inline(always)]
pub fn begin() -> Span {
    let index = REGIONS.load(Ordering::Relaxed);
    REGIONS.store(index.wrapping_add(1), Ordering::Relaxed);
    let t0 = now_ticks();
    bench_start();
    Span { index, t0 }
}

/// Closes `span`: `(index, instructions)`, the region's index in the run and what it took
/// (saturating at `u32::MAX`).
#[inline(always)]
pub fn end(span: Span) -> (u32, u32) {
    let (index, instructions, _) = end_ticks(span);
    (index, instructions)
}

/// [`end`], and the region's length in SysTick ticks.
#[inline(always)]
pub fn end_ticks(span: Span) -> (u32, u32, u64) {
    bench_stop();
    let t1 = now_ticks();
    let ticks = t1 - span.t0;
    let instructions = ticks_to_instructions(ticks);
    (
        span.index,
        u32::try_from(instructions).unwrap_or(u32::MAX),
        ticks,
    )
}

/// One measured region: the result of `f`, the region's index in the run (the plugin numbers
/// regions the same way), and the instructions it took.
fn region<R>(f: impl FnOnce() -> R) -> (R, u32, u32) {
    clock_hz(); // fail before the region rather than inside it
    let span = begin();
    let result = core::hint::black_box(f());
    let (index, instructions) = end(span);
    (result, index, instructions)
}

/// Runs `f` and returns its result and the instructions it took (within [`resolution`];
/// saturates at `u32::MAX`).
///
/// Pass the data `f` works on through [`core::hint::black_box`] so that the compiler cannot
/// compute it outside the region. Regions do not nest: the plugin would restart its count at
/// the inner start and close at the inner stop.
pub fn measure_value<R>(f: impl FnOnce() -> R) -> (R, u32) {
    let (result, _, instructions) = region(f);
    (result, instructions)
}

/// Runs `f` and returns the instructions it took, as [`measure_value`].
pub fn measure(f: impl FnOnce()) -> u32 {
    measure_value(f).1
}

/// [`measure_value`], and logs `insns[index] name: count`. The index is the region's
/// position in the run, which `boards/tools/insn-count/count.sh` uses to pair the line with
/// the plugin's exact count.
pub fn stage_value<R>(name: &str, f: impl FnOnce() -> R) -> (R, u32) {
    let (result, index, instructions) = region(f);
    log(index, name, instructions);
    (result, instructions)
}

/// [`measure`], and logs the count as [`stage_value`] does.
pub fn stage(name: &str, f: impl FnOnce()) -> u32 {
    stage_value(name, f).1
}

/// Executes `2 * iterations` instructions (plus a handful to set up), in a loop whose
/// instruction count does not depend on the compiler.
#[inline(always)]
fn known_loop(iterations: u32) {
    assert!(iterations > 0, "a zero count would loop 2^32 times");
    // SAFETY: register arithmetic on r0 only (declared as clobbered), no memory access and
    // no stack use. r0 is named because Thumb-1 `subs rd, #imm` needs a low register.
    unsafe {
        core::arch::asm!(
            "2:",
            "subs r0, #1",
            "bne 2b",
            inout("r0") iterations => _,
            options(nomem, nostack),
        );
    }
}

/// Checks the counter against a loop of known length. Fails when QEMU was started without
/// `-icount shift=0` (SysTick then follows host time) or when the tick rate given to
/// [`init`] is wrong.
pub fn calibrate(checks: &mut Checks) {
    const ITERATIONS: u32 = 50_000;
    let empty = stage("empty region", || ());
    let looped = stage("known loop (100000 instructions)", || {
        known_loop(core::hint::black_box(ITERATIONS))
    });
    let expected = 2 * ITERATIONS;
    // Both readings are quantised to one tick, so each may be off by up to one tick; the
    // region overhead (the marker calls and the loop set-up, tens of instructions) is
    // removed by subtracting the empty region, which leaves at most 2 ticks of error. A wrong
    // clock (25 vs 16 MHz) or a missing -icount is off by tens of percent.
    let tolerance = 2 * resolution();
    let measured = looped.saturating_sub(empty);
    let ok = measured.abs_diff(expected) <= tolerance;
    defmt::info!(
        "counter: known loop read {=u32} instructions, expected {=u32} +- {=u32}",
        measured,
        expected,
        tolerance
    );
    checks.check("instruction counter matches a loop of known length", ok);
}
