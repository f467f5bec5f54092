//! A small async driver for ST's IIS3DWB, a wide-band (26.7 kHz output rate, flat to about
//! 6 kHz) low-noise 3-axis MEMS accelerometer for vibration monitoring, SPI only.
//!
//! No crates.io driver for this part exists (checked with `cargo info iis3dwb`), so this is a
//! register-level one over [`embedded_hal_async::spi::SpiDevice`]: the device owns chip
//! select, the bus does the transfers (EasyDMA on the nRF52840).
//!
//! The register addresses and field values below were written from the IIS3DWB datasheet's
//! register map as remembered, then cross-checked field by field against ST's published C
//! register header for the part (iis3dwb_reg.h): they agree. The sensitivities and the
//! output-rate tolerance are from memory of the datasheet and still want a check there. The
//! WHO_AM_I check in [`Iis3dwb::new`] catches a wrong part or wiring, not a wrong bit.
//!
//! Sampling is paced by the FIFO: the accelerometer is batched into the FIFO at the full
//! output rate, INT1 goes high while the FIFO holds at least the watermark, and one burst read
//! drains whole FIFO words (1 tag byte + X, Y, Z as little-endian i16).

// A driver: it offers every range, axis and status bit, and this board uses some of them.
#![allow(dead_code)]

use embassy_time::{Duration, Instant, Timer};
use embedded_hal_async::spi::{Operation, SpiDevice};

/// Register addresses and bit values (datasheet register map, cross-checked as above).
pub mod reg {
    /// FIFO watermark, bits 7:0 (in FIFO words).
    pub const FIFO_CTRL1: u8 = 0x07;
    /// Bit 0: FIFO watermark bit 8.
    pub const FIFO_CTRL2: u8 = 0x08;
    /// BDR_XL (bits 3:0): accelerometer batch rate into the FIFO.
    pub const FIFO_CTRL3: u8 = 0x09;
    /// FIFO_MODE (bits 2:0).
    pub const FIFO_CTRL4: u8 = 0x0A;
    /// INT1 pin routing.
    pub const INT1_CTRL: u8 = 0x0D;
    /// Fixed identification register.
    pub const WHO_AM_I: u8 = 0x0F;
    /// Accelerometer enable (XL_EN, bits 7:5), full scale (FS_XL, bits 3:2), LPF2 (bit 1).
    pub const CTRL1_XL: u8 = 0x10;
    /// BOOT (7), BDU (6), IF_INC (2), SW_RESET (0).
    pub const CTRL3_C: u8 = 0x12;
    /// DIFF_FIFO bits 7:0: unread FIFO words.
    pub const FIFO_STATUS1: u8 = 0x3A;
    /// WTM_IA (7), OVR_IA (6), FULL_IA (5), DIFF_FIFO bits 9:8 (1:0).
    pub const FIFO_STATUS2: u8 = 0x3B;
    /// First FIFO output register: the tag; X_L .. Z_H follow at 0x79 ..= 0x7E.
    pub const FIFO_DATA_OUT_TAG: u8 = 0x78;

    /// WHO_AM_I value of the IIS3DWB.
    pub const WHO_AM_I_VALUE: u8 = 0x7B;
    /// CTRL3_C: software reset, self-clearing.
    pub const SW_RESET: u8 = 0x01;
    /// CTRL3_C: block data update and register address auto-increment.
    pub const BDU_IF_INC: u8 = 0x44;
    /// CTRL1_XL: accelerometer on (XL_EN = 101, the only output rate, 26.667 kHz).
    pub const XL_EN: u8 = 0xA0;
    /// FIFO_CTRL3: batch the accelerometer at 26.667 kHz (BDR_XL = 1010).
    pub const BDR_XL_26667HZ: u8 = 0x0A;
    /// FIFO_CTRL4: continuous mode, the oldest word is overwritten when full.
    pub const FIFO_MODE_CONTINUOUS: u8 = 0x06;
    /// INT1_CTRL: FIFO threshold (watermark) on INT1.
    pub const INT1_FIFO_TH: u8 = 0x08;
    /// FIFO_STATUS2: the FIFO overran since the last read.
    pub const FIFO_OVR_IA: u8 = 0x40;
    /// TAG_SENSOR (tag bits 7:3) of an accelerometer word.
    pub const TAG_XL: u8 = 0x02;
    /// Read flag of the SPI address byte.
    pub const READ: u8 = 0x80;
}

/// Output data rate in Hz (the part has this one rate).
// from memory: IIS3DWB datasheet, ODR 26.667 kHz; the real rate has a few % tolerance and
// can be measured from the FIFO timestamp if a spectrum's frequency axis must be exact.
pub const SAMPLE_RATE_HZ: f32 = 26_667.0;

/// Bytes per FIFO word: tag + 3 x i16.
pub const WORD_BYTES: usize = 7;

/// Full-scale range; sets the sensitivity.
#[derive(Clone, Copy, Debug, PartialEq, Eq, defmt::Format)]
pub enum FullScale {
    /// +-2 g.
    G2,
    /// +-4 g.
    G4,
    /// +-8 g.
    G8,
    /// +-16 g.
    G16,
}

impl FullScale {
    /// FS_XL field of CTRL1_XL (note the non-monotonic encoding: 00 2 g, 01 16 g, 10 4 g,
    /// 11 8 g).
    const fn bits(self) -> u8 {
        match self {
            FullScale::G2 => 0b00 << 2,
            FullScale::G16 => 0b01 << 2,
            FullScale::G4 => 0b10 << 2,
            FullScale::G8 => 0b11 << 2,
        }
    }

