//! The application's tests on the host: the router, the queries, the button path.
use super::*;
use crate::cost::NoTicks;
use crate::jig::EmulatedJig;
use crate::screen::{draw_show, FrameBuffer};
use biasjig_core::console::jig::MemoryStore;
use biasjig_core::console::Identity;
use biasjig_core::kv::value;

struct Ms(u64);
impl Clock for Ms {
    fn now_ms(&mut self) -> u64 {
        self.0 += 1;
        self.0
    }
}

struct TestBoard {
    fb: FrameBuffer,
    shown: usize,
}
impl Board for TestBoard {
    fn stack(&self) -> (usize, usize) {
        (1234, 4096)
    }
    fn show(&mut self, what: &Show<'_>) {
        self.shown += 1;
        let _ = draw_show(&mut self.fb, what);
    }
    fn screen_art<W: Write>(&mut self, out: &mut W) -> Result<bool, W::Error> {
        self.fb.write_art(out)?;
        Ok(true)
    }
}

type TestApp = App<'static, EmulatedJig, MemoryStore, Ms, TestBoard, NoTicks>;

type TestConsole = Console<EmulatedJig, MemoryStore, Ms>;

/// A console on the emulated jig (board seed 5) and a board with a framebuffer.
fn parts() -> (&'static mut TestConsole, TestBoard) {
    let console = Box::leak(Box::new(Console::new(
        Identity::new("test", crate::VERSION),
        EmulatedJig::new(5),
        MemoryStore::default(),
        Ms(0),
    )));
    let board = TestBoard {
        fb: FrameBuffer::new(),
        shown: 0,
    };
    (console, board)
}

fn app() -> TestApp {
    let (console, board) = parts();
    App::new(console, board, NoTicks)
}

fn talk(app: &mut TestApp, input: &[u8]) -> String {
    let mut out = Vec::new();
    for &b in input {
        app.feed(b, &mut out).unwrap();
    }
    String::from_utf8(out).unwrap()
}

#[test]
fn console_lines_reach_the_core_console() {
    let mut a = app();
    assert_eq!(talk(&mut a, b"\r\n"), "ok\r\n");
    let idn = talk(&mut a, b"*idn?\n");
    assert_eq!(idn, format!("biasjig,test,0,{}\r\nok\r\n", crate::VERSION));
    assert!(talk(&mut a, b"hello\n").starts_with("err UNKNOWN"));
    // f and fo are held back, then go on to the console.
    assert!(talk(&mut a, b"fo\r\n").starts_with("err UNKNOWN"));
    assert!(talk(&mut a, b"f\n").starts_with("err UNKNOWN"));
    let long = vec![b'x'; 300];
    let t = talk(&mut a, &long);
    assert!(t.starts_with("err TOO_LONG"), "{t}");
    // The rest of the overlong line, up to its end, is discarded without a reply.
    assert_eq!(talk(&mut a, b"xx\r\n"), "");
    assert_eq!(talk(&mut a, b"\r\n"), "ok\r\n");
    assert!(talk(&mut a, b"a\x01b\n").starts_with("err CONTROL"));
    assert_eq!(talk(&mut a, b"mode machine\r\n"), "ok\r\n");
    assert_eq!(talk(&mut a, b"mode\n"), "mode=machine\r\nok\r\n");
}

/// The budget build (no `full-console`): the design search, the spread, the parts list, the
/// designs kept by name and the gain calibration are refused, each saying where to do it;
/// everything that judges a board stays.
/// The budget build keeps no designs by name: a long press shows where to choose one and
/// leaves the stage as it was.
#[cfg(not(feature = "full-console"))]
#[test]
fn budget_build_long_press_says_where_to_choose() {
    let mut a = app();
    talk(&mut a, b"mode machine\n");
    let before = talk(&mut a, b"hash\n");
    let shown = a.board_mut().shown;
    a.press(Press::Long);
    assert_eq!(a.board_mut().shown, shown + 1);
    let mut art = Vec::new();
    assert!(a.board_mut().screen_art(&mut art).unwrap());
    assert_ne!(art, {
        let mut blank = Vec::new();
        FrameBuffer::new().write_art(&mut blank).unwrap();
        blank
    });
    assert_eq!(talk(&mut a, b"hash\n"), before);
}

