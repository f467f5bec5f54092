//! The firmware self-check: the pump scenario through the f32, Q15 and Q31 paths at
//! `N = 1024`, Hann, 50 % overlap, a linear average of 8, checked against the scenario's own
//! derived tone list (a consistency check of the chain, not an outside reference) and the
//! fixed paths against the float one.
//!
//! Lines are `fs / N = 25 Hz` apart, so the scenario's low tones crowd together: 1x (24.7 Hz)
//! sits at line 0.99, 2x at 1.98, 3x at 2.96, twice line frequency on line 4 and vane pass
//! (172.9 Hz) at line 6.92. Hann's main lobe is 4 lines wide, so only the vane pass is a tone
//! of its own at this resolution; the checks are chosen accordingly (see each one).

use leakless::analysis::bands::{band_rms, Band, Integration};
use leakless::analysis::peaks::Tone;
use leakless::compare::{snr_db, tone_level_error_db, worst_line_error_db};
use leakless::demo::PumpScenario;
use leakless::spectrum::scale::{rescale, LineGains};
use leakless::{
    Analyzer, AnalyzerQ15, AnalyzerQ31, Averaging, Config, Correction, Scale, Shape, Spectrum,
    SpectrumInfo, WhenDone, Window, WindowQ15, WindowQ31,
};

use crate::checks::Checks;
use crate::pump::{self, Measured, AVERAGES, FULL_SCALE_COUNTS, SAMPLE_RATE_HZ};

/// Block length of the self-check.
pub const N: usize = 1024;
/// Lines of its one-sided spectrum, `N/2 + 1`.
pub const BINS: usize = N / 2 + 1;

/// The f32 Hann window, evaluated by the compiler; a `static`, so it stays in flash.
pub static HANN: Window<N> = Window::new(Shape::Hann);
/// The Q15 Hann window.
pub static HANN_Q15: WindowQ15<N> = WindowQ15::new(Shape::Hann);
/// The Q31 Hann window.
pub static HANN_Q31: WindowQ31<N> = WindowQ31::new(Shape::Hann);

/// The analyzers' settings for the scenario (one `Config` serves all three).
pub fn config(pump: &PumpScenario) -> Config {
    Config::new(SAMPLE_RATE_HZ)
        .with_overlap_fraction(0.5)
        .with_averaging(Averaging::Linear {
            count: AVERAGES,
            when_done: WhenDone::Restart,
        })
        .with_sensitivity(pump::sensitivity(pump))
        .with_full_scale(FULL_SCALE_COUNTS)
        .with_unit("m/s^2")
}

/// What the scenario's own parameters say the analyzers should read.
#[derive(Clone, Copy, Debug)]
pub struct Expected {
    /// 1x, Hz.
    pub running_hz: f32,
    /// 1x, m/s^2 rms.
    pub running_rms: f32,
    /// Vane pass, Hz.
    pub vane_hz: f32,
    /// Vane pass, m/s^2 rms.
    pub vane_rms: f32,
    /// Overall acceleration, m/s^2 rms: tones, impacts and noise.
    pub overall_rms: f32,
}

impl Expected {
    /// From the scenario's tone list, impact train and noise level.
    pub fn of(pump: &PumpScenario) -> Self {
        let tone = |name: &str| pump.tones().iter().find(|t| t.name == name);
        let vane = tone("vane pass");
        let tones_ms: f64 = pump
            .tones()
            .iter()
            .map(|t| t.acceleration_rms_m_s2() * t.acceleration_rms_m_s2())
            .sum();
        // One burst a e^(-s t) sin(w t) holds a^2 w^2 / (4 s (s^2 + w^2)) of squared
        // acceleration times seconds (they die out long before the next: e^(-2 s T) < 1e-9),
        // and `rate` of them arrive a second.
        let imp = pump.impacts();
        let (a, s, w) = (
            imp.amplitude_m_s2,
            imp.decay_per_s(),
            imp.damped_rad_per_s(),
        );
        let impacts_ms = imp.rate_hz * a * a * w * w / (4.0 * s * (s * s + w * w));
        let noise_ms = pump.noise_rms_m_s2() * pump.noise_rms_m_s2();
        Self {
            running_hz: pump.running_speed_hz() as f32,
            running_rms: pump
                .tones()
                .first()
                .map_or(f32::NAN, |t| t.acceleration_rms_m_s2() as f32),
            vane_hz: vane.map_or(f32::NAN, |t| t.frequency_hz as f32),
            vane_rms: vane.map_or(f32::NAN, |t| t.acceleration_rms_m_s2() as f32),
            overall_rms: libm::sqrt(tones_ms + impacts_ms + noise_ms) as f32,
        }
    }
}

