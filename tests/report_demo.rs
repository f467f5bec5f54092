//! The whole node pipeline on the invented pump scenario (feature `demo`): spectrum, band
//! levels, time statistics and envelope spectrum into one radio [`Summary`], encoded and
//! decoded. Demo data is never a check value: the checks here are consistency (round trip,
//! size bound, the pipeline finding the scenario's own derived BPFO), and the numbers are
//! printed for the reader.
#![cfg(all(feature = "f32", feature = "demo", feature = "report"))]

use leakless::analysis::bands::{band_rms, overall_rms, Band, Integration};
use leakless::analysis::envelope::{EnvelopeAnalyzer, EnvelopeDetector};
use leakless::analysis::stats::Statistics;
use leakless::demo::PumpScenario;
use leakless::report::{strongest_lines, BandLevel, Counters, Settings, Summary, MAX_ENCODED_LEN};
use leakless::{Analyzer, Averaging, Config, Correction, Scale, Shape, WhenDone, Window};

static HANN_4096: Window<4096> = Window::new(Shape::Hann);
static HANN_1024: Window<1024> = Window::new(Shape::Hann);

#[test]
fn the_demo_pump_fits_one_radio_summary() {
    let mut pump = PumpScenario::new();
    let fs = pump.sample_rate_hz() as f32;
    let per_volt = (1.0 / pump.volts_per_m_s2()) as f32;
    let held = Averaging::Linear {
        count: 8,
        when_done: WhenDone::Hold,
    };
    let config = Config::new(fs)
        .with_overlap_fraction(0.5)
        .with_averaging(held)
        .with_sensitivity(per_volt)
        .with_unit("m/s^2");
    let mut analyzer: Analyzer<4096, 2049> = Analyzer::new(&HANN_4096, config).unwrap();
    let detector = EnvelopeDetector::new(fs, 2_000.0, 4_000.0, 8).unwrap();
    let mut envelope: EnvelopeAnalyzer<1024, 513> = EnvelopeAnalyzer::new(
        detector,
        &HANN_1024,
        Config::new(0.0)
            .with_averaging(held)
            .with_sensitivity(per_volt)
            .with_unit("m/s^2"),
    )
    .unwrap();
    let mut stats = Statistics::new();

    let mut volts = [0.0f32; 1024];
    let mut acceleration = [0.0f32; 1024];
    while !(analyzer.is_done() && envelope.analyzer().is_done()) {
        pump.fill_volts(&mut volts);
        analyzer.push(&volts);
        envelope.push(&volts);
        for (a, v) in acceleration.iter_mut().zip(&volts) {
            *a = v * per_volt;
        }
        stats.push(&acceleration);
    }

    let mut summary = Summary::new(1, Settings::of_analyzer(&analyzer));
    summary.counters = Counters::from(analyzer.status());
    let power = analyzer.spectrum(Scale::Power, Correction::Energy);
    summary.acceleration_rms = overall_rms(&power);
    summary.velocity_rms = band_rms(&power, Band::SEVERITY_10_1000_HZ, Integration::Once).unwrap();
    summary.peak = stats.peak().unwrap();
    summary.crest_factor = stats.crest_factor().unwrap();
    summary.kurtosis = stats.kurtosis().unwrap();
    let peak = analyzer.spectrum(Scale::Peak, Correction::Amplitude);
    summary.tones = strongest_lines(peak.values(), peak.bin_width_hz(), 1);
    for (low, high) in [
        (10.0, 1000.0),
        (1000.0, 2000.0),
        (2000.0, 4000.0),
        (4000.0, 8000.0),
        (8000.0, 12_000.0),
    ] {
        let band = Band::new(low, high).unwrap();
        let rms = band_rms(&power, band, Integration::None).unwrap();
        summary.bands.push(BandLevel::new(band, rms)).unwrap();
    }
    let envelope_peak = envelope.spectrum(Scale::Peak, Correction::Amplitude);
    summary.envelope = strongest_lines(envelope_peak.values(), envelope_peak.bin_width_hz(), 2);

    let mut buf = [0u8; MAX_ENCODED_LEN];
    let bytes = summary.encode(&mut buf).unwrap();
    println!(
        "demo summary: {} bytes ({} tones, {} bands, {} envelope lines)",
        bytes.len(),
        summary.tones.len(),
        summary.bands.len(),
        summary.envelope.len()
    );
    println!(
        "  a_rms {:.3} m/s^2, v_rms(10-1000 Hz) {:.3} mm/s, peak {:.3}, crest {:.2}, kurtosis {:.2}",
        summary.acceleration_rms,
        summary.velocity_rms * 1000.0,
        summary.peak,
        summary.crest_factor,
        summary.kurtosis
    );
    for line in &summary.envelope {
        println!(
            "  envelope {:.2} Hz {:.4} m/s^2",
            line.frequency_hz(),
            line.amplitude().unwrap()
        );
    }
    assert!(bytes.len() <= MAX_ENCODED_LEN);
    let back = Summary::decode(bytes).unwrap();
    assert_eq!(back, summary);
    // The pipeline against the scenario's own derived BPFO (consistency, not a reference).
    let bpfo = pump.bearing_frequencies().bpfo_hz as f32;
    let first = back.envelope[0].frequency_hz();
    assert!(
        (first - bpfo).abs() <= envelope_peak.bin_width_hz(),
        "{first} vs {bpfo}"
    );
}
