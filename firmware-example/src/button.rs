//! Debounced push button (the hardware jig's "measure" button, active low).

/// Debouncer: a new level counts once it was seen on `N` consecutive polls.
pub struct Debounce<const N: u8> {
    stable_pressed: bool,
    count: u8,
}

impl<const N: u8> Default for Debounce<N> {
    fn default() -> Self {
        Self::new()
    }
}

impl<const N: u8> Debounce<N> {
    /// Released.
    pub const fn new() -> Self {
        Debounce {
            stable_pressed: false,
            count: 0,
        }
    }

    /// Feeds one poll (`pressed` = pin low for an active-low button); true once per press.
    pub fn update(&mut self, pressed: bool) -> bool {
        if pressed == self.stable_pressed {
            self.count = 0;
            return false;
        }
        self.count += 1;
        if self.count >= N {
            self.count = 0;
            self.stable_pressed = pressed;
            return pressed;
        }
        false
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn one_event_per_press_and_bounces_ignored() {
        let mut b = Debounce::<3>::new();
        let polls = [
            true, false, true, true, true, true, false, true, false, false, false, true, true, true,
        ];
        let events: Vec<usize> = polls
            .iter()
            .enumerate()
            .filter_map(|(i, &p)| b.update(p).then_some(i))
            .collect();
        assert_eq!(events, vec![4, 13]);
    }
}

/// What a press of the one button means: a short press measures and judges the board, a long
/// one (held [`LONG_PRESS_MS`]) steps to the next kept design.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Press {
    /// Released before [`LONG_PRESS_MS`]: measure and judge.
    Short,
    /// Held [`LONG_PRESS_MS`] (reported while still held): choose the next kept design.
    Long,
}

/// Hold time of a long press, ms.
pub const LONG_PRESS_MS: u16 = 800;

/// Tells short from long presses of a debounced button polled once a millisecond.
pub struct Presses<const N: u8> {
    debounce: Debounce<N>,
    held_ms: Option<u16>,
    long_sent: bool,
}

impl<const N: u8> Default for Presses<N> {
    fn default() -> Self {
        Self::new()
    }
}

impl<const N: u8> Presses<N> {
    /// Released.
    pub const fn new() -> Self {
        Presses {
            debounce: Debounce::new(),
            held_ms: None,
            long_sent: false,
        }
    }

    /// Feeds one poll (1 ms apart; `pressed` = pin low for an active-low button): a long
    /// press as soon as it has been held long enough, a short one at its release.
    pub fn update(&mut self, pressed: bool) -> Option<Press> {
        let went_down = self.debounce.update(pressed);
        let down = self.debounce.stable_pressed;
        if went_down {
            self.held_ms = Some(0);
            self.long_sent = false;
            return None;
        }
        match (self.held_ms, down) {
            (Some(t), true) => {
                let t = t.saturating_add(1);
                self.held_ms = Some(t);
                if t >= LONG_PRESS_MS && !self.long_sent {
                    self.long_sent = true;
                    return Some(Press::Long);
                }
                None
            }
            (Some(_), false) => {
                self.held_ms = None;
                (!self.long_sent).then_some(Press::Short)
            }
            (None, _) => None,
        }
    }
}

#[cfg(test)]
mod press_tests {
    use super::*;

    fn run(p: &mut Presses<3>, pressed: bool, ms: u16) -> Vec<Press> {
        (0..ms).filter_map(|_| p.update(pressed)).collect()
    }

    #[test]
    fn short_at_release_long_while_held_once() {
        let mut p = Presses::<3>::new();
        assert!(run(&mut p, false, 10).is_empty());
        assert!(
            run(&mut p, true, 200).is_empty(),
            "nothing while a short press is held"
        );
        assert_eq!(run(&mut p, false, 10), vec![Press::Short]);
        assert_eq!(
            run(&mut p, true, 2000),
            vec![Press::Long],
            "one long press, while held"
        );
        assert!(
            run(&mut p, false, 10).is_empty(),
            "no short press after a long one"
        );
        // A bounce shorter than the debounce is no press at all.
        assert!(run(&mut p, true, 2).is_empty());
        assert!(run(&mut p, false, 10).is_empty());
    }
}
