//! The store on a simulated NOR flash that loses power at every step of a write and of an
//! erase: after the restart each record is the old or the new one, never a mix, never lost;
//! and the erases spread over the pages (wear levelling).
use super::*;
use std::cell::RefCell;
use std::rc::Rc;

const PAGE: usize = 2048;
const PAGES: usize = 4;
/// Steps of one page erase (a cut in between leaves the first chunks erased, the rest as they
/// were).
const ERASE_STEPS: usize = 4;

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct PowerCut;

impl NorFlashError for PowerCut {
    fn kind(&self) -> NorFlashErrorKind {
        NorFlashErrorKind::Other
    }
}

/// The flash contents and erase counts, shared by the flash handles of successive "boots".
#[derive(Clone)]
struct Chip {
    mem: Vec<u8>,
    erases: [u32; PAGES],
    /// The power went in the middle of an erase (not a write).
    cut_in_erase: bool,
}

/// A NOR flash (4-byte words, 2 KiB pages) that runs `budget` steps (one word written, one
/// quarter of a page erased) and then loses power: the step in progress is torn (a word gets
/// only its first two bytes, an erase chunk is left as it was) and every later call fails.
struct CutFlash {
    chip: Rc<RefCell<Chip>>,
    budget: Option<usize>,
    dead: bool,
}

impl CutFlash {
    fn step(&mut self) -> bool {
        if self.dead {
            return false;
        }
        match self.budget.as_mut() {
            Some(0) => {
                self.dead = true;
                false
            }
            Some(n) => {
                *n -= 1;
                true
            }
            None => true,
        }
    }
}

impl ErrorType for CutFlash {
    type Error = PowerCut;
}

impl ReadNorFlash for CutFlash {
    const READ_SIZE: usize = 1;
    fn read(&mut self, offset: u32, bytes: &mut [u8]) -> Result<(), PowerCut> {
        if self.dead {
            return Err(PowerCut);
        }
        let o = offset as usize;
        bytes.copy_from_slice(&self.chip.borrow().mem[o..o + bytes.len()]);
        Ok(())
    }
    fn capacity(&self) -> usize {
        PAGE * PAGES
    }
}

impl NorFlash for CutFlash {
    const WRITE_SIZE: usize = 4;
    const ERASE_SIZE: usize = PAGE;

    fn erase(&mut self, from: u32, to: u32) -> Result<(), PowerCut> {
        assert!((from as usize).is_multiple_of(PAGE) && (to as usize).is_multiple_of(PAGE));
        for page in from as usize / PAGE..to as usize / PAGE {
            for chunk in 0..ERASE_STEPS {
                if !self.step() {
                    self.chip.borrow_mut().cut_in_erase = true;
                    return Err(PowerCut);
                }
                let len = PAGE / ERASE_STEPS;
                let start = page * PAGE + chunk * len;
                self.chip.borrow_mut().mem[start..start + len].fill(0xFF);
            }
            self.chip.borrow_mut().erases[page] += 1;
        }
        Ok(())
    }

    fn write(&mut self, offset: u32, bytes: &[u8]) -> Result<(), PowerCut> {
        assert!(
            offset.is_multiple_of(4) && bytes.len().is_multiple_of(4),
            "unaligned write"
        );
        for (i, word) in bytes.chunks(4).enumerate() {
            let at = offset as usize + 4 * i;
            let alive = self.step();
            let mut chip = self.chip.borrow_mut();
            if !alive {
                // Torn: the first two bytes of the word programmed, the rest not.
                for (cell, w) in chip.mem[at..at + 2].iter_mut().zip(word) {
                    *cell &= w;
                }
                return Err(PowerCut);
            }
            // NOR: programming only clears bits.
            for (cell, w) in chip.mem[at..at + 4].iter_mut().zip(word) {
                *cell &= w;
            }
        }
        Ok(())
    }
}

fn blank() -> Rc<RefCell<Chip>> {
    Rc::new(RefCell::new(Chip {
        mem: vec![0xFF; PAGE * PAGES],
        erases: [0; PAGES],
        cut_in_erase: false,
    }))
}

/// A store "booted" on the chip, with `budget` flash steps before the power goes.
fn boot(chip: &Rc<RefCell<Chip>>, budget: Option<usize>) -> FlashStore<CutFlash> {
    let flash = CutFlash {
        chip: chip.clone(),
        budget,
        dead: false,
    };
    FlashStore::new(flash, 0..(PAGE * PAGES) as u32).expect("four whole pages")
}

