//! The library's analyzers fed from a recording, exactly as firmware would feed them: the
//! settings that follow from the file's encoding, and the conversion of each chunk into the
//! analyzer's input type. No signal processing happens here.

use leakless::{
    Analyzer, AnalyzerQ15, AnalyzerQ31, Averaging, Config, ConfigError, OverloadPolicy, PushReport,
    Spectrum, Status, Symmetry, WhenDone, Window, WindowQ15, WindowQ31,
};

use crate::failure::{Failure, Outcome};
use crate::input::{Chunk, Encoding, Recording};
use crate::options::{Analysis, Arith};

/// Calls `$body` with `N` and `BINS` bound to the block length's constants.
macro_rules! with_block_len {
    ($n:expr, |$N:ident, $BINS:ident| $body:expr) => {
        match $n {
            64 => {
                const $N: usize = 64;
                const $BINS: usize = 33;
                $body
            }
            128 => {
                const $N: usize = 128;
                const $BINS: usize = 65;
                $body
            }
            256 => {
                const $N: usize = 256;
                const $BINS: usize = 129;
                $body
            }
            512 => {
                const $N: usize = 512;
                const $BINS: usize = 257;
                $body
            }
            1024 => {
                const $N: usize = 1024;
                const $BINS: usize = 513;
                $body
            }
            2048 => {
                const $N: usize = 2048;
                const $BINS: usize = 1025;
                $body
            }
            4096 => {
                const $N: usize = 4096;
                const $BINS: usize = 2049;
                $body
            }
            other => Err(crate::failure::Failure::usage(format!(
                "--n {other}: not supported"
            ))),
        }
    };
}
pub(crate) use with_block_len;

/// Whole blocks in `len` samples.
pub fn block_count(len: u64, block_len: usize, overlap: usize) -> u64 {
    let (n, hop) = (block_len as u64, (block_len - overlap) as u64);
    if len < n {
        0
    } else {
        (len - n) / hop + 1
    }
}

/// Overlap in samples for the options.
pub fn overlap_samples(analysis: &Analysis) -> Outcome<usize> {
    leakless::Overlap::Fraction(analysis.overlap_fraction)
        .samples(analysis.block_len)
        .map_err(|e| Failure::usage(format!("--overlap: {e}")))
}

/// The averaging the options ask for; by default linear over every block of the recording.
pub fn averaging_for(analysis: &Analysis, blocks: u64) -> Averaging {
    analysis.averaging.unwrap_or(Averaging::Linear {
        count: blocks.clamp(1, u32::MAX as u64) as u32,
        when_done: WhenDone::Hold,
    })
}

/// The unit name of the samples after the gain.
pub fn sample_unit(analysis: &Analysis, encoding: Encoding) -> &'static str {
    let name = match (&analysis.unit, encoding) {
        (Some(u), _) => u.clone(),
        (None, Encoding::Pcm { .. }) => "FS".to_string(),
        (None, _) => "units".to_string(),
    };
    // The analyzer keeps a `&'static str`; one small string per run.
    Box::leak(name.into_boxed_str())
}

/// Float samples quantised for a fixed-point path (or PCM rounded to fewer bits): the
/// converter's bits and how many samples were beyond full scale and clipped.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Quantised {
    /// Bits of the codes the analyzer saw.
    pub bits: u32,
    /// Samples beyond full scale, clipped to the end codes.
    pub clipped: u64,
}