/// The tone found nearest `line` (by peak line), if any within `reach` lines.
fn tone_near(tones: &[Tone], line: usize, reach: usize) -> Option<Tone> {
    tones
        .iter()
        .filter(|t| t.peak_line.abs_diff(line) <= reach)
        .min_by_key(|t| t.peak_line.abs_diff(line))
        .copied()
}

/// Interior line `k` of `spectrum` on another scale and correction, through the library's
/// one conversion ([`rescale`]) applied to that line alone (a whole converted copy of the
/// spectrum would cost 2 KiB of the Cortex-M0's stack).
fn interior_line_as<const B: usize>(
    spectrum: &Spectrum<B>,
    k: usize,
    scale: Scale,
    correction: Correction,
) -> f32 {
    let Some(&value) = spectrum.values().get(k) else {
        return f32::NAN;
    };
    // A one-line slice is all "edge" to `rescale`: hand it the interior gains as edge gains.
    let interior = |g: LineGains| LineGains {
        edge: g.interior,
        ..g
    };
    let to = LineGains::of(
        scale,
        correction,
        spectrum.factors(),
        spectrum.sample_rate_hz(),
        spectrum.block_len(),
    );
    let mut line = [value];
    rescale(&mut line, interior(spectrum.gains()), interior(to));
    line[0]
}

