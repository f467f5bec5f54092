//! The pump scenario through an analyzer, as the firmware of a vibration node would run it.
//!
//! The library's invented demo scenario ([`PumpScenario`], a pump set with its derived tones)
//! is generated as a 16-bit converter at 25.6 kHz would deliver it, in 256-sample DMA-sized
//! chunks, and pushed into one of three analyzers of the library: [`Analyzer`] (f32),
//! [`AnalyzerQ15`] or [`AnalyzerQ31`]. Every one runs Hann, 50 % overlap, a linear average
//! of 8.
//!
//! Each path is fed twice from the start of the scenario: once through its plain `push`,
//! timing every call (the pipeline's cost per block, framing included), and once through its
//! probe, timing every stage of every block. The generator is timed apart: it is test input,
//! not part of the budget (on the Cortex-M0 it runs in soft float).
//!
//! The scenario is demo data: the checks in [`crate::selfcheck`] compare the analyzers with
//! the scenario's *own* tone list, which proves the chain is consistent, not that it is right
//! against an outside reference.

use core::hint::black_box;

use leakless::analysis::peaks::{strongest_tones, Tone, ToneSearch};
use leakless::demo::PumpScenario;
use leakless::{Analyzer, AnalyzerQ15, AnalyzerQ31, Correction, Scale, Shape, Spectrum, Stage};

use crate::count;
use crate::probe::{self, StageCounter};

/// Sample rate of the scenario's converter, Hz.
pub const SAMPLE_RATE_HZ: f32 = 25_600.0;
/// Samples per push: a DMA half-buffer.
pub const CHUNK: usize = 256;
/// Blocks per linear average.
pub const AVERAGES: u32 = 8;
/// Converter clip code: full scale for overload detection, in counts.
pub const FULL_SCALE_COUNTS: f32 = 32_767.0;
/// Tones logged per spectrum.
pub const TONES: usize = 6;

/// Engineering units (m/s^2) per count of the scenario's converter.
pub fn sensitivity(pump: &PumpScenario) -> f32 {
    (1.0 / (f64::from(pump.counts_per_volt()) * pump.volts_per_m_s2())) as f32
}

/// What the driver needs of an analyzer path.
pub trait Path<const BINS: usize> {
    /// Pushes counts, calling `probe` at every stage boundary.
    fn push_probed(&mut self, counts: &[i16], probe: &mut impl FnMut(Stage));
    /// Pushes counts without a probe.
    fn push(&mut self, counts: &[i16]);
    /// The linear average has all its blocks.
    fn is_done(&self) -> bool;
    /// Forgets buffered samples and the average.
    fn reset(&mut self);
    /// The average as energy-corrected power (mean square per line, units^2).
    fn read(&self, out: &mut Spectrum<BINS>);
}

impl<const N: usize, const BINS: usize> Path<BINS> for Analyzer<'_, N, BINS> {
    fn push_probed(&mut self, counts: &[i16], probe: &mut impl FnMut(Stage)) {
        // push_probed takes f32 samples; convert as push_counts does, in short pieces.
        let mut converted = [0.0f32; 64];
        for piece in counts.chunks(converted.len()) {
            let part = &mut converted[..piece.len()];
            for (f, &c) in part.iter_mut().zip(piece) {
                *f = f32::from(c);
            }
            Analyzer::push_probed(self, part, probe);
        }
    }
    fn push(&mut self, counts: &[i16]) {
        self.push_counts(counts);
    }
    fn is_done(&self) -> bool {
        Analyzer::is_done(self)
    }
    fn reset(&mut self) {
        Analyzer::reset(self);
    }
    fn read(&self, out: &mut Spectrum<BINS>) {
        self.read_into(out, Scale::Power, Correction::Energy);
    }
}

impl<const N: usize, const BINS: usize> Path<BINS> for AnalyzerQ15<'_, N, BINS> {
    fn push_probed(&mut self, counts: &[i16], probe: &mut impl FnMut(Stage)) {
        AnalyzerQ15::push_probed(self, counts, probe);
    }
    fn push(&mut self, counts: &[i16]) {
        AnalyzerQ15::push(self, counts);
    }
    fn is_done(&self) -> bool {
        AnalyzerQ15::is_done(self)
    }
    fn reset(&mut self) {
        AnalyzerQ15::reset(self);
    }
    fn read(&self, out: &mut Spectrum<BINS>) {
        self.read_into(out, Scale::Power, Correction::Energy);
    }
}

impl<const N: usize, const BINS: usize> Path<BINS> for AnalyzerQ31<'_, N, BINS> {
    fn push_probed(&mut self, counts: &[i16], probe: &mut impl FnMut(Stage)) {
        // push_probed takes i32 samples; widen as push_counts does, in short pieces.
        let mut widened = [0i32; 64];
        for piece in counts.chunks(widened.len()) {
            let part = &mut widened[..piece.len()];
            for (w, &c) in part.iter_mut().zip(piece) {
                *w = i32::from(c);
            }
            AnalyzerQ31::push_probed(self, part, probe);
        }
    }
    fn push(&mut self, counts: &[i16]) {
        self.push_counts(counts);
    }
    fn is_done(&self) -> bool {
        AnalyzerQ31::is_done(self)
    }
    fn reset(&mut self) {
        AnalyzerQ31::reset(self);
    }
    fn read(&self, out: &mut Spectrum<BINS>) {
        self.read_into(out, Scale::Power, Correction::Energy);
    }
}