    /// Sensitivity in g per LSB.
    // from memory: IIS3DWB datasheet, 0.061 / 0.122 / 0.244 / 0.488 mg/LSB
    pub const fn g_per_lsb(self) -> f32 {
        match self {
            FullScale::G2 => 0.061e-3,
            FullScale::G4 => 0.122e-3,
            FullScale::G8 => 0.244e-3,
            FullScale::G16 => 0.488e-3,
        }
    }
}

/// One axis of the three.
#[derive(Clone, Copy, Debug, PartialEq, Eq, defmt::Format)]
pub enum Axis {
    /// X.
    X,
    /// Y.
    Y,
    /// Z (normal to the package: usually the one across a pump's mounting face).
    Z,
}

/// Driver errors.
#[derive(Debug)]
pub enum Error<E> {
    /// The SPI transfer failed.
    Spi(E),
    /// WHO_AM_I read something else: wrong part, wiring, or SPI mode.
    WrongId(u8),
    /// The software reset did not clear within the time allowed.
    ResetTimeout,
}

impl<E> From<E> for Error<E> {
    fn from(e: E) -> Self {
        Error::Spi(e)
    }
}

/// What a FIFO status read tells.
#[derive(Clone, Copy, Debug, defmt::Format)]
pub struct FifoStatus {
    /// Unread words in the FIFO.
    pub words: u16,
    /// Words were lost because the FIFO was not read in time.
    pub overrun: bool,
}

/// The IIS3DWB on an SPI device.
pub struct Iis3dwb<SPI> {
    spi: SPI,
    full_scale: FullScale,
}

impl<SPI: SpiDevice> Iis3dwb<SPI> {
    /// Checks WHO_AM_I, resets the part, and starts continuous FIFO batching of the
    /// accelerometer with the FIFO-threshold interrupt on INT1 at `watermark` words.
    pub async fn new(
        spi: SPI,
        full_scale: FullScale,
        watermark: u16,
    ) -> Result<Self, Error<SPI::Error>> {
        let mut dev = Iis3dwb { spi, full_scale };
        let id = dev.read_reg(reg::WHO_AM_I).await?;
        if id != reg::WHO_AM_I_VALUE {
            return Err(Error::WrongId(id));
        }
        dev.write_reg(reg::CTRL3_C, reg::SW_RESET).await?;
        let deadline = Instant::now() + Duration::from_millis(10);
        while dev.read_reg(reg::CTRL3_C).await? & reg::SW_RESET != 0 {
            if Instant::now() > deadline {
                return Err(Error::ResetTimeout);
            }
            Timer::after_micros(50).await;
        }
        let [wtm_lo, wtm_hi] = watermark.min(0x1FF).to_le_bytes();
        for (r, v) in [
            (reg::CTRL3_C, reg::BDU_IF_INC),
            (reg::FIFO_CTRL1, wtm_lo),
            (reg::FIFO_CTRL2, wtm_hi & 0x01),
            (reg::FIFO_CTRL3, reg::BDR_XL_26667HZ),
            (reg::FIFO_CTRL4, reg::FIFO_MODE_CONTINUOUS),
            (reg::INT1_CTRL, reg::INT1_FIFO_TH),
            (reg::CTRL1_XL, reg::XL_EN | full_scale.bits()),
        ] {
            dev.write_reg(r, v).await?;
        }
        Ok(dev)
    }

    /// The configured full scale.
    pub fn full_scale(&self) -> FullScale {
        self.full_scale
    }

    async fn write_reg(&mut self, r: u8, value: u8) -> Result<(), SPI::Error> {
        // A RAM buffer: EasyDMA cannot read from flash.
        let buf = [r & !reg::READ, value];
        self.spi.write(&buf).await
    }

    async fn read_reg(&mut self, r: u8) -> Result<u8, SPI::Error> {
        let mut value = [0u8];
        self.read_regs(r, &mut value).await?;
        Ok(value[0])
    }

    /// Reads consecutive registers from `r` (auto-increment, IF_INC).
    async fn read_regs(&mut self, r: u8, out: &mut [u8]) -> Result<(), SPI::Error> {
        let address = [r | reg::READ];
        self.spi
            .transaction(&mut [Operation::Write(&address), Operation::Read(out)])
            .await
    }

    /// Unread FIFO words and the overrun flag.
    pub async fn fifo_status(&mut self) -> Result<FifoStatus, SPI::Error> {
        let mut s = [0u8; 2];
        self.read_regs(reg::FIFO_STATUS1, &mut s).await?;
        Ok(FifoStatus {
            words: u16::from(s[0]) | (u16::from(s[1] & 0x03) << 8),
            overrun: s[1] & reg::FIFO_OVR_IA != 0,
        })
    }

    /// Drains `raw.len() / 7` whole FIFO words into `raw` in one burst (one DMA transfer).
    /// With IF_INC the address rolls over from FIFO_DATA_OUT_Z_H back to the tag, so the
    /// words follow each other; ST's own drivers read the FIFO this way.
    pub async fn read_fifo(&mut self, raw: &mut [u8]) -> Result<(), SPI::Error> {
        let whole = raw.len() / WORD_BYTES * WORD_BYTES;
        self.read_regs(reg::FIFO_DATA_OUT_TAG, &mut raw[..whole])
            .await
    }
}

/// The `axis` sample of one FIFO word, or `None` if the word is not accelerometer data.
pub fn sample(word: &[u8], axis: Axis) -> Option<i16> {
    if word.len() < WORD_BYTES || word[0] >> 3 != reg::TAG_XL {
        return None;
    }
    let at = match axis {
        Axis::X => 1,
        Axis::Y => 3,
        Axis::Z => 5,
    };
    Some(i16::from_le_bytes([word[at], word[at + 1]]))
}
