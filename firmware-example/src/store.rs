//! The unit's store on NOR flash: the core console's records (settings with the PIN count and
//! the chosen design, calibration, eight kept designs) as key-value items.
//!
//! The records are kept by the `sequential-storage` crate's map. Why that crate: it is made for
//! exactly this (a few small key-value records on a microcontroller's NOR flash), it is
//! `no_std` with no allocation, every item carries a CRC of its header and of its data, it only
//! appends and erases a page after moving the live items out, so a power cut at any point leaves
//! either the old or the new item (the tests below cut the power at every step of writes and
//! erases and check exactly that), and it uses the pages in turn, so the erases spread evenly
//! (wear levelling; tested below too). It builds on the `embedded-storage` traits, so one store
//! runs on the STM32F411's flash sectors and on the emulated image's RAM-backed flash model.
//! Its API is async; the flashes here are synchronous, so [`block_on`] polls each operation to
//! completion with a no-op waker (the futures never wait).
//!
//! A forgotten record is kept as an empty item (the map's own removal needs a flash that can be
//! written twice; an empty item works on any NOR flash).

use biasjig_core::console::jig::{Slot, Store, StoreError, RECORD_LEN};
use core::future::Future;
use core::ops::Range;
use core::pin::pin;
use core::task::{Context, Poll, Waker};
use embedded_storage::nor_flash::{
    ErrorType, NorFlash, NorFlashError, NorFlashErrorKind, ReadNorFlash,
};
use sequential_storage::cache::{Cache, Uncached};
use sequential_storage::map::{MapConfig, MapStorage};
use sequential_storage::Error;

/// Runs a future to completion on the calling thread, polling it with a no-op waker: for
/// futures that never wait on anything (here, flash operations that complete synchronously).
pub fn block_on<F: Future>(fut: F) -> F::Output {
    let mut fut = pin!(fut);
    let mut cx = Context::from_waker(Waker::noop());
    loop {
        if let Poll::Ready(v) = fut.as_mut().poll(&mut cx) {
            return v;
        }
    }
}

/// A synchronous `embedded-storage` flash seen through the async traits `sequential-storage`
/// takes (each call completes at once).
pub struct Blocking<F>(pub F);

impl<F: ErrorType> ErrorType for Blocking<F> {
    type Error = F::Error;
}

impl<F: ReadNorFlash> embedded_storage_async::nor_flash::ReadNorFlash for Blocking<F> {
    const READ_SIZE: usize = F::READ_SIZE;

    async fn read(&mut self, offset: u32, bytes: &mut [u8]) -> Result<(), Self::Error> {
        self.0.read(offset, bytes)
    }

    fn capacity(&self) -> usize {
        self.0.capacity()
    }
}

impl<F: NorFlash> embedded_storage_async::nor_flash::NorFlash for Blocking<F> {
    const WRITE_SIZE: usize = F::WRITE_SIZE;
    const ERASE_SIZE: usize = F::ERASE_SIZE;

    async fn erase(&mut self, from: u32, to: u32) -> Result<(), Self::Error> {
        self.0.erase(from, to)
    }

    async fn write(&mut self, offset: u32, bytes: &[u8]) -> Result<(), Self::Error> {
        self.0.write(offset, bytes)
    }
}

/// Bytes of the store's work buffer: the key and the longest record, rounded up to whole words.
const BUF_LEN: usize = RECORD_LEN + 32;

/// The console's [`Store`] on a NOR flash, within `range` (whole erase pages, at least two).
pub struct FlashStore<F: NorFlash> {
    map: MapStorage<u8, Blocking<F>, Cache<Uncached, Uncached, Uncached, u8>>,
    buf: [u8; BUF_LEN],
}

/// Why a store could not be set up on a flash range.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum StoreSetupError {
    /// The range does not start and end on erase pages, or holds fewer than two pages.
    Range,
}

impl core::fmt::Display for StoreSetupError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        f.write_str("the store's flash range must be at least two whole erase pages")
    }
}

impl<F: NorFlash> FlashStore<F> {
    /// A store on `flash` within `range` (byte offsets of the flash).
    pub fn new(flash: F, range: Range<u32>) -> Result<Self, StoreSetupError> {
        let config = MapConfig::try_new(range).map_err(|_| StoreSetupError::Range)?;
        Ok(FlashStore {
            map: MapStorage::new(Blocking(flash), config, Cache::new_uncached()),
            buf: [0; BUF_LEN],
        })
    }

    /// The flash back (for tests that restart a store on it).
    pub fn into_flash(self) -> F {
        self.map.destroy().0 .0
    }
}

fn store_error<E>(e: Error<E>) -> StoreError {
    match e {
        Error::FullStorage | Error::ItemTooBig => StoreError::Full,
        _ => StoreError::Medium,
    }
}

