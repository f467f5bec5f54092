//! leakless on QEMU mps2-an386 (Cortex-M4F): timed stages and the self-check.
//!
//! `cargo run --release` runs it under QEMU and decodes the defmt log; the exit code is the
//! firmware's: 0 all checks passed, 1 a check failed, 101 panic, 102 HardFault.
#![no_std]
#![no_main]

use board_common::checks::Checks;
use board_common::selfcheck::N;
use board_common::{count, exit, selfcheck, stack, stages};
use cortex_m as _; // its critical-section implementation must be linked
use cortex_m_rt::entry;
use defmt_semihosting as _; // the global defmt logger: frames over semihosting to stdout

/// SysTick with CLKSOURCE = core runs from the mps2 SYSCLK, 25 MHz: 40 instructions a tick
/// under `-icount shift=0`.
const CORE_CLOCK_HZ: u32 = 25_000_000;

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

    let mut block = [0.0f32; N];
    stages::run(&mut block);
    selfcheck::run(&mut checks, &mut block);

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
