//! Designs kept on the unit by name: `keep NAME`, `designs`, `choose NAME`, `forget NAME`.
//!
//! A kept design is the stage, the transistor, the ambient range and the meter (everything the
//! windows and the diagnosis are computed from: the windows themselves are computed again at
//! each board's measured supply), under a name, in one of [`DESIGN_SLOTS`] store records. The
//! settings record names the chosen design, so the unit starts on the design chosen last.
#![cfg_attr(
    feature = "kept-designs",
    expect(
        clippy::result_large_err,
        reason = "an outcome carries its status text in a fixed buffer, with no allocation"
    )
)]

#[cfg(feature = "kept-designs")]
use embedded_io::Write;

#[cfg(feature = "kept-designs")]
use super::format::Val;
use super::jig::{Clock, Jig, Slot, Store, DESIGN_SLOTS, RECORD_LEN};
use super::parse::Name;
use super::record::{self, Settings};
#[cfg(feature = "kept-designs")]
use super::reply::{Fail, Outcome, Reply, Text};
#[cfg(feature = "kept-designs")]
use super::Code;
use super::Console;

/// One kept design as `designs` lists it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct KeptDesign {
    /// Its store slot, `0 .. DESIGN_SLOTS`.
    pub slot: u8,
    /// Its name.
    pub name: Name,
    /// Its design hash (stage and transistor).
    pub hash: u64,
    /// Nominal supply, V.
    pub vcc: f64,
}

/// The kept designs, in slot order.
pub type KeptList = heapless::Vec<KeptDesign, { DESIGN_SLOTS as usize }>;

#[cfg(feature = "kept-designs")]
fn store_fail(what: &str, e: super::StoreError) -> Fail {
    Fail::new(Code::Store, format_args!("{what}: {e}"))
}

impl<J: Jig, S: Store, C: Clock> Console<J, S, C> {
    /// The kept design in `slot`, if its record is there and whole.
    fn kept_in(&mut self, slot: u8) -> Option<(Name, Settings)> {
        let mut rec = [0u8; RECORD_LEN];
        match self.store.load(Slot::Design(slot), &mut rec) {
            Ok(true) => record::decode_design(slot, &rec)
                .filter(|(_, s)| s.stage.validate().is_ok() && s.profile.validate().is_ok()),
            _ => None,
        }
    }

    /// Every kept design, in slot order (a damaged record is left out).
    pub fn kept_designs(&mut self) -> KeptList {
        let mut list = KeptList::new();
        for slot in 0..DESIGN_SLOTS {
            if let Some((name, s)) = self.kept_in(slot) {
                let _ = list.push(KeptDesign {
                    slot,
                    name,
                    hash: record::design_hash(&s.stage, &s.profile),
                    vcc: s.stage.vcc.value,
                });
            }
        }
        list
    }

    /// The name of the chosen design, while the stage is still the one chosen or kept.
    pub fn chosen_design(&self) -> Option<Name> {
        self.settings.design
    }

    #[cfg(feature = "kept-designs")]
    fn find_kept(&mut self, name: &Name) -> Result<(u8, Settings), Fail> {
        for slot in 0..DESIGN_SLOTS {
            if let Some((n, s)) = self.kept_in(slot) {
                if n.same(name) {
                    return Ok((slot, s));
                }
            }
        }
        Err(Fail::new(
            Code::Value,
            format_args!("name: {name}: no such design on this unit (designs lists them)"),
        ))
    }

    /// `keep NAME`: the stage and its settings kept under NAME (replacing a design of that
    /// name), and chosen.
    #[inline(never)]
    #[cfg(feature = "kept-designs")]
    pub(super) fn keep(&mut self, name: Name) -> Outcome {
        self.editable()?;
        let mut free = None;
        let mut same = None;
        for slot in 0..DESIGN_SLOTS {
            match self.kept_in(slot) {
                Some((n, _)) if n.same(&name) => {
                    same = Some(slot);
                    break;
                }
                Some(_) => {}
                None => free = free.or(Some(slot)),
            }
        }
        let Some(slot) = same.or(free) else {
            return Err(Fail::new(
                Code::Store,
                format_args!(
                    "keep: {name}: the unit keeps {DESIGN_SLOTS} designs and all are taken: forget one first (designs lists them)"
                ),
            ));
        };
        let mut rec = [0u8; RECORD_LEN];
        record::encode_design(name, &self.settings, slot, &mut rec);
        self.store
            .save(Slot::Design(slot), &rec)
            .map_err(|e| store_fail("design not kept", e))?;
        self.settings.design = Some(name);
        self.save_settings()?;
        Ok(Some(Text::of(format_args!(
            "kept {name}, design hash {:016x}; the unit starts on it",
            self.design_hash()
        ))))
    }

    /// `choose NAME`: a kept design becomes the stage, and the design the unit starts on.
    #[inline(never)]
    #[cfg(feature = "kept-designs")]
    pub(super) fn choose(&mut self, name: Name) -> Outcome {
        self.editable()?;
        let (_, kept) = self.find_kept(&name)?;
        let next = Settings {
            pin: self.settings.pin,
            pin_failures: self.settings.pin_failures,
            ..kept
        };
        self.settings = next;
        self.last = None;
        self.save_settings()?;
        Ok(Some(Text::of(format_args!(
            "the stage is {}, design hash {:016x}",
            kept.design.unwrap_or(name),
            self.design_hash()
        ))))
    }

    /// `forget NAME`: the kept design is removed (the stage stays as it is).
    #[inline(never)]
    #[cfg(feature = "kept-designs")]
    pub(super) fn forget(&mut self, name: Name) -> Outcome {
        self.editable()?;
        let (slot, _) = self.find_kept(&name)?;
        self.store
            .forget(Slot::Design(slot))
            .map_err(|e| store_fail("design not forgotten", e))?;
        if self.settings.design.is_some_and(|d| d.same(&name)) {
            self.settings.design = None;
            self.save_settings()?;
        }
        Ok(Some(Text::of(format_args!("forgot {name}"))))
    }

    /// `designs`: one line per kept design.
    #[inline(never)]
    #[cfg(feature = "kept-designs")]
    pub(super) fn list_designs<W: Write>(&mut self, r: &mut Reply<'_, W>) -> Outcome {
        let list = self.kept_designs();
        let chosen = self.settings.design;
        let current = self.design_hash();
        for k in &list {
            // Chosen: the unit's stage is this design, unchanged since it was chosen or kept.
            let is_chosen = chosen.is_some_and(|c| c.same(&k.name)) && k.hash == current;
            r.fields(
                &[
                    ("design", Val::Word(k.name.as_str())),
                    ("hash", Val::Hash(k.hash)),
                    ("vcc", Val::Num(k.vcc)),
                    ("chosen", Val::Flag(is_chosen, "*", " ")),
                ],
                "{3} {0:16} {1}  VCC {2} V",
            );
        }
        Ok(Some(Text::of(format_args!(
            "{} of {DESIGN_SLOTS} kept",
            list.len()
        ))))
    }
}
