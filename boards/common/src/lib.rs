//! Pieces shared by the QEMU boards (`boards/qemu-m4`, `boards/qemu-m0`).
//!
//! * [`count`]: instructions spent in a stage, from SysTick under `-icount shift=0`, with
//!   markers for the exact-count QEMU plugin in `boards/tools/insn-count`.
//! * [`checks`]: a tally of named self-checks and the report that ends the run.
//! * [`exit`]: the exit codes the host sees, the panic handler and the HardFault handler.
//! * [`probe`]: instructions per pipeline stage, through an analyzer's stage probe.
//! * [`pump`]: the demo pump scenario through an analyzer path, timed.
//! * [`stages`]: the bare transforms, and budget runs at other block lengths.
//! * [`selfcheck`]: the firmware self-check: the pump scenario through f32/Q15/Q31.
//! * [`stack`]: stack high-water mark, to see what a board has left of its RAM.
//!
//! Everything here assumes a single core and QEMU with semihosting enabled; the real boards
//! use defmt-rtt and panic-probe instead.
#![no_std]

pub mod checks;
pub mod count;
pub mod exit;
pub mod probe;
pub mod pump;
pub mod selfcheck;
pub mod stack;
pub mod stages;
