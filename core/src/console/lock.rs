//! The PIN lock: `lock` and `unlock`, the refusal of an edit while locked, and the back-off
//! after wrong PINs (it doubles with each one after the free tries, and resumes after a
//! restart, the count of wrong PINs being kept with the settings).
#![expect(
    clippy::result_large_err,
    reason = "an outcome carries its status text in a fixed buffer, with no allocation"
)]

use super::jig::{Clock, Jig, Store};
use super::parse::Pin;
use super::reply::{Fail, Outcome, Text};
use super::{Code, Console};

/// Wrong PINs allowed before the back-off starts.
pub const PIN_FREE_TRIES: u32 = 3;
/// First back-off after the free tries, ms; it doubles with each further wrong PIN.
pub const PIN_BACKOFF_MS: u64 = 1000;
/// Longest back-off, ms.
pub const PIN_BACKOFF_MAX_MS: u64 = 300_000;

impl<J: Jig, S: Store, C: Clock> Console<J, S, C> {
    /// `Ok` while unlocked; the refusal of an edit while locked.
    pub(super) fn editable(&self) -> Result<(), Fail> {
        if self.is_locked() {
            Err(Fail::new(
                Code::Locked,
                format_args!("locked: unlock PIN to change this"),
            ))
        } else {
            Ok(())
        }
    }

    /// After a restart with wrong PINs kept past the free tries: wait a back-off again.
    pub(super) fn resume_backoff(&mut self) {
        if self.settings.pin_failures >= PIN_FREE_TRIES {
            self.retry_at_ms = self.clock.now_ms().saturating_add(self.backoff_ms());
        }
    }

    fn backoff_ms(&self) -> u64 {
        let extra = self
            .settings
            .pin_failures
            .saturating_sub(PIN_FREE_TRIES)
            .min(20);
        PIN_BACKOFF_MS
            .saturating_mul(1u64 << extra)
            .min(PIN_BACKOFF_MAX_MS)
    }

    #[inline(never)]
    pub(super) fn lock(&mut self, pin: Pin) -> Outcome {
        if self.is_locked() {
            return Err(Fail::new(Code::Locked, format_args!("already locked")));
        }
        self.settings.pin = Some(pin);
        self.settings.pin_failures = 0;
        match self.save_settings() {
            Ok(()) => Ok(Some(Text::of(format_args!("locked")))),
            Err(_) => Ok(Some(Text::of(format_args!(
                "locked until power-off (not kept)"
            )))),
        }
    }

    #[inline(never)]
    pub(super) fn unlock(&mut self, pin: Pin) -> Outcome {
        let Some(stored) = self.settings.pin else {
            return Ok(Some(Text::of(format_args!("not locked"))));
        };
        let now = self.clock.now_ms();
        if now < self.retry_at_ms {
            let wait = (self.retry_at_ms - now).div_ceil(1000);
            return Err(Fail::new(
                Code::Wait,
                format_args!("too many wrong PINs: wait {wait} s"),
            ));
        }
        if stored == pin {
            self.settings.pin = None;
            self.settings.pin_failures = 0;
            self.retry_at_ms = 0;
            let _ = self.save_settings();
            return Ok(Some(Text::of(format_args!("unlocked"))));
        }
        self.settings.pin_failures = self.settings.pin_failures.saturating_add(1);
        let n = self.settings.pin_failures;
        let _ = self.save_settings();
        if n >= PIN_FREE_TRIES {
            let delay = self.backoff_ms();
            self.retry_at_ms = now.saturating_add(delay);
            Err(Fail::new(
                Code::Pin,
                format_args!(
                    "wrong PIN ({n} in a row): next try in {} s",
                    delay.div_ceil(1000)
                ),
            ))
        } else {
            Err(Fail::new(
                Code::Pin,
                format_args!("wrong PIN ({n} in a row)"),
            ))
        }
    }
}