#[cfg(not(feature = "full-console"))]
#[test]
fn budget_build_refuses_what_it_leaves_out() {
    let mut a = app();
    talk(&mut a, b"mode machine\n");
    for line in [
        "design\n",
        "pick 1\n",
        "requirement\n",
        "requirement vcc 9\n",
    ] {
        let t = talk(&mut a, line.as_bytes());
        assert!(t.starts_with("err NOT_SUPPORTED"), "{line}: {t}");
        assert!(t.contains("biasjig design"), "{line}: {t}");
    }
    for (line, word) in [
        ("spread\n", "spread:"),
        ("parts\n", "parts:"),
        ("keep preamp\n", "keep:"),
        ("designs\n", "designs:"),
        ("choose preamp\n", "choose:"),
        ("forget preamp\n", "forget:"),
        ("calibrate gain 1000 10\n", "calibrate gain:"),
    ] {
        let t = talk(&mut a, line.as_bytes());
        assert!(
            t.starts_with(&format!("err NOT_SUPPORTED {word}")) && t.contains("full image"),
            "{line}: {t}"
        );
    }
    assert!(talk(&mut a, b"limits\n").contains("node=vb low="));
}

/// A `fw:` line is assembled by the core's line assembler, with the console's framing: CR LF
/// ends it once, backspace edits it while echo is on, a control byte is refused.
#[test]
fn query_lines_have_the_consoles_framing() {
    let mut a = app();
    assert_eq!(
        talk(&mut a, b"fw:stack?\r\nfw:stack?\n"),
        "stack 1234 4096\r\nok\r\n".repeat(2)
    );
    assert!(talk(&mut a, b"fw:st\x01ack?\n").starts_with("err CONTROL control byte 0x01"));
    assert_eq!(talk(&mut a, b"fw:\r\n\r\n").lines().next(), Some("err UNKNOWN fw:: firmware queries are fw:stack? fw:cost? fw:clock? fw:measure? fw:screen? fw:press short|long fw:board? fw:board SEED"));
    talk(&mut a, b"echo on\n");
    assert_eq!(
        talk(&mut a, b"fw:stackx\x08?\r\n"),
        "fw:stackx\x08 \x08?\r\nstack 1234 4096\r\nok\r\n"
    );
    // An over-long query is answered at once and discarded up to its end.
    let long = [b"fw:".as_slice(), &[b'x'; 70], b"\r\n"].concat();
    talk(&mut a, b"echo off\n");
    assert_eq!(
        talk(&mut a, &long),
        "err TOO_LONG firmware query longer than 64 bytes\r\n"
    );
    assert_eq!(talk(&mut a, b"fw:stack?\n"), "stack 1234 4096\r\nok\r\n");
}

#[test]
fn firmware_queries() {
    // (fw:press is tested with the button path.)
    let mut a = app();
    assert_eq!(talk(&mut a, b"fw:stack?\r\n"), "stack 1234 4096\r\nok\r\n");
    // The LF of the CR LF above was swallowed: no extra `ok`.
    assert_eq!(talk(&mut a, b"FW:COST?\n"), "cost 0\r\nok\r\n");
    let m = talk(&mut a, b"fw:measure?\n");
    let lines: Vec<&str> = m.split("\r\n").collect();
    assert_eq!(lines.len(), 6, "{m}");
    assert!(lines[0].starts_with("VCC 1"), "{m}");
    assert_eq!(lines[4], "ok");
    let art = talk(&mut a, b"fw:screen?\n");
    assert_eq!(art.lines().count(), 33);
    assert!(art.ends_with("ok\r\n") && art.contains('#'));
    assert!(talk(&mut a, b"fw:nothing\n").starts_with("err UNKNOWN"));
    let long = [b"fw:".as_slice(), &[b'x'; 100], b"\n"].concat();
    assert!(talk(&mut a, &long).starts_with("err TOO_LONG"));
    let b = talk(&mut a, b"fw:board?\n");
    assert!(b.starts_with("seed=5 fault=none vcc=1"), "{b}");
    assert_eq!(talk(&mut a, b"fw:board 77\n"), "ok\r\n");
    assert!(talk(&mut a, b"fw:board?\n").starts_with("seed=77 "));
    assert!(talk(&mut a, b"fw:board x\n").starts_with("err VALUE"));
}

