//! Pieces shared by the QEMU boards (`boards/qemu-m4`, `boards/qemu-m0`).
//!
//! * [`count`]: instructions spent in a stage, from SysTick under `-icount shift=0`, with
//!   markers for the exact-count QEMU plugin in `boards/tools/insn-count`.
//! * [`checks`]: a tally of named self-checks and the report that ends the run.
//! * [`exit`]: the exit codes the host sees, the panic handler and the HardFault handler.
//! * [`stages`]: the stages timed on every board.
//! * [`selfcheck`]: the firmware self-check (for now a windowed test tone through microfft).
//! * [`stack`]: stack high-water mark, to see what a board has left of its RAM.
//!
//! Everything here assumes a single core and QEMU with semihosting enabled; the real boards
//! use defmt-rtt and panic-probe instead.
#![no_std]

pub mod checks;
pub mod count;
pub mod exit;
pub mod selfcheck;
pub mod stack;
pub mod stages;