/// The level checks on one path's averaged spectrum (energy-corrected power).
#[inline(never)]
pub fn check_spectrum(
    checks: &mut Checks,
    label: &'static str,
    spectrum: &Spectrum<BINS>,
    expected: &Expected,
    blocks: u32,
) -> Option<Tone> {
    checks.set_context(label);
    checks.check(
        ": all 8 blocks averaged",
        blocks == AVERAGES && spectrum.averages() == AVERAGES,
    );
    let tones = pump::tones(label, spectrum);
    let bin = spectrum.bin_width_hz();

    // Running speed. At 25 Hz lines 1x (24.7 Hz) sits 0.012 lines below line 1, so its
    // amplitude-corrected reading there has no scalloping to speak of (0.001 dB); but 2x
    // (49.4 Hz, 0.98 lines above line 1, 80 % of 1x) is not resolved from it and leaks about
    // half its amplitude (0.16 m/s^2) into line 1 with a phase that moves from block to
    // block: incoherently that reads +0.7 dB high, block by block anywhere from -4.5 to
    // +3 dB, and the 8-block power average lands near the incoherent value. Hence +-2 dB
    // on line 1 itself. It fails if 1x is missing (line 1 would hold only the 2x leakage,
    // -7.7 dB), if the frequency axis is off by a line, or for any gross scaling error.
    // (The tone finder rightly merges 1x..2x line frequency into one tone at this
    // resolution; N = 4096 resolves them, see `check_resolved_1x`.)
    let run_line = libm::roundf(expected.running_hz / bin) as usize;
    let line_rms = interior_line_as(spectrum, run_line, Scale::Rms, Correction::Amplitude);
    checks.check(": 1x (24.7 Hz) is on line 1", run_line == 1);
    let db = 20.0 * libm::log10f(line_rms / expected.running_rms);
    checks.close(
        ": 1x: line 1 level (amplitude-corrected) re scenario, dB",
        db,
        0.0,
        2.0,
    );

    // Vane pass: the strongest tone, peak line 7 +- 1, frequency within one line.
    let vane_line = libm::roundf(expected.vane_hz / bin) as usize;
    let vane = tone_near(&tones, vane_line, 1);
    let strongest = tones
        .first()
        .is_some_and(|t| t.peak_line.abs_diff(vane_line) <= 1);
    checks.check(
        ": vane pass (172.9 Hz) is the strongest tone, line 7 +- 1",
        strongest,
    );
    if let Some(t) = vane {
        checks.close(
            ": vane pass frequency, Hz",
            t.frequency_hz,
            expected.vane_hz,
            bin,
        );
        // Level from the power summed over its main lobe (the tone finder), so scalloping
        // (up to 1.42 dB for Hann at half a line) does not enter. What does: the 2x-line tone
        // on line 4 puts 1/6 of its mean square on line 5, inside the vane's lobe: +0.35 %
        // of power, +0.015 dB; broadband noise in 6 lines of 25 Hz, +0.003 dB; Hann's
        // sidelobe power outside the 6 summed lines, -0.0005 dB; the f32 path's rounding
        // ~1e-6. Expected error therefore within +-0.02 dB (measured -0.005 dB); 0.1 dB is 5x that and still
        // catches every scaling mistake (energy vs amplitude correction is 1.76 dB, a lost
        // factor 2 is 3 dB, sum vs N of the window 6 dB).
        let db = 20.0 * libm::log10f(t.rms / expected.vane_rms);
        checks.close(": vane pass level re scenario, dB", db, 0.0, 0.1);
    } else {
        checks.check(": vane pass found", false);
    }

    // Overall RMS by Parseval over all lines but DC. The scenario's mean square is the sum of
    // its tones', the impact train's and the noise's, all derived above. Expected error: the
    // 1x tone (0.388 of 1.45 m/s^2 rms) loses part of its lobe with the DC line (the mean
    // is removed from each block), and the impact train's windowed energy varies from
    // block to block with how 3 or 4 bursts fall under the window; both are within +-1 %
    // of the total (measured +0.06 % on all three paths, see the log). 3 % catches a wrong window
    // correction (Hann's energy vs amplitude correction differ by 22 %) or sensitivity.
    let overall = pump::overall_rms(spectrum);
    checks.close(
        ": overall RMS 0-12.8 kHz re scenario, m/s^2",
        overall,
        expected.overall_rms,
        0.03 * expected.overall_rms,
    );
    let velocity =
        band_rms(spectrum, Band::SEVERITY_10_1000_HZ, Integration::Once).unwrap_or(f32::NAN);
    defmt::info!(
        "{=str}: overall {=f32} m/s^2 rms (scenario {=f32}); velocity 10-1000 Hz {=f32} mm/s rms (line by line; biased at 25 Hz lines, not checked)",
        label,
        overall,
        expected.overall_rms,
        velocity * 1000.0
    );
    checks.set_context("");
    vane
}

/// At `N = 4096` (6.25 Hz lines) 1x is resolved from 2x (3.95 lines apart, a main lobe is 4):
/// the tone finder must report it on line 4 +- 1 within one line of 24.7 Hz, at the
/// scenario's level. Tolerance 0.2 dB: its lobe reaches line 2..6, 2x's lobe starts at line
/// 6 (its own tone, the finder splits the shared line) and the DC line is 4 lines away, so
/// what is left is the neighbours' sidelobe power in the summed lines (-30 dB each: up to
/// +0.05 dB) and noise (+0.001 dB); a lost 1x, or any scaling error, is off by dBs.
pub fn check_resolved_1x<const B: usize>(
    checks: &mut Checks,
    label: &'static str,
    spectrum: &Spectrum<B>,
    expected: &Expected,
) {
    checks.set_context(label);
    let bin = spectrum.bin_width_hz();
    let line = libm::roundf(expected.running_hz / bin) as usize;
    let tones = crate::pump::tones_quiet(spectrum);
    match tone_near(&tones, line, 1) {
        Some(t) => {
            checks.close(
                ": 1x frequency (resolved), Hz",
                t.frequency_hz,
                expected.running_hz,
                bin,
            );
            let db = 20.0 * libm::log10f(t.rms / expected.running_rms);
            checks.close(": 1x level (resolved) re scenario, dB", db, 0.0, 0.2);
        }
        None => {
            checks.check(": 1x found as a tone of its own", false);
        }
    }
    checks.set_context("");
}

