//! Construction and read-out of the fixed-point analyzers: the only part of them that uses
//! floating point (settings arrive as `f32`, and spectra leave as `f32` through the shared
//! scale machinery). Nothing here runs per block.
#![allow(clippy::float_arithmetic)]

use super::bfp::{bit_length, PowerAverage};
use super::to_f32::PowerScaler;
use super::{Blocks, FixedAnalyzer, FixedWindow};
use crate::error::ConfigError;
use crate::fft::fixed::{MAX_LEN, MIN_LEN};
use crate::spectrum::condition::Conditioning;
use crate::spectrum::config::{Config, Status};
use crate::spectrum::feed::Framing;
use crate::spectrum::frame::Framer;
use crate::spectrum::scale::{
    overall_rms_of_sums, Correction, LineGains, Scale, Spectrum, SpectrumInfo,
};

/// The averaged power as the analyzer holds it: line `k`'s mean `|X[k]|^2` in input units
/// (counts squared, before any window correction or one-sided fold) is
/// `mantissas[k] * 2^exponent / divisor`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct RawPower<'s, const BINS: usize> {
    /// One mantissa per line, DC first.
    pub mantissas: &'s [u64; BINS],
    /// The exponent shared by all lines.
    pub exponent: i32,
    /// Blocks summed (linear average), else 1.
    pub divisor: u32,
}

/// Whether [`FixedAnalyzer::read_into`] computes power-like lines in integers: everywhere but
/// on Arm cores built for the hard-float ABI, whose FPU makes the float form shorter (on a
/// Cortex-M4F, 39,680 instructions per 1024 read-out against 54,600 in integers). The two
/// give the same bits; the host tests run the integer form.
const INTEGER_READ_OUT: bool = !cfg!(all(target_arch = "arm", target_abi = "eabihf"));

/// `log2(1 + i / 32)` in Q16 for `i = 0..=32`, for the integer level read-out.
const LOG2_TABLE_Q16: [i64; 33] = {
    let mut t = [0i64; 33];
    let mut i = 0;
    while i <= 32 {
        let x = 1.0 + i as f64 / 32.0;
        let v = crate::math::ln(x) / core::f64::consts::LN_2 * 65536.0;
        t[i] = (v + 0.5) as i64;
        i += 1;
    }
    t
};

/// `1000 log10(2)` in Q16: hundredths of a dB of power per bit of `log2`.
const DB_X100_PER_BIT_Q16: i64 = 19_728_302;

/// `log2(v)` in Q16 for `v > 0`: the bit position plus a table interpolated linearly over
/// the next 5 + 16 bits (error below 2e-4 bit, 0.0006 dB).
fn log2_q16(v: u64) -> i64 {
    let integer = bit_length(v) as i64 - 1;
    let normalised = v << (63 - integer as u32); // top bit at 63
    let index = ((normalised >> 58) & 31) as usize;
    let fraction = ((normalised >> 42) & 0xFFFF) as i64;
    let (low, high) = (LOG2_TABLE_Q16[index], LOG2_TABLE_Q16[index + 1]);
    (integer << 16) + low + (((high - low) * fraction) >> 16)
}

impl<'a, W: FixedWindow<N>, const N: usize, const BINS: usize> FixedAnalyzer<'a, W, N, BINS> {
    /// An analyzer over `window` (borrowed: the table stays in flash) with `config`, or the
    /// first setting that cannot work: the same checks and [`ConfigError`]s as the float
    /// [`Analyzer::new`](crate::spectrum::analyzer::Analyzer::new).
    pub fn new(window: &'a W, config: Config) -> Result<Self, ConfigError> {
        const {
            assert!(
                N.is_power_of_two() && N >= MIN_LEN && N <= MAX_LEN,
                "N must be a power of two from 64 to 4096"
            );
            assert!(BINS == N / 2 + 1, "BINS must be N/2 + 1");
        }
        let overlap = config.validate(N, window.window_factors())?;
        let framer = Framer::new(overlap)?;
        let (reciprocal_mantissa, reciprocal_shift) = match config.averaging {
            crate::Averaging::Exponential {
                time_constant_blocks,
            } => reciprocal_q31(time_constant_blocks as f64),
            _ => (0, 0),
        };
        let conditioning = Conditioning::new(
            config.detrend,
            config.sensitivity,
            config.full_scale,
            config.overload,
        )?;
        // |x| >= full_scale for an integer x is |x| >= ceil(full_scale); no integer sample
        // reaches a limit above 2^32.
        let overload_at = config
            .full_scale
            .map(|fs| libm::ceil(fs as f64))
            .filter(|&limit| limit <= 4_294_967_296.0)
            .map(|limit| limit as u64);
        Ok(Self {
            framer,
            blocks: Blocks {
                window,
                block: [Default::default(); N],
                average: PowerAverage::new(config.averaging, reciprocal_mantissa, reciprocal_shift),
                conditioning,
                overload_at,
                config,
                status: Status::default(),
            },
        })
    }
}

