//! The verdict screen's content, from the console's typed last check
//! ([`Console::last_check`]): the same result the serial reply printed, read from the engine,
//! not from the reply's text.
use crate::screen::{Verdict, VerdictScreen};
use biasjig_core::check::Node;
use biasjig_core::console::{Channel, Clock, Console, Jig, LastCheck, Store};
use biasjig_core::explain::FaultWords;

/// Room for the fault in words, bytes (the screen shows three lines of 21 characters).
pub(super) const FAULT_TEXT: usize = 96;

/// The screen's node of a judged node: the three node voltages have an input of their own.
fn channel(node: Node) -> Option<Channel> {
    match node {
        Node::Vb => Some(Channel::Vb),
        Node::Ve => Some(Channel::Ve),
        Node::Vc => Some(Channel::Vc),
        _ => None,
    }
}

/// The verdict screen of the console's last judged board, its fault in words written into
/// `text`; `None` if no board was judged.
pub(super) fn verdict_screen<'t, J: Jig, S: Store, C: Clock>(
    console: &Console<J, S, C>,
    text: &'t mut heapless::String<FAULT_TEXT>,
) -> Option<VerdictScreen<'t>> {
    let last = console.last_check()?;
    let verdict = if last.pass() {
        Verdict::Pass
    } else {
        Verdict::Fail
    };
    if verdict == Verdict::Fail {
        fault_words(text, last, console);
    }
    Some(VerdictScreen {
        verdict,
        // The first node outside its window that the jig reads, in the reply's order.
        failing_node: last
            .nodes()
            .iter()
            .filter(|n| !n.ok)
            .find_map(|n| channel(n.node)),
        fault: text.as_str(),
    })
}

/// The most likely fault of the judged board, in words for the screen (ASCII: the screen's
/// font has no Ω or µ).
fn fault_words<J: Jig, S: Store, C: Clock>(
    out: &mut heapless::String<FAULT_TEXT>,
    last: &LastCheck,
    console: &Console<J, S, C>,
) {
    let Some(explained) = last.explained() else {
        return;
    };
    let mut ascii = Ascii(out);
    let _ = match last.first_fault() {
        Some(h) if explained => core::fmt::Write::write_fmt(
            &mut ascii,
            format_args!("{}", FaultWords::of(&console.settings().stage, h)),
        ),
        _ => core::fmt::Write::write_str(&mut ascii, "no single fault explains the readings"),
    };
}

/// Writes text in ASCII: Ω as "ohm", µ as "u", any other non-ASCII character as "?".
struct Ascii<'a, W: core::fmt::Write>(&'a mut W);

impl<W: core::fmt::Write> core::fmt::Write for Ascii<'_, W> {
    fn write_str(&mut self, s: &str) -> core::fmt::Result {
        for c in s.chars() {
            match c {
                'Ω' => self.0.write_str("ohm")?,
                'µ' => self.0.write_char('u')?,
                c if c.is_ascii() => self.0.write_char(c)?,
                _ => self.0.write_char('?')?,
            }
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ascii_spells_out_what_the_font_lacks() {
        let mut s = heapless::String::<32>::new();
        let _ = core::fmt::Write::write_str(&mut Ascii(&mut s), "4.7 kΩ, 10 µF, 25 °C");
        assert_eq!(s.as_str(), "4.7 kohm, 10 uF, 25 ?C");
    }

    #[test]
    fn only_the_node_voltages_have_a_channel() {
        assert_eq!(channel(Node::Vb), Some(Channel::Vb));
        assert_eq!(channel(Node::Vc), Some(Channel::Vc));
        assert_eq!(channel(Node::Vbe), None);
        assert_eq!(channel(Node::Ic), None);
    }
}
