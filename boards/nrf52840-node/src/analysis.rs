//! What the analysis task does with a block, for now: counts to m/s^2, mean removed, the
//! overall RMS, then the Hann window, microfft, and the strongest line with its
//! amplitude-corrected level. This whole module is what `leakless::Analyzer` will replace.

use leakless::window::{Shape, Window};
use microfft::Complex32;

/// Block length.
pub const N: usize = 1024;
const BINS: usize = N / 2;

/// Standard gravity, m/s^2 per g.
pub const STANDARD_GRAVITY: f32 = 9.806_65;

/// Hann, evaluated by the compiler; a `static` so the table stays in flash.
static HANN: Window<N> = Window::new(Shape::Hann);

/// What one block gave.
#[derive(Clone, Copy, Debug, defmt::Format)]
pub struct Summary {
    /// Overall RMS of the block, m/s^2, mean removed.
    pub rms: f32,
    /// Line of the strongest component (DC excluded).
    pub peak_line: u16,
    /// Its frequency, Hz.
    pub peak_hz: f32,
    /// Its amplitude (0-peak), m/s^2, amplitude-corrected for the window.
    pub peak_amplitude: f32,
}

/// Scales `counts` by `scale` (m/s^2 per count) into `work` with the mean removed, and
/// returns the RMS.
pub fn load(counts: &[i16; N], scale: f32, work: &mut [f32; N]) -> f32 {
    let mut sum = 0i32;
    for &c in counts {
        sum += i32::from(c); // 1024 * 32768 fits in i32 with room to spare
    }
    let mean = sum as f32 / N as f32;
    let mut square_sum = 0.0f32;
    for (w, &c) in work.iter_mut().zip(counts) {
        let x = (f32::from(c) - mean) * scale;
        *w = x;
        square_sum += x * x;
    }
    libm::sqrtf(square_sum / N as f32)
}

/// Windows `work` in place, transforms it, and finds the strongest line.
pub fn spectrum_peak(work: &mut [f32; N], rms: f32, sample_rate_hz: f32) -> Summary {
    for (x, w) in work.iter_mut().zip(HANN.table()) {
        *x *= *w;
    }
    let spectrum: &[Complex32; BINS] = microfft::real::rfft_1024(work);
    let power = |c: &Complex32| c.re * c.re + c.im * c.im;
    let mut best = 1;
    for k in 2..BINS {
        if power(&spectrum[k]) > power(&spectrum[best]) {
            best = k;
        }
    }
    let sum = HANN.factors().sum as f32;
    Summary {
        rms,
        peak_line: best as u16,
        peak_hz: best as f32 * sample_rate_hz / N as f32,
        peak_amplitude: 2.0 * libm::sqrtf(power(&spectrum[best])) / sum,
    }
}
