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