/// A record that says which slot and which version it is, in every byte: a mix of two
/// versions is seen at once.
fn record(slot: Slot, version: u32) -> [u8; RECORD_LEN] {
    let mut r = [0u8; RECORD_LEN];
    for (i, b) in r.iter_mut().enumerate() {
        *b = (version as u8)
            .wrapping_mul(31)
            .wrapping_add(slot.key())
            .wrapping_add((i as u8).wrapping_mul(7));
    }
    r[..4].copy_from_slice(&version.to_le_bytes());
    r[4] = slot.key();
    r
}

fn version_of(slot: Slot, r: &[u8; RECORD_LEN]) -> Option<u32> {
    let v = u32::from_le_bytes(r[..4].try_into().unwrap());
    (*r == record(slot, v)).then_some(v)
}

const SLOTS: [Slot; 4] = [
    Slot::Settings,
    Slot::Calibration,
    Slot::Design(0),
    Slot::Design(7),
];

/// What a booted store holds: per slot, the version of a whole record (panics on a mix).
fn contents(chip: &Rc<RefCell<Chip>>) -> Vec<Option<u32>> {
    let mut s = boot(chip, None);
    SLOTS
        .iter()
        .map(|&slot| {
            let mut r = [0u8; RECORD_LEN];
            match s.load(slot, &mut r) {
                Ok(true) => Some(
                    version_of(slot, &r)
                        .unwrap_or_else(|| panic!("{slot:?}: the record is a mix of versions")),
                ),
                Ok(false) => None,
                Err(e) => panic!("{slot:?}: the store cannot be read after the cut: {e}"),
            }
        })
        .collect()
}

#[derive(Clone, Copy, Debug)]
enum Op {
    Save(usize, u32),
    Forget(usize),
}

fn apply(s: &mut FlashStore<CutFlash>, op: Op) -> Result<(), StoreError> {
    match op {
        Op::Save(i, v) => s.save(SLOTS[i], &record(SLOTS[i], v)),
        Op::Forget(i) => s.forget(SLOTS[i]),
    }
}

fn expect_after(before: &[Option<u32>], op: Op) -> Vec<Option<u32>> {
    let mut after = before.to_vec();
    match op {
        Op::Save(i, v) => after[i] = Some(v),
        Op::Forget(i) => after[i] = None,
    }
    after
}

#[test]
fn records_round_trip_and_forget() {
    let chip = blank();
    let mut s = boot(&chip, None);
    let mut r = [0u8; RECORD_LEN];
    assert_eq!(s.load(Slot::Settings, &mut r), Ok(false));
    s.save(Slot::Settings, &record(Slot::Settings, 1)).unwrap();
    s.save(Slot::Design(3), &record(Slot::Design(3), 9))
        .unwrap();
    drop(s);
    let mut s = boot(&chip, None);
    assert_eq!(s.load(Slot::Settings, &mut r), Ok(true));
    assert_eq!(version_of(Slot::Settings, &r), Some(1));
    s.forget(Slot::Design(3)).unwrap();
    let mut s = boot(&chip, None);
    assert_eq!(s.load(Slot::Design(3), &mut r), Ok(false));
    assert_eq!(s.load(Slot::Settings, &mut r), Ok(true));
}

/// Every operation of a long sequence (saves of four records, a forget now and then, enough
/// to fill and recycle every page several times) is cut at every one of its flash steps. After
/// each cut the store is booted again: every record is whole, the one written is the old or
/// the new version, the others are untouched. Then the operation is done again on the torn
/// flash, as the unit would after power-up, and must succeed with the new contents.
#[test]
fn a_power_cut_at_every_step_leaves_old_or_new_never_a_mix_never_lost() {
    let chip = blank();
    let mut state: Vec<Option<u32>> = vec![None; SLOTS.len()];
    let mut ops = Vec::new();
    for v in 1..=120u32 {
        let i = (v as usize * 3) % SLOTS.len();
        ops.push(if v % 9 == 0 {
            Op::Forget(i)
        } else {
            Op::Save(i, v)
        });
    }
    let (mut cuts, mut erase_cuts) = (0, 0);
    for op in ops {
        let after = expect_after(&state, op);
        let mut k = 0;
        loop {
            let snapshot = chip.borrow().clone();
            let mut s = boot(&chip, Some(k));
            let done = apply(&mut s, op).is_ok();
            drop(s);
            if done {
                assert_eq!(contents(&chip), after, "{op:?} without a cut");
                break;
            }
            cuts += 1;
            let torn_erase = chip.borrow().cut_in_erase;
            erase_cuts += usize::from(torn_erase);
            let seen = contents(&chip);
            for (j, (got, (old, new))) in seen.iter().zip(state.iter().zip(&after)).enumerate() {
                assert!(
                    got == old || got == new,
                    "{op:?} cut after {k} steps: {:?} holds {got:?}, expected {old:?} or {new:?}",
                    SLOTS[j]
                );
            }
            // Done again after the restart: it completes, the new contents are there.
            let mut s = boot(&chip, None);
            apply(&mut s, op).unwrap_or_else(|e| panic!("{op:?} again after a cut at {k}: {e}"));
            drop(s);
            assert_eq!(contents(&chip), after, "{op:?} again after a cut at {k}");
            // Back to the flash as it was before the cut, for the next cut point.
            *chip.borrow_mut() = snapshot;
            k += 1;
        }
        state = after;
    }
    println!("power cuts tried: {cuts}, of which inside an erase: {erase_cuts}");
    assert!(cuts > 1000, "every step of every operation was cut: {cuts}");
    assert!(erase_cuts >= 40, "cuts inside erases: {erase_cuts}");
}

