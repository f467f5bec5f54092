//! leakless on QEMU microbit (Cortex-M0, 16 KiB RAM, soft float): timed stages and the self-check.
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

/// The nRF51 core clock, which SysTick (CLKSOURCE = core) counts: 16 MHz, so one tick is
/// 62.5 instructions under `-icount shift=0`.
const CORE_CLOCK_HZ: u32 = 16_000_000;

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

    // 4 KiB of the 16 KiB RAM; microfft transforms it in place.
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
