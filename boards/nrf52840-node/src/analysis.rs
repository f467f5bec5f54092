//! The analysis: `leakless::Analyzer` (f32, on the Cortex-M4F's FPU) over the blocks the
//! sampler hands over, N = 1024, Hann, 50 % overlap, a linear average of 8 blocks; after each
//! average, the strongest lines (tone finder, levels from the power in each main lobe) and
//! the overall levels: acceleration RMS over all lines and velocity RMS 10-1000 Hz
//! (`analysis::bands`, integrated line by line).

use leakless::analysis::bands::{band_rms, Band, Integration};
use leakless::analysis::peaks::{strongest_tones, Tone, ToneSearch};
use leakless::{
    Analyzer, Averaging, Config, ConfigError, Correction, Scale, Shape, Spectrum, SpectrumInfo,
    WhenDone, Window,
};

/// Block length.
pub const N: usize = 1024;
/// Lines of the one-sided spectrum, `N/2 + 1`.
pub const BINS: usize = N / 2 + 1;
/// Blocks per linear average.
pub const AVERAGES: u32 = 8;
/// Lines reported per average.
pub const TONES: usize = 3;

/// Standard gravity, m/s^2 per g.
pub const STANDARD_GRAVITY: f32 = 9.806_65;

/// Hann, evaluated by the compiler; a `static` so the table stays in flash.
static HANN: Window<N> = Window::new(Shape::Hann);

/// What one finished average gave.
#[derive(Clone, Debug)]
pub struct Summary {
    /// Blocks in the average.
    pub averages: u32,
    /// Overall acceleration, m/s^2 rms, all lines but DC.
    pub overall_rms: f32,
    /// Velocity 10-1000 Hz, mm/s rms.
    pub velocity_mm_s: f32,
    /// The strongest lines, strongest first.
    pub tones: heapless::Vec<Tone, TONES>,
}

/// The analyzer and the spectrum it is read into (both live in the task's static storage).
pub struct Node {
    analyzer: Analyzer<'static, N, BINS>,
    spectrum: Spectrum<BINS>,
    search: ToneSearch,
}

impl Node {
    /// An analyzer for counts of `m_s2_per_count` at `sample_rate_hz`.
    pub fn new(sample_rate_hz: f32, m_s2_per_count: f32) -> Result<Self, ConfigError> {
        let config = Config::new(sample_rate_hz)
            .with_overlap_fraction(0.5)
            .with_averaging(Averaging::Linear {
                count: AVERAGES,
                when_done: WhenDone::Restart,
            })
            .with_sensitivity(m_s2_per_count)
            .with_full_scale(32_767.0) // the sensor's clip codes, in counts
            .with_unit("m/s^2");
        let analyzer = Analyzer::new(&HANN, config)?;
        let info = SpectrumInfo {
            sample_rate_hz,
            block_len: N,
            factors: *HANN.factors(),
            unit: "m/s^2",
            averages: 0,
        };
        let spectrum =
            Spectrum::from_squares(&[0.0; BINS], 0.0, Scale::Power, Correction::Energy, info);
        let search = ToneSearch::for_shape(Shape::Hann).ok_or(ConfigError::WindowParameter)?;
        Ok(Self {
            analyzer,
            spectrum,
            search,
        })
    }

    /// Forgets buffered samples and the running average (after a gap in the stream).
    pub fn restart(&mut self) {
        self.analyzer.reset();
    }

    /// Pushes counts; returns the summary when they complete an average.
    pub fn push(&mut self, counts: &[i16]) -> Option<Summary> {
        let report = self.analyzer.push_counts(counts);
        if report.rejected > 0 {
            defmt::warn!("{=u32} block(s) rejected (overload)", report.rejected);
        }
        if report.averages_completed == 0 || !self.analyzer.is_done() {
            return None;
        }
        self.analyzer
            .read_into(&mut self.spectrum, Scale::Power, Correction::Energy);
        let tones =
            strongest_tones::<TONES, BINS>(&self.spectrum, &self.search).unwrap_or_default();
        let overall_rms = libm::sqrtf(self.spectrum.values().iter().skip(1).sum());
        let velocity = band_rms(&self.spectrum, Band::SEVERITY_10_1000_HZ, Integration::Once)
            .unwrap_or(f32::NAN);
        Some(Summary {
            averages: self.spectrum.averages(),
            overall_rms,
            velocity_mm_s: velocity * 1000.0,
            tones,
        })
    }
}
