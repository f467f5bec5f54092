//! The stages timed on every board, each logged as `insns[i] name: count`.
//!
//! Today these are the building blocks (window multiply, microfft, peak search); the
//! analyzer stages of the library will be added here the same way, one `count::stage` each.

use core::hint::black_box;

use crate::count;
use crate::selfcheck::{self, HANN, N};

/// Times the building blocks on `block` (its contents are overwritten).
pub fn run(block: &mut [f32; N]) {
    selfcheck::tone(block, selfcheck::AMPLITUDE, 2 * 64);
    count::stage("hann window x 1024 (f32, Window<1024> table)", || {
        selfcheck::apply_window(black_box(&mut *block), &HANN)
    });
    count::stage("microfft rfft_1024 (f32)", || {
        black_box(microfft::real::rfft_1024(black_box(&mut *block)));
    });
    let spectrum = microfft::real::rfft_1024(block); // a second transform: any data will do
    count::stage("peak search over 512 lines", || {
        black_box(selfcheck::peak(black_box(&*spectrum)));
    });
}