enum Path<const N: usize, const BINS: usize> {
    F32(Analyzer<'static, N, BINS>),
    Q15(AnalyzerQ15<'static, N, BINS>),
    Q31(AnalyzerQ31<'static, N, BINS>),
}

/// One analyzer (f32, Q15 or Q31) and what its input needs.
pub struct Engine<const N: usize, const BINS: usize> {
    path: Path<N, BINS>,
    encoding: Encoding,
    /// Full scale per PCM code, `2^-(bits-1)` (1 for float input).
    per_code: f32,
    /// Bits of the codes pushed when the path quantises (`None`: the file's own values).
    quantise_to: Option<u32>,
    clipped: u64,
    samples_pushed: u64,
    file: std::path::PathBuf,
    arith: Arith,
    counts16: Vec<i16>,
    codes32: Vec<i32>,
    floats: Vec<f32>,
}

/// A setting the analyzer refused, as a usage error.
pub fn bad_setting(analysis: &Analysis, e: ConfigError) -> Failure {
    match e {
        ConfigError::Sensitivity => Failure::usage(format!("--gain {:e}: {e}", analysis.gain)),
        ConfigError::WindowParameter => {
            Failure::usage(format!("--window {}: {e}", analysis.window_name))
        }
        other => Failure::usage(format!("bad setting: {other}")),
    }
}

/// Codes of `bits` bits: `2^(bits-1)` to full scale, the top code meaning the converter clipped.
fn counts_config(base: Config, gain: f32, bits: u32) -> Config {
    let full = (1u64 << (bits - 1)) as f32;
    base.with_sensitivity(gain / full)
        .with_full_scale(full - 1.0)
        // Clipped blocks are averaged all the same, with a note.
        .with_overload_policy(OverloadPolicy::Average)
}

impl<const N: usize, const BINS: usize> Engine<N, BINS> {
    /// The analyzer for `analysis` on `recording`'s samples, with `averaging`.
    pub fn new(analysis: &Analysis, recording: &Recording, averaging: Averaging) -> Outcome<Self> {
        let encoding = recording.encoding;
        let base = Config::new(recording.sample_rate_hz as f32)
            .with_overlap_fraction(analysis.overlap_fraction)
            .with_averaging(averaging)
            .with_detrend(analysis.detrend)
            .with_unit(sample_unit(analysis, encoding));
        let gain = analysis.gain;
        let window_error = |e| bad_setting(analysis, e);
        let (path, quantise_to) = match analysis.arith {
            Arith::F32 => {
                let window: &'static Window<N> = Box::leak(Box::new(
                    Window::try_new(analysis.shape).map_err(window_error)?,
                ));
                let config = match encoding {
                    Encoding::Pcm { bits: 16 } => counts_config(base, gain, 16),
                    // Other widths go in as fractions of full scale (an exact power-of-two
                    // scaling): 2^-31 per count of 32-bit PCM is below the sensitivity range.
                    Encoding::Pcm { bits } => {
                        let full = (1u64 << (bits - 1)) as f32;
                        base.with_sensitivity(gain)
                            .with_full_scale((full - 1.0) / full)
                            .with_overload_policy(OverloadPolicy::Average)
                    }
                    Encoding::Float | Encoding::Text => base.with_sensitivity(gain),
                };
                let analyzer = Analyzer::new(window, config).map_err(window_error)?;
                (Path::F32(analyzer), None)
            }
            Arith::Q15 => {
                let window: &'static WindowQ15<N> = Box::leak(Box::new(
                    WindowQ15::try_with_symmetry(analysis.shape, Symmetry::Periodic)
                        .map_err(window_error)?,
                ));
                // The analyzer always sees 16-bit counts, so it gets the counts' settings.
                let config = counts_config(base, gain, 16);
                let analyzer = AnalyzerQ15::new(window, config).map_err(window_error)?;
                let quantise = !matches!(encoding, Encoding::Pcm { bits: 16 });
                (Path::Q15(analyzer), quantise.then_some(16))
            }
            Arith::Q31 => {
                let window: &'static WindowQ31<N> = Box::leak(Box::new(
                    WindowQ31::try_with_symmetry(analysis.shape, Symmetry::Periodic)
                        .map_err(window_error)?,
                ));
                let (config, quantise_to) = match encoding {
                    Encoding::Pcm {
                        bits: bits @ (8 | 16 | 24),
                    } => (counts_config(base, gain, bits as u32), None),
                    // A 24-bit converter's codes: float input, and 32-bit PCM, whose 2^-31 per
                    // count is below the sensitivity range.
                    _ => (counts_config(base, gain, 24), Some(24)),
                };
                let analyzer = AnalyzerQ31::new(window, config).map_err(window_error)?;
                (Path::Q31(analyzer), quantise_to)
            }
        };
        let per_code = match encoding {
            Encoding::Pcm { bits } => 1.0 / (1u64 << (bits - 1)) as f32,
            Encoding::Float | Encoding::Text => 1.0,
        };
        Ok(Self {
            path,
            encoding,
            per_code,
            quantise_to,
            clipped: 0,
            samples_pushed: 0,
            file: recording.path.clone(),
            arith: analysis.arith,
            counts16: Vec::new(),
            codes32: Vec::new(),
            floats: Vec::new(),
        })
    }

    /// Pushes one chunk of a single channel.
    pub fn push(&mut self, chunk: &Chunk<'_>) -> Outcome<PushReport> {
        let report = match (&mut self.path, chunk) {
            // 16-bit PCM: counts, exactly as a converter delivers them.
            (Path::F32(a), Chunk::Pcm(codes)) if self.encoding == (Encoding::Pcm { bits: 16 }) => {
                self.counts16.clear();
                self.counts16.extend(codes.iter().map(|&c| c as i16));
                a.push_counts(&self.counts16)
            }
            // Other widths: fractions of full scale (exact up to 24 bits).
            (Path::F32(a), Chunk::Pcm(codes)) => {
                let per_code = self.per_code;
                self.floats.clear();
                self.floats
                    .extend(codes.iter().map(|&c| c as f32 * per_code));
                a.push(&self.floats)
            }
            (Path::F32(a), Chunk::Float(values)) => a.push(values),
            (Path::Q15(a), chunk) => {
                self.counts16.clear();
                match (chunk, self.quantise_to) {
                    (Chunk::Pcm(codes), None) => {
                        self.counts16.extend(codes.iter().map(|&c| c as i16))
                    }
                    (chunk, _) => {
                        let start = self.samples_pushed;
                        let codes = quantise(chunk, self.encoding, 16, &mut self.clipped)
                            .map_err(|i| non_finite(&self.file, self.arith, start + i, 16))?;
                        self.counts16.extend(codes.map(|c| c as i16));
                    }
                }
                a.push(&self.counts16)
            }
            (Path::Q31(a), Chunk::Pcm(codes)) if self.encoding == (Encoding::Pcm { bits: 16 }) => {
                self.counts16.clear();
                self.counts16.extend(codes.iter().map(|&c| c as i16));
                a.push_counts(&self.counts16)
            }
            (Path::Q31(a), Chunk::Pcm(codes)) if self.quantise_to.is_none() => a.push(codes),
            (Path::Q31(a), chunk) => {
                self.codes32.clear();
                let start = self.samples_pushed;
                let codes = quantise(chunk, self.encoding, 24, &mut self.clipped)
                    .map_err(|i| non_finite(&self.file, self.arith, start + i, 24))?;
                self.codes32.extend(codes);
                a.push(&self.codes32)
            }
        };
        self.samples_pushed += match chunk {
            Chunk::Pcm(c) => c.len(),
            Chunk::Float(f) => f.len(),
        } as u64;
        Ok(report)
    }

    /// The current spectrum.
    pub fn spectrum(
        &self,
        scale: leakless::Scale,
        correction: leakless::Correction,
    ) -> Spectrum<BINS> {
        match &self.path {
            Path::F32(a) => a.spectrum(scale, correction),
            Path::Q15(a) => a.spectrum(scale, correction),
            Path::Q31(a) => a.spectrum(scale, correction),
        }
    }

    /// The analyzer's counters.
    pub fn status(&self) -> Status {
        match &self.path {
            Path::F32(a) => a.status(),
            Path::Q15(a) => a.status(),
            Path::Q31(a) => a.status(),
        }
    }

    /// What the fixed path did to the input: the bits it quantised to and the clipped count.
    pub fn quantised(&self) -> Option<Quantised> {
        self.quantise_to.map(|bits| Quantised {
            bits,
            clipped: self.clipped,
        })
    }
}