/// The bound the fixed-point analyzer's author states for Q15 against f32
/// (`tests/fixed_analyzer.rs`, `q15_bounds`): at most 4 output LSB rms of error per line,
/// one LSB being at most `a_max / 2^14` of line amplitude, so SNR at least
/// `10 log10(sum a^2 / (BINS (4 a_max / 2^14)^2))`, and the worst line at most
/// `20 log10(20 / 2^14)` (-58.3 dB) below the strongest. Computed from the float spectrum.
pub fn q15_bounds<const B: usize>(float: &Spectrum<B>) -> (f32, f32) {
    let (mut signal, mut a_max) = (0.0f64, 0.0f64);
    for k in 0..B {
        let ms = f64::from(float.mean_square(k).unwrap_or(0.0).max(0.0));
        signal += ms;
        a_max = a_max.max(libm::sqrt(ms));
    }
    let lsb = a_max / 16_384.0;
    let noise = B as f64 * (4.0 * lsb) * (4.0 * lsb);
    (
        (10.0 * libm::log10(signal / noise)) as f32,
        (20.0 * libm::log10(20.0 / 16_384.0)) as f32,
    )
}

/// Bounds for a fixed path against float.
#[derive(Clone, Copy, Debug)]
pub struct Bounds {
    /// Minimum SNR over all lines ([`leakless::compare::snr_db`]), dB.
    pub snr_db: f32,
    /// Largest line error re the strongest line, dB.
    pub worst_line_db: f32,
    /// Largest vane-pass level difference (power over its main lobe), dB.
    pub vane_db: f32,
    /// Largest overall RMS difference, dB.
    pub overall_db: f32,
}

/// Checks a fixed path against float with the library's comparison figures.
#[inline(never)]
pub fn check_against_float(
    checks: &mut Checks,
    label: &'static str,
    fixed: &Spectrum<BINS>,
    float: &Spectrum<BINS>,
    vane: Option<Tone>,
    bounds: Bounds,
) {
    checks.set_context(label);
    let snr = snr_db(fixed, float).map_or(f32::NAN, |x| x as f32);
    let worst = worst_line_error_db(fixed, float).ok();
    let worst_db = worst.map_or(f32::NAN, |w| w.error_db as f32);
    let vane_db = vane
        .and_then(|t| tone_level_error_db(fixed, float, t.peak_line).ok())
        .map_or(f32::NAN, |x| x as f32);
    let overall_db = 20.0 * libm::log10f(pump::overall_rms(fixed) / pump::overall_rms(float));
    defmt::info!(
        "{=str} vs f32: SNR {=f32} dB, worst line {=f32} dB re the strongest (line {=u32}), vane pass {=f32} dB, overall {=f32} dB",
        label,
        snr,
        worst_db,
        worst.map_or(0, |w| w.bin as u32),
        vane_db,
        overall_db
    );
    checks.at_least(" vs f32: SNR, dB", snr, bounds.snr_db);
    checks.check(
        " vs f32: worst line within bound",
        worst_db <= bounds.worst_line_db,
    );
    checks.close(" vs f32: vane pass level, dB", vane_db, 0.0, bounds.vane_db);
    checks.close(
        " vs f32: overall RMS, dB",
        overall_db,
        0.0,
        bounds.overall_db,
    );
    checks.set_context("");
}

/// An empty spectrum of the right shape to read into.
#[inline(never)]
pub fn empty_spectrum<const B: usize>(n: usize, window: &leakless::Factors) -> Spectrum<B> {
    let info = SpectrumInfo {
        sample_rate_hz: SAMPLE_RATE_HZ,
        block_len: n,
        factors: *window,
        unit: "m/s^2",
        averages: 0,
    };
    Spectrum::from_squares(&[0.0; B], 0.0, Scale::Power, Correction::Energy, info)
}

