//! Vibration sensor node: nRF52840 + IIS3DWB on SPI, averaged spectra with `leakless`.
//!
//! Two tasks share two block buffers through a zero-copy channel (a double buffer):
//!
//! * `sampler` waits for INT1 (FIFO at the watermark), drains the FIFO with one SPI burst
//!   (EasyDMA), and writes one axis into the free block; a full block is handed over.
//! * `analyse` pushes each block into a `leakless::Analyzer` (N = 1024, Hann, 50 % overlap,
//!   a linear average of 8) and, after every average, logs the strongest lines and the
//!   overall acceleration and velocity (10-1000 Hz) RMS.
//!
//! If the analysis falls behind, the sampler keeps draining the FIFO and counts the blocks it
//! could not hand over, so the sensor never overruns because of the analysis.
#![no_std]
#![no_main]

mod analysis;
mod iis3dwb;

use cortex_m::peripheral::DWT;
use defmt_rtt as _;
use embassy_executor::Spawner;
use embassy_nrf::config::{HfclkSource, LfclkSource};
use embassy_nrf::gpio::{Input, Level, Output, OutputDrive, Pull};
use embassy_nrf::{bind_interrupts, peripherals, spim};
use embassy_sync::blocking_mutex::raw::NoopRawMutex;
use embassy_sync::zerocopy_channel::{Channel, Receiver, Sender};
use embassy_time::{Delay, Timer};
use embedded_hal_bus::spi::ExclusiveDevice;
use panic_probe as _;
use static_cell::StaticCell;

use analysis::N;
use iis3dwb::{Axis, FullScale, Iis3dwb, WORD_BYTES};

bind_interrupts!(struct Irqs {
    SPIM3 => spim::InterruptHandler<peripherals::SPI3>;
});

/// FIFO words per INT1 (4.8 ms of data at 26.667 kHz; one 896-byte burst, ~0.9 ms at 8 MHz).
const WATERMARK: u16 = 128;
/// The axis analysed (all three are batched; the others are there for later use).
const AXIS: Axis = Axis::Z;
/// +-4 g: room for impacts on a pump housing at 0.122 mg/LSB.
const FULL_SCALE: FullScale = FullScale::G4;

type Sensor = Iis3dwb<ExclusiveDevice<spim::Spim<'static>, Output<'static>, Delay>>;
/// What a transfer on [`Sensor`]'s bus can fail with (chip select cannot fail).
type SpiError = embedded_hal_bus::spi::DeviceError<spim::Error, core::convert::Infallible>;

/// One block of one axis, in sensor counts.
pub struct Block {
    samples: [i16; N],
    /// Blocks since start, including dropped ones.
    sequence: u32,
    /// Blocks dropped just before this one (analysis too slow, or an SPI error).
    dropped_before: u32,
    /// FIFO status reads that reported an overrun while this block was filled.
    fifo_overruns: u32,
}

impl Block {
    const EMPTY: Block = Block {
        samples: [0; N],
        sequence: 0,
        dropped_before: 0,
        fifo_overruns: 0,
    };
}

static BLOCKS: StaticCell<[Block; 2]> = StaticCell::new();
static CHANNEL: StaticCell<Channel<'static, NoopRawMutex, Block>> = StaticCell::new();

#[embassy_executor::main]
async fn main(spawner: Spawner) {
    let mut config = embassy_nrf::config::Config::default();
    // The nRF52840-DK carries both crystals.
    config.hfclk_source = HfclkSource::ExternalXtal;
    config.lfclk_source = LfclkSource::ExternalXtal;
    let p = embassy_nrf::init(config);

    // Cycle counter for the analysis timing (DWT CYCCNT works on silicon, unlike in QEMU).
    let Some(mut core) = cortex_m::Peripherals::take() else {
        defmt::panic!("core peripherals already taken");
    };
    core.DCB.enable_trace();
    core.DWT.enable_cycle_counter();

    let mut spi_config = spim::Config::default();
    spi_config.frequency = spim::Frequency::M8; // the IIS3DWB allows up to 10 MHz
    spi_config.mode = spim::MODE_3;
    let spim = spim::Spim::new(p.SPI3, Irqs, p.P1_15, p.P1_14, p.P1_13, spi_config);
    let cs = Output::new(p.P1_12, Level::High, OutputDrive::Standard);
    let Ok(device) = ExclusiveDevice::new(spim, cs, Delay);
    let int1 = Input::new(p.P1_11, Pull::None); // INT1 is push-pull, active high

    // Power-on boot of the sensor takes a few ms.
    Timer::after_millis(20).await;
    let sensor = match Iis3dwb::new(device, FULL_SCALE, WATERMARK).await {
        Ok(sensor) => sensor,
        Err(e) => defmt::panic!("IIS3DWB init failed: {}", defmt::Debug2Format(&e)),
    };
    defmt::info!(
        "IIS3DWB up: {} full scale, {=f32} Hz, axis {}, watermark {=u16} words",
        FULL_SCALE,
        iis3dwb::SAMPLE_RATE_HZ,
        AXIS,
        WATERMARK
    );

    let channel = CHANNEL.init(Channel::new(BLOCKS.init([Block::EMPTY, Block::EMPTY])));
    let (tx, rx) = channel.split();
    match analyse(rx, sensor.full_scale()) {
        Ok(token) => spawner.spawn(token),
        Err(e) => defmt::panic!("spawn analyse: {}", defmt::Debug2Format(&e)),
    }
    match sampler(sensor, int1, tx) {
        Ok(token) => spawner.spawn(token),
        Err(e) => defmt::panic!("spawn sampler: {}", defmt::Debug2Format(&e)),
    }
}

