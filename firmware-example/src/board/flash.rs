//! One simulated flash page with NOR semantics (**invented** part, the common behaviour of
//! on-chip flash): erasing sets every byte to 0xFF; programming can only clear bits (1 → 0), so
//! a byte must be erased before it is written with a value that needs a bit set again; reads
//! return exactly what was programmed. It survives the demo's simulated reset (it is not RAM).
//!
//! A real board replaces this with its HAL's flash driver (page erase and word programming);
//! the application's use of it ([`crate::store`]) stays the same.

/// Bytes in the page (a small page of a small part: the demo keeps 4 records of 40 bytes).
pub const PAGE_BYTES: usize = 160;

/// Why a flash operation was refused.
#[derive(Clone, Copy, Debug, PartialEq, Eq, defmt::Format)]
pub enum FlashError {
    /// Offset and length reach past the page.
    OutOfPage,
    /// Programming would have to set a bit that is clear: erase the page first.
    NotErased {
        /// Offset of the first such byte.
        offset: u16,
    },
}

/// The page.
pub struct SimFlash {
    bytes: [u8; PAGE_BYTES],
    erases: u32,
}

impl SimFlash {
    /// A page as shipped: erased.
    pub const fn new() -> Self {
        Self {
            bytes: [0xFF; PAGE_BYTES],
            erases: 0,
        }
    }

    /// Erases the page: every byte 0xFF.
    pub fn erase(&mut self) {
        self.bytes = [0xFF; PAGE_BYTES];
        self.erases = self.erases.saturating_add(1);
    }

    /// Times the page was erased (wear).
    pub const fn erases(&self) -> u32 {
        self.erases
    }

    fn range(offset: usize, len: usize) -> Result<core::ops::Range<usize>, FlashError> {
        match offset.checked_add(len) {
            Some(end) if end <= PAGE_BYTES => Ok(offset..end),
            _ => Err(FlashError::OutOfPage),
        }
    }

    /// Programs `data` at `offset`: each byte becomes `old & new`, and is refused (nothing
    /// written) when that is not `new` (a bit would have to go from 0 to 1).
    ///
    /// # Errors
    /// [`FlashError::OutOfPage`], [`FlashError::NotErased`].
    pub fn program(&mut self, offset: usize, data: &[u8]) -> Result<(), FlashError> {
        let r = Self::range(offset, data.len())?;
        let page = &mut self.bytes[r];
        if let Some(k) = page.iter().zip(data).position(|(o, n)| o & n != *n) {
            return Err(FlashError::NotErased {
                offset: (offset + k) as u16,
            });
        }
        for (o, n) in page.iter_mut().zip(data) {
            *o &= n;
        }
        Ok(())
    }

    /// Reads `out.len()` bytes at `offset`.
    ///
    /// # Errors
    /// [`FlashError::OutOfPage`].
    pub fn read(&self, offset: usize, out: &mut [u8]) -> Result<(), FlashError> {
        let r = Self::range(offset, out.len())?;
        out.copy_from_slice(&self.bytes[r]);
        Ok(())
    }

    /// The simulated world flips bits of a stored byte (a worn or disturbed cell): `byte ^ mask`
    /// at `offset` (ignored outside the page). Not something firmware can do to flash; the demo's
    /// script uses it to show a corrupted record being refused.
    pub fn disturb(&mut self, offset: usize, mask: u8) {
        if let Some(b) = self.bytes.get_mut(offset) {
            *b ^= mask;
        }
    }
}

impl Default for SimFlash {
    fn default() -> Self {
        Self::new()
    }
}