/// Logs the configuration and the expectations.
pub fn log_setup(pump: &PumpScenario, expected: &Expected) {
    defmt::info!(
        "scenario: invented pump set (demo data), 16-bit converter at {=f32} Hz, {=f32} m/s^2 per count, chunks of {=u32} samples",
        SAMPLE_RATE_HZ,
        pump::sensitivity(pump),
        pump::CHUNK as u32
    );
    for t in pump.tones() {
        defmt::info!(
            "scenario tone: {=str} {=f32} Hz, {=f32} m/s^2 rms",
            t.name,
            t.frequency_hz as f32,
            t.acceleration_rms_m_s2() as f32
        );
    }
    defmt::info!(
        "scenario: overall {=f32} m/s^2 rms (tones + impacts + noise)",
        expected.overall_rms
    );
    defmt::info!("config (every analyzer): {}", config(pump));
}

/// The Q15 path alone (the Cortex-M0 run): checks, and its measurements.
#[inline(never)]
pub fn run_q15(checks: &mut Checks) -> Measured {
    let pump = PumpScenario::new();
    let expected = Expected::of(&pump);
    log_setup(&pump, &expected);
    // Used in place, by reference: moving 8 KiB out of the Result would need a second
    // copy of it on the 16 KiB core's stack.
    let mut made = AnalyzerQ15::<N, BINS>::new(&HANN_Q15, config(&pump));
    let Ok(q15) = &mut made else {
        checks.check("Q15 analyzer configured", false);
        return Measured::default();
    };
    log_ram::<AnalyzerQ15<N, BINS>>("Q15 N=1024", 2 * N + 2 * N + 8 * BINS);
    let mut out = empty_spectrum::<BINS>(N, HANN_Q15.factors());
    let m = pump::measure::<N, BINS, _>(
        (
            "Q15 N=1024",
            "Q15 N=1024: read-out (scale), once per average",
        ),
        q15,
        &mut out,
    );
    checks.check(
        "Q15: no block rejected",
        q15.status().overloaded == 0 && q15.status().rejected_non_finite == 0,
    );
    log_checksum("Q15 N=1024", q15.raw_power());
    check_spectrum(checks, "Q15", &out, &expected, m.blocks);
    m
}

/// Logs a checksum (FNV-1a) of a fixed analyzer's raw average: integer-only, so it must be
/// the same on every core for the same input (`.ci/boards.sh` compares M0 with M4).
pub fn log_checksum<const B: usize>(label: &str, raw: leakless::spectrum::fixed::RawPower<'_, B>) {
    let mut h = 0x811C_9DC5u32;
    let mut eat = |b: u8| {
        h ^= u32::from(b);
        h = h.wrapping_mul(0x0100_0193);
    };
    for m in raw.mantissas.iter() {
        m.to_le_bytes().into_iter().for_each(&mut eat);
    }
    raw.exponent.to_le_bytes().into_iter().for_each(&mut eat);
    raw.divisor.to_le_bytes().into_iter().for_each(&mut eat);
    defmt::info!("{=str} raw average checksum {=u32:#010x}", label, h);
}

/// Logs `size_of::<T>()` against the bytes of its buffers.
pub fn log_ram<T>(label: &str, buffers: usize) {
    let size = core::mem::size_of::<T>();
    defmt::info!(
        "RAM {=str}: size_of {=u32} B, buffers {=u32} B (+{=f32} %)",
        label,
        size as u32,
        buffers as u32,
        100.0 * (size as f32 - buffers as f32) / buffers as f32
    );
}