impl<'a, W: FixedWindow<N>, const N: usize, const BINS: usize, F: Framing>
    FixedAnalyzer<'a, W, N, BINS, F>
{
    /// The current average on `scale` with `correction`, in engineering units: the same
    /// [`Spectrum`] the float analyzer gives (through [`Spectrum::from_squares`]). All zeros,
    /// with `averages() == 0`, before the first accepted block.
    pub fn spectrum(&self, scale: Scale, correction: Correction) -> Spectrum<BINS> {
        let mut out = Spectrum::from_squares(&[0.0; BINS], 0.0, scale, correction, self.info());
        self.read_into(&mut out, scale, correction);
        out
    }

    /// [`FixedAnalyzer::spectrum`] into an existing spectrum (no temporary on the stack).
    ///
    /// On power-like scales (power, PSD), on cores without an FPU, every line is computed in
    /// integers, bit for bit the value the float form `(m as f32 * 2^-bits) * factor` gives
    /// (see `to_f32.rs`), instead of two soft-float calls: on a Cortex-M0 at N = 1024,
    /// 79,750 instructions instead of 215,250 (`boards/README.md`). Amplitude scales take the
    /// float form (a square root per line).
    pub fn read_into(&self, out: &mut Spectrum<BINS>, scale: Scale, correction: Correction) {
        // Normalised by the peak, so every value is at most 1 and the gain carries the range.
        let bits = self.blocks.average.peak_bits() as i32;
        let unit = libm::ldexpf(1.0, -bits);
        let mantissas = self.blocks.average.mantissas();
        let gain = self.squares_gain(bits);
        out.set_converted(
            gain,
            scale,
            correction,
            self.info(),
            |values, conversion| {
                let float = |k: usize, m: u64| conversion.apply(m as f32 * unit, k, BINS);
                let power = conversion.power_factors().filter(|_| INTEGER_READ_OUT);
                let scalers = power.and_then(|(interior, edge)| {
                    Some((
                        PowerScaler::new(interior, -bits)?,
                        PowerScaler::new(edge, -bits)?,
                    ))
                });
                let Some((interior, edge)) = scalers else {
                    for (k, (value, &m)) in values.iter_mut().zip(mantissas).enumerate() {
                        *value = float(k, m);
                    }
                    return;
                };
                for (k, (value, &m)) in values.iter_mut().zip(mantissas).enumerate() {
                    let scaler = if k == 0 || k + 1 == BINS {
                        &edge
                    } else {
                        &interior
                    };
                    *value = scaler.scale(m).unwrap_or_else(|| float(k, m));
                }
            },
        );
    }

    /// `squares[k] = gain * mean |X[k]|^2` (engineering units^2) for mantissas scaled by
    /// `2^-bits`; 0 when nothing is averaged (which reads as zeros).
    fn squares_gain(&self, bits: i32) -> f64 {
        if self.blocks.average.averaged() == 0 || bits == 0 {
            return 0.0;
        }
        let s = self.blocks.conditioning.sensitivity() as f64;
        let power_per_unit = libm::ldexp(1.0, self.blocks.average.exponent() + bits)
            / self.blocks.average.divisor() as f64
            * (s * s);
        1.0 / power_per_unit
    }

    /// Every line's level in hundredths of a dB on `scale` with `correction`:
    /// `1000 log10(value)` for power-like scales (re 1 unit^2, or unit^2/Hz) and
    /// `2000 log10(value)` for amplitudes (re 1 unit, or unit/sqrt(Hz)) — the same number,
    /// since an amplitude is the square root of its power. `i32::MIN` for a line with no
    /// power. Per line it is integer arithmetic only (a bit scan, a table, one 64-bit
    /// multiply); the scale's two constants take a few float operations per call.
    pub fn level_db_x100(&self, out: &mut [i32; BINS], scale: Scale, correction: Correction) {
        let info = self.info();
        let gains = LineGains::of(
            scale,
            correction.effective(scale),
            &info.factors,
            info.sample_rate_hz,
            N,
        );
        let s = self.blocks.conditioning.sensitivity() as f64;
        let common = s * s / self.blocks.average.divisor() as f64;
        let offset_q16 = |gain: f64| (1000.0 * libm::log10(gain * common) * 65536.0) as i64;
        let (interior, edge) = (offset_q16(gains.interior), offset_q16(gains.edge));
        let exponent_q16 = (self.blocks.average.exponent() as i64) << 16;
        let nothing = self.blocks.average.averaged() == 0;
        for (k, (level, &m)) in out
            .iter_mut()
            .zip(self.blocks.average.mantissas())
            .enumerate()
        {
            if m == 0 || nothing {
                *level = i32::MIN;
                continue;
            }
            let offset = if k == 0 || k + 1 == BINS {
                edge
            } else {
                interior
            };
            let log2 = log2_q16(m) + exponent_q16;
            let db_q16 = ((log2 * DB_X100_PER_BIT_Q16) >> 16) + offset;
            *level = ((db_q16 + (1 << 15)) >> 16) as i32;
        }
    }

    /// The averaged power in its own representation (see [`RawPower`]).
    pub fn raw_power(&self) -> RawPower<'_, BINS> {
        RawPower {
            mantissas: self.blocks.average.mantissas(),
            exponent: self.blocks.average.exponent(),
            divisor: self.blocks.average.divisor(),
        }
    }

    /// Overall RMS level in engineering units from the averaged power (Parseval: the sum of
    /// the energy-corrected power over all lines), with or without the DC line.
    pub fn overall_rms(&self, include_dc: bool) -> f32 {
        let bits = self.blocks.average.peak_bits() as i32;
        let unit = libm::ldexp(1.0, -bits);
        let m = self.blocks.average.mantissas();
        let interior: f64 = m[1..BINS - 1].iter().map(|&v| v as f64 * unit).sum();
        let dc = if include_dc { m[0] as f64 * unit } else { 0.0 };
        let edges = dc + m[BINS - 1] as f64 * unit;
        overall_rms_of_sums(interior, edges, self.squares_gain(bits), &self.info())
    }

    /// What a spectrum read now knows besides its values.
    pub fn info(&self) -> SpectrumInfo {
        SpectrumInfo {
            sample_rate_hz: self.blocks.config.sample_rate_hz,
            block_len: N,
            factors: *self.blocks.window.window_factors(),
            unit: self.blocks.config.unit,
            averages: self.blocks.average.averaged(),
        }
    }

    /// Line spacing `fs / N`, Hz.
    pub fn bin_width_hz(&self) -> f32 {
        self.blocks.config.sample_rate_hz / N as f32
    }
}