#[test]
fn inject_reaches_the_emulated_board_and_design_is_followed() {
    let mut a = app();
    talk(&mut a, b"mode machine\n");
    let good = talk(&mut a, b"measure\n");
    assert!(
        good.starts_with("vcc=") && good.ends_with("ok\r\n"),
        "{good}"
    );
    assert_eq!(talk(&mut a, b"inject r1 open\n"), "ok\r\n");
    assert!(talk(&mut a, b"fw:board?\n").contains("fault=R1:open"));
    let open = talk(&mut a, b"measure\n");
    assert_ne!(open, good);
    talk(&mut a, b"inject none\n");
    // A new design: the board is drawn again around it.
    let before = talk(&mut a, b"fw:board?\n");
    assert_eq!(talk(&mut a, b"set rc 3k9\n"), "ok\r\n");
    let after = talk(&mut a, b"fw:board?\n");
    assert_ne!(before, after);
    let rc: f64 = value(after.trim_end(), "rc").unwrap().parse().unwrap();
    assert!((rc / 3900.0 - 1.0).abs() <= 0.05, "{after}");
}

#[cfg(feature = "full-console")]
#[test]
fn calibrate_gain_corrects_the_emulated_signal_path() {
    use biasjig_core::console::Jig as _;
    let mut a = app();
    talk(&mut a, b"mode machine\n");
    let g0 = a.console.jig.gain(1000.0).unwrap();
    // Declare a reference 10 % above what the path reads: the correction is 1/1.1.
    let line = format!("calibrate gain 1k {}\n", g0 * 1.1);
    let t = talk(&mut a, line.as_bytes());
    assert!(t.ends_with("ok\r\n"), "{t}");
    let k: f64 = value(t.lines().next().unwrap().trim_end(), "load_over_source")
        .unwrap()
        .parse()
        .unwrap();
    // The tone measurements of the emulated jig differ by up to about 0.6 % between reads
    // (the console takes its own).
    assert!((k * 1.1 - 1.0).abs() < 1.5e-2, "{t}");
    let g1 = a.console.jig.gain(1000.0).unwrap();
    assert!((g1 / (g0 * 1.1) - 1.0).abs() < 1.5e-2, "{g0} {g1}");
    assert!(talk(&mut a, b"calibrate\n").contains("signal load_over_source="));
    assert_eq!(talk(&mut a, b"calibrate reset\n"), "ok\r\n");
    let g2 = a.console.jig.gain(1000.0).unwrap();
    assert!((g2 / g0 - 1.0).abs() < 1.5e-2, "{g0} {g2}");
}

/// The verdict screen comes from the console's typed last check, the same in machine and
/// human mode (the reply's text is not read): after a failing `test` it names the failing node
/// and the fault in words; a refused `test` (an open probe) leaves the screen as it was.
#[test]
fn verdict_screen_comes_from_the_last_check_in_either_mode() {
    let mut a = app();
    let art = |a: &mut TestApp| {
        let mut v = Vec::new();
        a.board_mut().fb.write_art(&mut v).unwrap();
        v
    };
    talk(&mut a, b"mode machine\n");
    talk(&mut a, b"inject rc open\n");
    assert!(talk(&mut a, b"test\n").contains("verdict=fail"));
    let machine = art(&mut a);
    let mut text = heapless::String::new();
    let v = verdict::verdict_screen(a.console, &mut text).unwrap();
    assert_eq!(v.verdict, crate::screen::Verdict::Fail);
    assert!(v.failing_node.is_some(), "{v:?}");
    assert!(!v.fault.is_empty() && v.fault.is_ascii(), "{v:?}");
    talk(&mut a, b"mode human\n");
    let shown = a.board_mut().shown;
    talk(&mut a, b"test\n");
    assert_eq!(a.board_mut().shown, shown + 1);
    assert_eq!(art(&mut a), machine, "the same screen in human mode");
    talk(&mut a, b"inject none\n");
    talk(&mut a, b"test\n");
    let pass = art(&mut a);
    assert_ne!(pass, machine);
    // A check that is refused draws nothing.
    let shown = a.board_mut().shown;
    assert!(talk(&mut a, b"check vb x\n").contains("err "));
    assert_eq!(a.board_mut().shown, shown);
    assert_eq!(art(&mut a), pass);
}