fn non_finite(file: &std::path::Path, arith: Arith, index: u64, bits: u32) -> Failure {
    Failure::file(
        file,
        format!(
            "sample {index} is NaN or infinite and has no {bits}-bit code for --arith {}; \
             --arith f32 rejects the blocks that hold such samples instead",
            arith.name()
        ),
    )
}

/// The samples of `chunk` as the codes of a `bits`-bit converter (round to nearest, clip to the
/// code range): float values read 1.0 as full scale, PCM codes are rescaled from their own
/// width. `Err(i)`: sample `i` of the chunk is not finite.
fn quantise<'c>(
    chunk: &'c Chunk<'c>,
    encoding: Encoding,
    bits: u32,
    clipped: &mut u64,
) -> Result<impl Iterator<Item = i32> + 'c, u64> {
    let full = (1i64 << (bits - 1)) as f64;
    let per_unit = match encoding {
        Encoding::Pcm { bits: from } => full / (1i64 << (from - 1)) as f64,
        Encoding::Float | Encoding::Text => full,
    };
    let values: Vec<f64> = match chunk {
        Chunk::Pcm(codes) => codes.iter().map(|&c| c as f64).collect(),
        Chunk::Float(values) => {
            if let Some(i) = values.iter().position(|x| !x.is_finite()) {
                return Err(i as u64);
            }
            values.iter().map(|&x| x as f64).collect()
        }
    };
    let mut beyond = 0;
    let codes: Vec<i32> = values
        .into_iter()
        .map(|x| {
            let code = (x * per_unit).round();
            if code > full - 1.0 || code < -full {
                beyond += 1;
            }
            code.clamp(-full, full - 1.0) as i32
        })
        .collect();
    *clipped += beyond;
    Ok(codes.into_iter())
}