/// `1 / tau` as `m * 2^-(31 + s)` with `2^30 <= m <= 2^31` (31 significant bits).
fn reciprocal_q31(tau: f64) -> (u64, i32) {
    let mut shift = 0;
    let mut scaled = 2_147_483_648.0 / tau;
    while scaled < 1_073_741_824.0 && shift < 200 {
        scaled *= 2.0;
        shift += 1;
    }
    (libm::round(scaled) as u64, shift)
}

#[cfg(test)]
mod tests {
    use super::*;

    // reference: libm 0.2 log2 (< 1 ulp); the table interpolation is within 2e-4 bit.
    #[test]
    fn log2_is_accurate() {
        for v in [
            1u64,
            2,
            3,
            5,
            1000,
            123_456_789,
            u64::MAX,
            1 << 40,
            (1 << 40) + 12345,
        ] {
            let got = log2_q16(v) as f64 / 65536.0;
            let want = libm::log2(v as f64);
            assert!((got - want).abs() < 2e-4, "{v}: {got} vs {want}");
        }
        assert_eq!(log2_q16(1), 0);
        assert_eq!(log2_q16(1 << 20), 20 << 16);
    }

    #[test]
    fn reciprocal_keeps_31_bits() {
        assert_eq!(reciprocal_q31(1.0), (1 << 31, 0));
        assert_eq!(reciprocal_q31(4.0), (1 << 30, 1));
        let (m, s) = reciprocal_q31(1e6);
        let r = m as f64 / libm::ldexp(1.0, 31 + s);
        assert!((r * 1e6 - 1.0).abs() < 1e-9 && m >= 1 << 30);
    }
}