/// Fills `out` (or, with `None`, just counts and discards) with `N` samples of `AXIS`.
/// Returns how many FIFO overruns were seen.
async fn fill(
    sensor: &mut Sensor,
    int1: &mut Input<'static>,
    raw: &mut [u8; WORD_BYTES * WATERMARK as usize],
    mut out: Option<&mut [i16; N]>,
) -> Result<u32, SpiError> {
    let mut filled = 0;
    let mut overruns = 0;
    while filled < N {
        int1.wait_for_high().await;
        let status = sensor.fifo_status().await?;
        if status.overrun {
            overruns += 1;
        }
        // At most one burst, and never past the end of the block: what is left stays in the
        // FIFO for the next block.
        let words = usize::from(status.words)
            .min(raw.len() / WORD_BYTES)
            .min(N - filled);
        if words == 0 {
            // INT1 high with an empty FIFO should not happen; back off rather than spin and
            // starve the analysis task.
            Timer::after_millis(1).await;
            continue;
        }
        let bytes = &mut raw[..words * WORD_BYTES];
        sensor.read_fifo(bytes).await?;
        for word in bytes.chunks_exact(WORD_BYTES) {
            if let Some(sample) = iis3dwb::sample(word, AXIS) {
                if let Some(out) = out.as_deref_mut() {
                    out[filled] = sample;
                }
                filled += 1;
            }
        }
    }
    Ok(overruns)
}

#[embassy_executor::task]
async fn sampler(
    mut sensor: Sensor,
    mut int1: Input<'static>,
    mut tx: Sender<'static, NoopRawMutex, Block>,
) {
    // The EasyDMA target of the FIFO bursts; unpacked into a block right after each burst.
    let mut raw = [0u8; WORD_BYTES * WATERMARK as usize];
    let mut sequence = 0u32;
    let mut dropped = 0u32;
    loop {
        // `try_send` keeps handing out the same free block until `send_done`.
        let result = match tx.try_send() {
            Some(block) => {
                let r = fill(&mut sensor, &mut int1, &mut raw, Some(&mut block.samples)).await;
                if let Ok(overruns) = r {
                    block.sequence = sequence;
                    block.dropped_before = dropped;
                    block.fifo_overruns = overruns;
                }
                r.map(|_| true)
            }
            None => fill(&mut sensor, &mut int1, &mut raw, None)
                .await
                .map(|_| false),
        };
        match result {
            Ok(true) => {
                tx.send_done();
                dropped = 0;
            }
            Ok(false) => dropped += 1,
            Err(e) => {
                defmt::error!("block {=u32}: {}", sequence, defmt::Debug2Format(&e));
                dropped += 1;
            }
        }
        sequence = sequence.wrapping_add(1);
    }
}

#[embassy_executor::task]
async fn analyse(mut rx: Receiver<'static, NoopRawMutex, Block>, full_scale: FullScale) {
    let scale = full_scale.g_per_lsb() * analysis::STANDARD_GRAVITY;
    let mut node = match analysis::Node::new(iis3dwb::SAMPLE_RATE_HZ, scale) {
        Ok(node) => node,
        Err(e) => defmt::panic!("analyzer: {}", e),
    };
    let mut expected = 0u32;
    loop {
        let block = rx.receive().await;
        let (sequence, dropped, overruns) =
            (block.sequence, block.dropped_before, block.fifo_overruns);
        if dropped > 0 || sequence != expected {
            // A gap: the overlap and the running average would mix two stretches of signal.
            node.restart();
        }
        expected = sequence.wrapping_add(1);
        let t0 = DWT::cycle_count();
        let summary = node.push(&block.samples);
        let cycles = DWT::cycle_count().wrapping_sub(t0);
        rx.receive_done();
        let Some(summary) = summary else {
            continue;
        };
        defmt::info!(
            "block {=u32}: average of {=u32}: {=f32} m/s^2 rms overall, velocity 10-1000 Hz {=f32} mm/s rms; {=u32} cycles for the last push; dropped {=u32}, FIFO overruns {=u32}",
            sequence,
            summary.averages,
            summary.overall_rms,
            summary.velocity_mm_s,
            cycles,
            dropped,
            overruns
        );
        for tone in summary.tones.iter() {
            defmt::info!(
                "  line {=u32}: {=f32} Hz, {=f32} m/s^2 rms ({=f32} dB re 1 m/s^2)",
                tone.peak_line as u32,
                tone.frequency_hz,
                tone.rms,
                tone.level_db
            );
        }
    }
}
