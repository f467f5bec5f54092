//! leakless on QEMU mps2-an386 (Cortex-M4F): the pump scenario through the f32, Q15 and Q31
//! paths, with instructions per stage, the self-check, and budget runs at N = 256 and 4096.
//!
//! `cargo run --release` runs it under QEMU and decodes the defmt log; the exit code is the
//! firmware's: 0 all checks passed, 1 a check failed, 101 panic, 102 HardFault.
#![no_std]
#![no_main]

use board_common::checks::Checks;
use board_common::selfcheck::{self, HANN_Q15};
use board_common::{count, exit, stack, stages};
use cortex_m as _; // its critical-section implementation must be linked
use cortex_m_rt::entry;
use defmt_semihosting as _; // the global defmt logger: frames over semihosting to stdout
use leakless::{Shape, Window, WindowQ15, WindowQ31};

/// SysTick with CLKSOURCE = core runs from the mps2 SYSCLK, 25 MHz: 40 instructions a tick
/// under `-icount shift=0`.
const CORE_CLOCK_HZ: u32 = 25_000_000;

// Windows of the budget runs, evaluated by the compiler; statics, so they stay in flash.
static HANN_256: Window<256> = Window::new(Shape::Hann);
static HANN_Q15_256: WindowQ15<256> = WindowQ15::new(Shape::Hann);
static HANN_Q31_256: WindowQ31<256> = WindowQ31::new(Shape::Hann);
static HANN_4096: Window<4096> = Window::new(Shape::Hann);
static HANN_Q15_4096: WindowQ15<4096> = WindowQ15::new(Shape::Hann);
static HANN_Q31_4096: WindowQ31<4096> = WindowQ31::new(Shape::Hann);

#[entry]
fn main() -> ! {
    stack::paint();
    let Some(peripherals) = cortex_m::Peripherals::take() else {
        panic!("core peripherals already taken");
    };
    count::init(peripherals.SYST, CORE_CLOCK_HZ);
    defmt::info!(
        "leakless qemu-m4: mps2-an386, Cortex-M4F; counter resolution {=u32} instructions",
        count::resolution()
    );

    let mut checks = Checks::new();
    count::calibrate(&mut checks);

    stages::bare::<1024>(
        [
            "bare rfft f32 N=1024 (microfft)",
            "bare rfft_q15 N=1024",
            "bare rfft_q31 N=1024",
        ],
        &HANN_Q15,
        true,
        true,
    );
    selfcheck::run_all(&mut checks);

    // Budget runs: instructions only, no checks.
    stages::bare::<256>(
        [
            "bare rfft f32 N=256 (microfft)",
            "bare rfft_q15 N=256",
            "bare rfft_q31 N=256",
        ],
        &HANN_Q15_256,
        true,
        true,
    );
    stages::budget_f32::<256, 129>(
        ("f32 N=256", "f32 N=256: read-out (scale), once per average"),
        &HANN_256,
        None,
    );
    stages::budget_q15::<256, 129>(
        ("Q15 N=256", "Q15 N=256: read-out (scale), once per average"),
        &HANN_Q15_256,
        None,
    );
    stages::budget_q31::<256, 129>(
        ("Q31 N=256", "Q31 N=256: read-out (scale), once per average"),
        &HANN_Q31_256,
        None,
    );
    stages::bare::<4096>(
        [
            "bare rfft f32 N=4096 (microfft)",
            "bare rfft_q15 N=4096",
            "bare rfft_q31 N=4096",
        ],
        &HANN_Q15_4096,
        true,
        true,
    );
    stages::budget_f32::<4096, 2049>(
        (
            "f32 N=4096",
            "f32 N=4096: read-out (scale), once per average",
        ),
        &HANN_4096,
        Some(&mut checks),
    );
    stages::budget_q15::<4096, 2049>(
        (
            "Q15 N=4096",
            "Q15 N=4096: read-out (scale), once per average",
        ),
        &HANN_Q15_4096,
        Some(&mut checks),
    );
    stages::budget_q31::<4096, 2049>(
        (
            "Q31 N=4096",
            "Q31 N=4096: read-out (scale), once per average",
        ),
        &HANN_Q31_4096,
        Some(&mut checks),
    );

    force_exit_paths(&mut checks);
    checks.stack();
    checks.report()
}

/// The `force-*` features, which prove that each exit path reaches the host.
fn force_exit_paths(checks: &mut Checks) {
    if cfg!(feature = "force-fail") {
        checks.check("forced failure (feature force-fail)", false);
    }
    if cfg!(feature = "force-panic") {
        panic!("forced panic (feature force-panic)");
    }
    if cfg!(feature = "force-fault") {
        exit::force_fault();
    }
}