impl<F: NorFlash> Store for FlashStore<F> {
    fn load(&mut self, slot: Slot, record: &mut [u8; RECORD_LEN]) -> Result<bool, StoreError> {
        let found = block_on(self.map.fetch_item::<&[u8]>(&mut self.buf, &slot.key()))
            .map_err(store_error)?;
        match found {
            Some(data) if data.len() == RECORD_LEN => {
                record.copy_from_slice(data);
                Ok(true)
            }
            // Never written, or forgotten (an empty item).
            _ => Ok(false),
        }
    }

    fn save(&mut self, slot: Slot, record: &[u8; RECORD_LEN]) -> Result<(), StoreError> {
        let value: &[u8] = record;
        block_on(self.map.store_item(&mut self.buf, &slot.key(), &value)).map_err(store_error)
    }

    fn forget(&mut self, slot: Slot) -> Result<(), StoreError> {
        let empty: &[u8] = &[];
        block_on(self.map.store_item(&mut self.buf, &slot.key(), &empty)).map_err(store_error)
    }
}

/// Erase page of [`RamFlash`], bytes.
pub const RAM_PAGE: usize = 4096;

/// A NOR flash model in RAM (the emulated image's store: QEMU's flash is read-only): erasing
/// sets a page to 0xFF, writing can only clear bits (the new byte is the old one AND the
/// written one), writes are whole 4-byte words at word addresses, erases whole pages.
pub struct RamFlash<'a> {
    mem: &'a mut [u8],
}

/// Marks a [`RamFlash`] memory as formatted (erased once): RAM comes up zero (or arbitrary),
/// which is not an erased flash.
pub const RAM_FLASH_MAGIC: [u8; 16] = *b"biasjig-nor-v1\0\0";

impl<'a> RamFlash<'a> {
    /// The model over `mem`, of which the last [`RAM_PAGE`] holds the format mark: when the
    /// mark is missing (first power-up), the rest is erased and the mark written. The flash is
    /// then `mem` less that page.
    pub fn formatted(mem: &'a mut [u8]) -> Self {
        let split = mem.len().saturating_sub(RAM_PAGE);
        let (flash, mark) = mem.split_at_mut(split);
        if let Some(m) = mark.get_mut(..RAM_FLASH_MAGIC.len()) {
            if *m != RAM_FLASH_MAGIC {
                flash.fill(0xFF);
                m.copy_from_slice(&RAM_FLASH_MAGIC);
            }
        }
        RamFlash { mem: flash }
    }
}

/// A misuse of the flash model (what a real flash would refuse too).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RamFlashError {
    /// Not on a word (write) or page (erase) boundary.
    NotAligned,
    /// Outside the memory.
    OutOfBounds,
}

impl NorFlashError for RamFlashError {
    fn kind(&self) -> NorFlashErrorKind {
        match self {
            Self::NotAligned => NorFlashErrorKind::NotAligned,
            Self::OutOfBounds => NorFlashErrorKind::OutOfBounds,
        }
    }
}

impl<'a> RamFlash<'a> {
    /// The model over `mem` as it is (its length a whole number of pages).
    pub fn new(mem: &'a mut [u8]) -> Self {
        RamFlash { mem }
    }

    fn span(&mut self, offset: u32, len: usize) -> Result<&mut [u8], RamFlashError> {
        let start = offset as usize;
        self.mem
            .get_mut(start..start.saturating_add(len))
            .ok_or(RamFlashError::OutOfBounds)
    }
}

impl ErrorType for RamFlash<'_> {
    type Error = RamFlashError;
}

impl ReadNorFlash for RamFlash<'_> {
    const READ_SIZE: usize = 1;

    fn read(&mut self, offset: u32, bytes: &mut [u8]) -> Result<(), RamFlashError> {
        let len = bytes.len();
        bytes.copy_from_slice(self.span(offset, len)?);
        Ok(())
    }

    fn capacity(&self) -> usize {
        self.mem.len()
    }
}

impl NorFlash for RamFlash<'_> {
    const WRITE_SIZE: usize = 4;
    const ERASE_SIZE: usize = RAM_PAGE;

    fn erase(&mut self, from: u32, to: u32) -> Result<(), RamFlashError> {
        if !(from as usize).is_multiple_of(RAM_PAGE)
            || !(to as usize).is_multiple_of(RAM_PAGE)
            || to < from
        {
            return Err(RamFlashError::NotAligned);
        }
        self.span(from, (to - from) as usize)?.fill(0xFF);
        Ok(())
    }

    fn write(&mut self, offset: u32, bytes: &[u8]) -> Result<(), RamFlashError> {
        if !offset.is_multiple_of(4) || !bytes.len().is_multiple_of(4) {
            return Err(RamFlashError::NotAligned);
        }
        for (cell, b) in self.span(offset, bytes.len())?.iter_mut().zip(bytes) {
            *cell &= *b;
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests;