/// The button path on the emulated jig: with no design kept a long press says so; with two
/// kept, long presses step through them (the console's stage follows) and a short press
/// measures and judges, showing the fault in words. Screens compared with golden pictures
/// (regression pins, see `screen::tests::golden`).
#[cfg(feature = "full-console")]
#[test]
fn button_path_chooses_designs_and_judges() {
    let mut a = app();
    talk(&mut a, b"mode machine\n");
    let screen = |a: &mut TestApp| {
        let fb = &a.board_mut().fb;
        let mut copy = FrameBuffer::new();
        for y in 0..crate::screen::HEIGHT {
            for x in 0..crate::screen::WIDTH {
                if fb.pixel(x, y) {
                    use embedded_graphics::prelude::*;
                    let _ = Pixel(
                        Point::new(x as i32, y as i32),
                        embedded_graphics::pixelcolor::BinaryColor::On,
                    )
                    .draw(&mut copy);
                }
            }
        }
        copy
    };
    a.press(Press::Long);
    crate::screen::tests::golden("no-designs", &screen(&mut a));
    assert!(talk(&mut a, b"keep preamp-12\n").starts_with("ok kept preamp-12, design hash "));
    talk(&mut a, b"set vcc 15\n");
    talk(&mut a, b"keep pump-15\n");
    let hash15 = talk(&mut a, b"hash\n");
    // Long press: from pump-15 (chosen last) on to the first kept design.
    a.press(Press::Long);
    assert!(talk(&mut a, b"stage\n").contains("design=preamp-12"));
    crate::screen::tests::golden("button-design-1", &screen(&mut a));
    a.press(Press::Long);
    assert_eq!(talk(&mut a, b"hash\n"), hash15);
    crate::screen::tests::golden("button-design-2", &screen(&mut a));
    // Short press: measure and judge; the emulated board follows the chosen design.
    talk(&mut a, b"inject rc open\n");
    a.press(Press::Short);
    crate::screen::tests::golden("button-fail-rc-open", &screen(&mut a));
    talk(&mut a, b"inject none\n");
    a.press(Press::Short);
    crate::screen::tests::golden("verdict-pass", &screen(&mut a));
    talk(&mut a, b"lock 1234\n");
    a.press(Press::Long);
    crate::screen::tests::golden("locked", &screen(&mut a));
    assert_eq!(talk(&mut a, b"hash\n"), hash15, "locked: the design stays");
    assert!(talk(&mut a, b"fw:press sideways\n").starts_with("err VALUE press"));
}

/// Ticks that count how often they are read (twice per timed line).
struct Counted(std::rc::Rc<std::cell::Cell<u32>>);
impl crate::cost::Ticks for Counted {
    fn now(&mut self) -> u32 {
        self.0.set(self.0.get() + 1);
        0
    }
}

/// A console line is timed once: the LF of its CR LF goes to the console but is not a line of
/// its own, so it does not replace the line's cost with its own.
#[test]
fn a_cr_lf_line_is_timed_once() {
    let reads = std::rc::Rc::new(std::cell::Cell::new(0));
    let (console, board) = parts();
    let mut a = App::new(console, board, Counted(reads.clone()));
    let before = reads.get();
    let mut out = Vec::new();
    for &b in b"hash\r\n" {
        a.feed(b, &mut out).unwrap();
    }
    assert!(String::from_utf8(out).unwrap().ends_with("ok\r\n"));
    assert_eq!(reads.get() - before, 2);
    // An empty line after it is a line: answered and timed.
    let mut out = Vec::new();
    a.feed(b'\n', &mut out).unwrap();
    assert_eq!(out, b"ok\r\n");
    assert_eq!(reads.get() - before, 4);
}

#[test]
fn echo_is_the_consoles() {
    let mut a = app();
    talk(&mut a, b"echo on\n");
    let t = talk(&mut a, b"hash\r\n");
    assert!(t.starts_with("hash\r\n"), "{t}");
    let t = talk(&mut a, b"fw:cost?\r\n");
    assert!(t.starts_with("fw:cost?\r\ncost "), "{t}");
}
