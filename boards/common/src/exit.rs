//! How a QEMU run ends: the process exit code of `qemu-system-arm` is the firmware's.
//!
//! semihosting's `SYS_EXIT_EXTENDED` makes QEMU exit with exactly the code given, and the
//! board runner (`bash -o pipefail`) keeps it through the pipe into `defmt-print`.

use cortex_m_rt::{exception, ExceptionFrame};

/// All self-checks passed.
pub const PASS: i32 = 0;
/// At least one self-check failed (or none ran).
pub const CHECK_FAILED: i32 = 1;
/// The firmware panicked.
pub const PANIC: i32 = 101;
/// A HardFault (on the M4 also every escalated UsageFault, BusFault or MemManage fault).
pub const HARD_FAULT: i32 = 102;

/// Ends the QEMU run with `code`.
pub fn exit(code: i32) -> ! {
    semihosting::process::exit(code)
}

#[panic_handler]
fn panic(info: &core::panic::PanicInfo) -> ! {
    defmt::error!("panic: {}", defmt::Display2Format(info));
    exit(PANIC)
}

#[exception]
unsafe fn HardFault(frame: &ExceptionFrame) -> ! {
    // SAFETY: cortex-m-rt requires the handler to be declared `unsafe`; it only reads the
    // stacked frame that the hardware pushed and then ends the run.
    defmt::error!(
        "HardFault at pc={=u32:#010x} lr={=u32:#010x}",
        frame.pc(),
        frame.lr()
    );
    exit(HARD_FAULT)
}

/// Executes a permanently undefined instruction, to prove the HardFault path (feature
/// `force-fault` of the boards).
pub fn force_fault() -> ! {
    cortex_m::asm::udf()
}
