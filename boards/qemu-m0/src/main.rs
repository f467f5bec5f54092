//! leakless on QEMU microbit (Cortex-M0, 16 KiB RAM, no FPU): the pump scenario through the
//! Q15 path alone at N = 1024, with instructions per stage and the self-check, and a budget
//! run at N = 256. The scenario generator runs in soft float here; it is timed apart and is
//! not part of the budget.
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
use leakless::{Shape, WindowQ15};

/// The nRF51 core clock, which SysTick (CLKSOURCE = core) counts: 16 MHz, so one tick is
/// 62.5 instructions under `-icount shift=0`.
const CORE_CLOCK_HZ: u32 = 16_000_000;

/// The Q15 Hann window of the budget run, in flash.
static HANN_Q15_256: WindowQ15<256> = WindowQ15::new(Shape::Hann);

#[entry]
fn main() -> ! {
    stack::paint();
    let Some(peripherals) = cortex_m::Peripherals::take() else {
        panic!("core peripherals already taken");
    };
    count::init(peripherals.SYST, CORE_CLOCK_HZ);
    defmt::info!(
        "leakless qemu-m0: microbit, Cortex-M0; counter resolution {=u32} instructions",
        count::resolution()
    );

    let mut checks = Checks::new();
    count::calibrate(&mut checks);

    stages::bare::<1024>(["-", "bare rfft_q15 N=1024", "-"], &HANN_Q15, false, false);
    selfcheck::run_q15(&mut checks);

    // Budget run: instructions only.
    stages::bare::<256>(
        ["-", "bare rfft_q15 N=256", "-"],
        &HANN_Q15_256,
        false,
        false,
    );
    stages::budget_q15::<256, 129>(
        ("Q15 N=256", "Q15 N=256: read-out (scale), once per average"),
        &HANN_Q15_256,
        None,
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
