//! Band and overall levels, and integration to velocity and displacement, against analytic
//! results.

mod support;

use leakless::analysis::bands::{band_rms, overall_rms, Band, Integration};
use leakless::{Analyzer, Averaging, Config, Correction, Detrend, Scale, Shape, WhenDone, Window};
use support::{sine, SplitMix64};

const N: usize = 4096;
const BINS: usize = N / 2 + 1;
static HANN: Window<N> = Window::new(Shape::Hann);
static FLAT: Window<N> = Window::new(Shape::Hft90d);
static RECT: Window<N> = Window::new(Shape::Rectangular);

fn analyzer(window: &'static Window<N>, fs: f32, blocks: u32) -> Analyzer<'static, N, BINS> {
    let config = Config::new(fs)
        .with_averaging(Averaging::Linear {
            count: blocks,
            when_done: WhenDone::Hold,
        })
        .with_detrend(Detrend::None);
    Analyzer::new(window, config).unwrap()
}

// Textbook relation (common practice; numbers computed with numpy 2.4.6):
// a sinusoid's velocity is a / (2 pi f), so 1 g rms (9.80665 m/s^2, exact) at 100 Hz is
// 15.6078 mm/s rms, and its displacement a / (2 pi f)^2 = 24.84 um rms.
#[test]
fn one_g_at_100_hz_is_15_6_mm_per_s() {
    // 1 Hz lines, so the tone's main lobe (lines 98..=102 under Hann) sits where 1/f^2 is
    // nearly flat: the residual from integrating each line at its own frequency is
    // 3 * var / f^2 with a lobe variance of 1/3 line^2 (Hann on a line): 1e-4 relative.
    let fs = 4096.0;
    let g = 9.806_65;
    let x = sine(N * 4, g * 2f64.sqrt(), 100.0, fs as f64);
    for window in [&HANN, &FLAT] {
        let mut a = analyzer(window, fs, 4);
        a.push(&x);
        let s = a.spectrum(Scale::Rms, Correction::Energy);
        let band = Band::SEVERITY_10_1000_HZ;
        let acc = band_rms(&s, band, Integration::None).unwrap();
        let vel_mm_s = band_rms(&s, band, Integration::Once).unwrap() * 1e3;
        let disp_um = band_rms(&s, band, Integration::Twice).unwrap() * 1e6;
        let expected_disp_um = g / (2.0 * std::f64::consts::PI * 100.0).powi(2) * 1e6;
        println!(
            "{:?}: {acc} m/s^2, {vel_mm_s} mm/s, {disp_um} um",
            window.shape()
        );
        // f32 accumulation over 4 blocks: 1e-5 relative.
        assert!((acc as f64 - g).abs() < 1e-5 * g, "{acc}");
        // 1e-4 from the lobe spread (above) for Hann; the flat top's lobe is 4x wider
        // (variance ~ 1.6 line^2): 5e-4.
        assert!(
            (vel_mm_s as f64 - 15.6078).abs() < 5e-4 * 15.6078,
            "{vel_mm_s}"
        );
        assert!((disp_um as f64 - expected_disp_um).abs() < 1e-3 * expected_disp_um);
    }
}

// Textbook relation (common practice): 1 m/s^2 at 159.155 Hz is 1 mm/s.
#[test]
fn one_m_per_s2_at_159_hz_is_1_mm_per_s() {
    let fs = 4096.0;
    let f = 1000.0 / (2.0 * std::f64::consts::PI);
    let x = sine(N * 2, 2f64.sqrt(), f, fs as f64);
    let mut a = analyzer(&FLAT, fs, 2);
    a.push(&x);
    let s = a.spectrum(Scale::Psd, Correction::Energy);
    let v = band_rms(&s, Band::new(100.0, 220.0).unwrap(), Integration::Once).unwrap() * 1e3;
    // Off a line (159.155 Hz): the flat top's lobe spans about +-2.5 lines: 5e-4.
    assert!((v - 1.0).abs() < 5e-4, "{v} mm/s");
}

// Parseval (common practice): with a rectangular window and no detrend, the energy-corrected
// lines of one block sum to the block's mean square, exactly but for f32 rounding.
#[test]
fn overall_level_is_the_time_domain_rms() {
    let mut rng = SplitMix64(11);
    let x: Vec<f32> = (0..N).map(|_| (0.3 + rng.gaussian()) as f32).collect();
    let mut a = analyzer(&RECT, 1000.0, 1);
    a.push(&x);
    let s = a.spectrum(Scale::Peak, Correction::Amplitude);
    let mean_square: f64 = x.iter().map(|&v| (v as f64).powi(2)).sum::<f64>() / N as f64;
    let mean: f64 = x.iter().map(|&v| v as f64).sum::<f64>() / N as f64;
    let ac_rms = (mean_square - mean * mean).sqrt();
    let ours = overall_rms(&s) as f64;
    // f32 FFT of 4096 points: about 1e-6 relative error in power.
    assert!((ours - ac_rms).abs() < 1e-5 * ac_rms, "{ours} vs {ac_rms}");
    let with_dc = band_rms(&s, Band::new(0.0, 500.0).unwrap(), Integration::None).unwrap();
    assert!((with_dc as f64 - mean_square.sqrt()).abs() < 1e-5 * mean_square.sqrt());
}

// White noise of variance sigma^2 has sigma^2 * (band / (fs/2)) in a band (scipy 1.17.1
// `signal.welch`, tests/reference/spectra_examples.csv example C: sigma 0.1, fs 1024, lines
// 10..=100 Hz -> 0.042159 expected).
#[test]
fn white_noise_band_level() {
    let (fs, sigma) = (1024.0f32, 0.1);
    let n_small = 1024;
    let mut rng = SplitMix64(2024);
    static HANN_1K: Window<1024> = Window::new(Shape::Hann);
    let config = Config::new(fs)
        .with_averaging(Averaging::Linear {
            count: 1000,
            when_done: WhenDone::Hold,
        })
        .with_detrend(Detrend::None);
    let mut a: Analyzer<'_, 1024, 513> = Analyzer::new(&HANN_1K, config).unwrap();
    let x: Vec<f32> = (0..n_small * 1000)
        .map(|_| (sigma * rng.gaussian()) as f32)
        .collect();
    a.push(&x);
    let s = a.spectrum(Scale::Psd, Correction::Energy);
    let rms = band_rms(&s, Band::new(10.0, 100.0).unwrap(), Integration::None).unwrap() as f64;
    // 91 lines x 1000 averages: the band power's relative standard deviation is about
    // 1/sqrt(91 * 1000 / 1.5) (Hann's neighbouring lines are correlated, ENBW 1.5) = 0.41 %,
    // 0.2 % in rms; 4 sigma = 0.8 %.
    assert!((rms - 0.042159).abs() < 0.008 * 0.042159, "{rms}");
}

#[test]
fn bad_bands_are_typed_errors() {
    use leakless::ConfigError;
    assert_eq!(Band::new(10.0, 5.0), Err(ConfigError::Frequency));
    assert_eq!(Band::new(-1.0, 5.0), Err(ConfigError::Frequency));
    assert_eq!(Band::new(f32::NAN, 5.0), Err(ConfigError::Frequency));
    assert_eq!(Band::new(1.0, f32::INFINITY), Err(ConfigError::Frequency));
    let mut a = analyzer(&HANN, 1000.0, 1);
    a.push(&[0.0; N]);
    let s = a.spectrum(Scale::Power, Correction::Energy);
    // Above Nyquist, and between two lines.
    assert_eq!(
        band_rms(&s, Band::new(600.0, 700.0).unwrap(), Integration::None),
        Err(ConfigError::Frequency)
    );
    assert_eq!(
        band_rms(&s, Band::new(0.1, 0.2).unwrap(), Integration::None),
        Err(ConfigError::Frequency)
    );
}