/// What one path measured.
#[derive(Clone, Copy, Debug, Default)]
pub struct Measured {
    /// Blocks in the average.
    pub blocks: u32,
    /// Instructions per block through the plain push, framing and conversion included.
    pub per_block: u32,
    /// Instructions per block in each stage (condition, window, transform, average).
    pub stages: [u32; 4],
    /// Instructions of one read-out (scaling the average to a spectrum), once per average.
    pub read_out: u32,
    /// Instructions per sample of the scenario generator (not part of the budget).
    pub generator_per_sample: u32,
}

/// Feeds the scenario from its start until the average is done; returns `(chunks, push
/// ticks, generator ticks)`. With `counter`, through the probe.
fn feed<const BINS: usize, P: Path<BINS>>(
    path: &mut P,
    mut counter: Option<&mut StageCounter>,
    max_chunks: u32,
) -> (u32, u64, u64) {
    let mut pump = PumpScenario::new();
    let mut chunk = [0i16; CHUNK];
    let (mut chunks, mut push_ticks, mut gen_ticks) = (0u32, 0u64, 0u64);
    path.reset();
    while !path.is_done() && chunks < max_chunks {
        let t0 = count::ticks();
        pump.fill_counts(&mut chunk);
        let t1 = count::ticks();
        match counter.as_deref_mut() {
            Some(c) => path.push_probed(black_box(&chunk), &mut |s| c.at(s)),
            None => path.push(black_box(&chunk)),
        }
        let t2 = count::ticks();
        gen_ticks += t1 - t0;
        push_ticks += t2 - t1;
        chunks += 1;
    }
    (chunks, push_ticks, gen_ticks)
}

/// Runs `path` over the scenario, logs its stage counts, and leaves its average in `out`.
/// Block 2 of the probed pass (the third, past the start-up) is also counted exactly by the
/// plugin; `read_label` names the read-out region.
#[inline(never)]
pub fn measure<const N: usize, const BINS: usize, P: Path<BINS>>(
    (label, read_label): (&'static str, &'static str),
    path: &mut P,
    out: &mut Spectrum<BINS>,
) -> Measured {
    // Blocks needed: 1 + (AVERAGES - 1) hops of N/2; twice that is a generous stop.
    let max_chunks = (2 * (N as u32 / 2) * (AVERAGES + 1)).div_ceil(CHUNK as u32);
    let (chunks, push_ticks, gen_ticks) = feed(path, None, max_chunks);
    let mut counter = StageCounter::new(label, 2);
    feed(path, Some(&mut counter), max_chunks);
    let blocks = counter.blocks();
    let mut m = Measured {
        blocks,
        per_block: (count::ticks_to_instructions(push_ticks) / u64::from(blocks.max(1))) as u32,
        generator_per_sample: (count::ticks_to_instructions(gen_ticks)
            / (u64::from(chunks.max(1)) * CHUNK as u64)) as u32,
        ..Measured::default()
    };
    for (i, &stage) in probe::STAGES.iter().enumerate() {
        m.stages[i] = counter.mean(stage);
    }
    m.read_out = count::stage(read_label, || path.read(black_box(&mut *out)));
    defmt::info!(
        "{=str}: {=u32} blocks from {=u32} chunks of {=u32}; per block {=u32} insns (push, framing included); stages condition {=u32} window {=u32} transform {=u32} average {=u32} (sum {=u32}); read-out {=u32} per average; generator {=u32} insns/sample (not in the budget)",
        label,
        blocks,
        chunks,
        CHUNK as u32,
        m.per_block,
        m.stages[0],
        m.stages[1],
        m.stages[2],
        m.stages[3],
        counter.mean_total(),
        m.read_out,
        m.generator_per_sample
    );
    m
}

/// The tone search used everywhere: Hann's main lobe, the whole spectrum.
pub fn tone_search() -> ToneSearch {
    // Hann has a main lobe; `for_shape` returns None only for transient windows.
    ToneSearch::for_shape(Shape::Hann).unwrap_or(ToneSearch::new(2.0))
}

/// The strongest tones of `spectrum` (energy-corrected power), logged.
pub fn tones<const BINS: usize>(
    label: &str,
    spectrum: &Spectrum<BINS>,
) -> heapless::Vec<Tone, TONES> {
    let found = strongest_tones::<TONES, BINS>(spectrum, &tone_search()).unwrap_or_default();
    for t in found.iter() {
        defmt::info!(
            "{=str}: line {=u32} ({=f32} Hz): tone {=f32} Hz, {=f32} m/s^2 rms ({=f32} dB re 1 m/s^2), lines {=u32}..={=u32}",
            label,
            t.peak_line as u32,
            spectrum.frequency_hz(t.peak_line),
            t.frequency_hz,
            t.rms,
            t.level_db,
            t.first_line as u32,
            t.last_line as u32
        );
    }
    found
}

/// The strongest tones of `spectrum`, not logged.
pub fn tones_quiet<const BINS: usize>(spectrum: &Spectrum<BINS>) -> heapless::Vec<Tone, TONES> {
    strongest_tones::<TONES, BINS>(spectrum, &tone_search()).unwrap_or_default()
}

/// Overall RMS from an energy-corrected power spectrum, DC excluded (Parseval).
pub fn overall_rms<const BINS: usize>(spectrum: &Spectrum<BINS>) -> f32 {
    let sum: f32 = spectrum.values().iter().skip(1).sum();
    libm::sqrtf(sum)
}