/// Wear: many saves spread their erases evenly over the pages (each page erased in turn).
#[test]
fn erases_spread_evenly_over_the_pages() {
    let chip = blank();
    let mut s = boot(&chip, None);
    for v in 0..2000u32 {
        let i = (v as usize) % SLOTS.len();
        s.save(SLOTS[i], &record(SLOTS[i], v)).unwrap();
    }
    let erases = chip.borrow().erases;
    let (min, max) = (erases.iter().min().unwrap(), erases.iter().max().unwrap());
    println!("erases per page after 2000 saves: {erases:?}");
    // 2000 records of about 400 bytes are about 400 pages' worth of writes.
    assert!(*min >= 50, "{erases:?}");
    assert!(max - min <= 1, "erases spread evenly: {erases:?}");
    assert_eq!(
        contents(&chip),
        vec![Some(1996), Some(1997), Some(1998), Some(1999)]
    );
}

#[test]
fn ram_flash_behaves_as_nor() {
    let mut mem = vec![0u8; 2 * RAM_PAGE];
    let mut f = RamFlash::new(&mut mem);
    f.erase(0, RAM_PAGE as u32).unwrap();
    f.write(0, &[0xF0, 0x0F, 0xFF, 0x00]).unwrap();
    f.write(0, &[0x3C, 0xFF, 0xFF, 0xFF]).unwrap();
    let mut b = [0u8; 4];
    f.read(0, &mut b).unwrap();
    assert_eq!(b, [0x30, 0x0F, 0xFF, 0x00], "programming only clears bits");
    assert_eq!(f.write(2, &[0; 4]), Err(RamFlashError::NotAligned));
    assert_eq!(f.erase(100, 200), Err(RamFlashError::NotAligned));
    assert_eq!(
        f.write(2 * RAM_PAGE as u32, &[0; 4]),
        Err(RamFlashError::OutOfBounds)
    );
    // The store on it.
    let mut mem = vec![0xFFu8; 4 * RAM_PAGE];
    let mut s = FlashStore::new(RamFlash::new(&mut mem), 0..(4 * RAM_PAGE) as u32).unwrap();
    s.save(Slot::Calibration, &record(Slot::Calibration, 5))
        .unwrap();
    let mut r = [0u8; RECORD_LEN];
    assert_eq!(s.load(Slot::Calibration, &mut r), Ok(true));
    assert_eq!(version_of(Slot::Calibration, &r), Some(5));
    // Too small a range (one page) is refused.
    assert!(FlashStore::new(RamFlash::new(&mut mem), 0..RAM_PAGE as u32).is_err());
}

#[test]
fn ram_flash_is_erased_once_on_first_power_up_and_kept_after() {
    let mut mem = vec![0u8; 8 * RAM_PAGE];
    {
        let f = RamFlash::formatted(&mut mem);
        assert_eq!(f.capacity(), 7 * RAM_PAGE);
        let mut s = FlashStore::new(f, 0..(7 * RAM_PAGE) as u32).unwrap();
        s.save(Slot::Settings, &record(Slot::Settings, 3)).unwrap();
    }
    assert!(mem[..7 * RAM_PAGE].iter().any(|&b| b != 0xFF));
    assert_eq!(&mem[7 * RAM_PAGE..7 * RAM_PAGE + 16], &RAM_FLASH_MAGIC);
    // A "reset": the same memory, formatted again: the record stays.
    let mut s = FlashStore::new(RamFlash::formatted(&mut mem), 0..(7 * RAM_PAGE) as u32).unwrap();
    let mut r = [0u8; RECORD_LEN];
    assert_eq!(s.load(Slot::Settings, &mut r), Ok(true));
    assert_eq!(version_of(Slot::Settings, &r), Some(3));
}