/// The three analyzers (the Cortex-M4F run): checks, fixed against float, and measurements
/// `[f32, Q15, Q31]`.
///
/// Fixed against float: SNR and worst line use the bounds the fixed-point analyzer's author
/// states ([`q15_bounds`]; Q31: 115 dB, the f32 path's own 137-140 dB FFT accuracy less 20 dB
/// of margin, `tests/fixed_analyzer.rs`). The vane pass and the overall RMS rest on the
/// strongest lines, where the Q15 error (4 LSB of 2^14 at most) is 2.4e-4 relative,
/// 0.002 dB: bound 0.01 dB. Q31's error is below f32 rounding (~1e-6 dB): bound 0.0001 dB.
#[inline(never)]
pub fn run_all(checks: &mut Checks) -> [Measured; 3] {
    let pump = PumpScenario::new();
    let expected = Expected::of(&pump);
    log_setup(&pump, &expected);
    let mut m = [Measured::default(); 3];

    let mut float_out = empty_spectrum::<BINS>(N, HANN.factors());
    let mut made = Analyzer::<N, BINS>::new(&HANN, config(&pump));
    let vane = if let Ok(a) = &mut made {
        log_ram::<Analyzer<N, BINS>>("f32 N=1024", 4 * N + 4 * N + 4 * BINS);
        m[0] = pump::measure::<N, BINS, _>(
            (
                "f32 N=1024",
                "f32 N=1024: read-out (scale), once per average",
            ),
            a,
            &mut float_out,
        );
        checks.check(
            "f32: no block rejected",
            a.status().rejected_non_finite == 0 && a.status().overloaded == 0,
        );
        defmt::info!(
            "f32 N=1024: the analyzer's own overall_rms {=f32} m/s^2",
            a.overall_rms(false)
        );
        check_spectrum(checks, "f32", &float_out, &expected, m[0].blocks)
    } else {
        checks.check("f32 analyzer configured", false);
        None
    };

    let mut q_out = empty_spectrum::<BINS>(N, HANN_Q15.factors());
    let mut made = AnalyzerQ15::<N, BINS>::new(&HANN_Q15, config(&pump));
    if let Ok(q15) = &mut made {
        log_ram::<AnalyzerQ15<N, BINS>>("Q15 N=1024", 2 * N + 2 * N + 8 * BINS);
        m[1] = pump::measure::<N, BINS, _>(
            (
                "Q15 N=1024",
                "Q15 N=1024: read-out (scale), once per average",
            ),
            q15,
            &mut q_out,
        );
        checks.check(
            "Q15: no block rejected",
            q15.status().overloaded == 0 && q15.status().rejected_non_finite == 0,
        );
        log_checksum("Q15 N=1024", q15.raw_power());
        check_spectrum(checks, "Q15", &q_out, &expected, m[1].blocks);
        let (snr_db, worst_line_db) = q15_bounds(&float_out);
        let bounds = Bounds {
            snr_db,
            worst_line_db,
            vane_db: 0.01,
            overall_db: 0.01,
        };
        check_against_float(checks, "Q15", &q_out, &float_out, vane, bounds);
    } else {
        checks.check("Q15 analyzer configured", false);
    }

    let mut q_out = empty_spectrum::<BINS>(N, HANN_Q31.factors());
    let mut made = AnalyzerQ31::<N, BINS>::new(&HANN_Q31, config(&pump));
    if let Ok(q31) = &mut made {
        log_ram::<AnalyzerQ31<N, BINS>>("Q31 N=1024", 4 * N + 4 * N + 8 * BINS);
        m[2] = pump::measure::<N, BINS, _>(
            (
                "Q31 N=1024",
                "Q31 N=1024: read-out (scale), once per average",
            ),
            q31,
            &mut q_out,
        );
        checks.check(
            "Q31: no block rejected",
            q31.status().overloaded == 0 && q31.status().rejected_non_finite == 0,
        );
        log_checksum("Q31 N=1024", q31.raw_power());
        check_spectrum(checks, "Q31", &q_out, &expected, m[2].blocks);
        let bounds = Bounds {
            snr_db: 115.0,
            // Not stated for Q31; the Q15 bound is 80 dB looser than Q31's SNR bound needs.
            worst_line_db: -100.0,
            vane_db: 0.0001,
            overall_db: 0.0001,
        };
        check_against_float(checks, "Q31", &q_out, &float_out, vane, bounds);
    } else {
        checks.check("Q31 analyzer configured", false);
    }
    m
}
