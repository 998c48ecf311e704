//! The baseline as a fixed-size byte record: versioned, checksummed, for a flash page.
//!
//! # Layout (little-endian, [`RECORD_LEN`] = 40 bytes)
//!
//! | offset | size | field |
//! |---|---|---|
//! | 0 | 2 | marker `0xC0 0x11` |
//! | 2 | 1 | record version ([`RECORD_VERSION`]) |
//! | 3 | 1 | flags: bit 0 = temperature known at learning; other bits 0 |
//! | 4 | 1 | pulses learned |
//! | 5 | 3 | zero |
//! | 8 | 4 | inductance, H (f32) |
//! | 12 | 4 | winding resistance at 20 °C (or at learning, flag clear), Ω (f32) |
//! | 16 | 4 | temperature at learning, °C (f32) |
//! | 20 | 4 | head fraction (fast component / final current) (f32) |
//! | 24 | 4 | pulse-to-pulse relative spread of the inductance (f32) |
//! | 28 | 4 | pulse-to-pulse relative spread of the resistance (f32) |
//! | 32 | 4 | time constant, s (f32) |
//! | 36 | 4 | CRC-32 of bytes 0…35 |
//!
//! The checksum is CRC-32 as used by IEEE 802.3 (polynomial 0x04C11DB7, reflected, initial and
//! final XOR 0xFFFFFFFF), a nibble at a time with a 16-entry table.

use super::Baseline;

/// Bytes in a baseline record.
pub const RECORD_LEN: usize = 40;
/// The record version this code writes and reads.
pub const RECORD_VERSION: u8 = 1;
const MARKER: [u8; 2] = [0xC0, 0x11];
const BODY: usize = RECORD_LEN - 4;

/// Why a byte record is not a baseline. Never a panic: every input gives one of these or a
/// baseline whose figures are finite and positive.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum RecordError {
    /// The slice is not [`RECORD_LEN`] bytes long.
    Length {
        /// Its length.
        found: u32,
    },
    /// The first two bytes are not the marker: erased flash, or not a baseline.
    NoMarker,
    /// A version this code does not read.
    Version {
        /// The version byte found.
        found: u8,
    },
    /// The checksum does not match: the record is corrupted.
    Checksum {
        /// CRC stored in the record.
        stored: u32,
        /// CRC of the bytes read.
        computed: u32,
    },
    /// The checksum matches but a field is out of its domain (reserved bits set, a figure not
    /// finite or not positive): written by something else.
    Field,
}

/// The reflected CRC-32 remainder of each 4-bit value, built at compile time from the
/// polynomial: 64 bytes of flash instead of a byte-wide table's 1 KiB, and two lookups per byte
/// instead of eight shift-and-XOR steps (measured: encode 2 413 → 577 instructions on the M4F).
const NIBBLE: [u32; 16] = {
    let mut t = [0u32; 16];
    let mut i = 0;
    while i < 16 {
        let mut c = i as u32;
        let mut k = 0;
        while k < 4 {
            c = if c & 1 != 0 {
                (c >> 1) ^ 0xEDB8_8320
            } else {
                c >> 1
            };
            k += 1;
        }
        t[i] = c;
        i += 1;
    }
    t
};

/// CRC-32 (IEEE 802.3; reflected polynomial 0xEDB88320, init and final XOR 0xFFFFFFFF) of
/// `bytes`, a nibble at a time with a 16-entry table (two lookups per byte).
///
/// Check value: `crc32(b"123456789") = 0xCBF43926` (the published check value of this CRC).
pub fn crc32(bytes: &[u8]) -> u32 {
    let mut crc = 0xFFFF_FFFFu32;
    for &b in bytes {
        crc ^= u32::from(b);
        crc = (crc >> 4) ^ NIBBLE[(crc & 0xF) as usize];
        crc = (crc >> 4) ^ NIBBLE[(crc & 0xF) as usize];
    }
    !crc
}

fn put(out: &mut [u8; RECORD_LEN], at: usize, x: f32) {
    out[at..at + 4].copy_from_slice(&x.to_le_bytes());
}

fn get(b: &[u8; RECORD_LEN], at: usize) -> f32 {
    f32::from_le_bytes([b[at], b[at + 1], b[at + 2], b[at + 3]])
}

impl Baseline {
    /// The record of this baseline ([`RECORD_LEN`] bytes, layout in the module docs).
    pub fn encode(&self) -> [u8; RECORD_LEN] {
        let mut out = [0u8; RECORD_LEN];
        out[..2].copy_from_slice(&MARKER);
        out[2] = RECORD_VERSION;
        out[3] = u8::from(self.temperature_known);
        out[4] = self.pulses;
        put(&mut out, 8, self.inductance);
        put(&mut out, 12, self.resistance);
        put(&mut out, 16, self.temperature);
        put(&mut out, 20, self.head_fraction);
        put(&mut out, 24, self.spread_inductance);
        put(&mut out, 28, self.spread_resistance);
        put(&mut out, 32, self.tau);
        let crc = crc32(&out[..BODY]);
        out[BODY..].copy_from_slice(&crc.to_le_bytes());
        out
    }

    /// The baseline in a record written by [`Baseline::encode`].
    ///
    /// # Errors
    /// [`RecordError`]: wrong length, no marker (erased flash reads 0xFF), unknown version,
    /// checksum mismatch, or a field outside its domain.
    pub fn decode(bytes: &[u8]) -> Result<Self, RecordError> {
        let b: &[u8; RECORD_LEN] = bytes.try_into().map_err(|_| RecordError::Length {
            found: u32::try_from(bytes.len()).unwrap_or(u32::MAX),
        })?;
        if b[..2] != MARKER {
            return Err(RecordError::NoMarker);
        }
        if b[2] != RECORD_VERSION {
            return Err(RecordError::Version { found: b[2] });
        }
        let stored = u32::from_le_bytes([b[BODY], b[BODY + 1], b[BODY + 2], b[BODY + 3]]);
        let computed = crc32(&b[..BODY]);
        if stored != computed {
            return Err(RecordError::Checksum { stored, computed });
        }
        if b[3] > 1 || b[5..8] != [0, 0, 0] || b[4] == 0 {
            return Err(RecordError::Field);
        }
        let base = Baseline {
            pulses: b[4],
            temperature_known: b[3] == 1,
            inductance: get(b, 8),
            resistance: get(b, 12),
            temperature: get(b, 16),
            head_fraction: get(b, 20),
            spread_inductance: get(b, 24),
            spread_resistance: get(b, 28),
            tau: get(b, 32),
        };
        if base.is_valid() {
            Ok(base)
        } else {
            Err(RecordError::Field)
        }
    }
}
