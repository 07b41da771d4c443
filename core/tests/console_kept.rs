//! Designs kept on the unit by name (`keep`, `designs`, `choose`, `forget`): the records
//! survive a restart of the console on the same store, the unit starts on the design chosen
//! last, the lock guards them, and the store holds at most eight.

// A budget build without kept designs is tested to refuse them.
#![cfg_attr(not(feature = "kept-designs"), allow(dead_code, unused_imports))]

use biasjig_core::console::jig::{MemoryStore, NoJig, DESIGN_SLOTS};
use biasjig_core::console::{Console, Identity};
use biasjig_testkit::session::{lines_of, ok, oks, split_reply, FixedClock as Still};

type Unit = Console<NoJig, MemoryStore, Still>;

fn unit(store: MemoryStore) -> Unit {
    let mut c = Console::new(Identity::new("console", "0"), NoJig, store, Still);
    c.set_mode(biasjig_core::console::parse::Mode::Machine);
    c
}

/// One command through [`Console::line`] (a fixed buffer, not a stream): data and status.
fn cmd(c: &mut Unit, line: &str) -> (Vec<String>, String) {
    let mut buf = [0u8; 4096];
    let mut out: &mut [u8] = &mut buf;
    c.line(line, &mut out).expect("the reply fits the buffer");
    let left = out.len();
    split_reply(lines_of(&buf[..buf.len() - left]))
}

fn hash(c: &mut Unit) -> String {
    ok(c, "hash")[0].clone()
}

fn restart(c: Unit) -> Unit {
    unit(c.store)
}

#[cfg(feature = "kept-designs")]
#[test]
fn kept_designs_survive_a_restart_and_the_last_chosen_comes_back() {
    let mut c = unit(MemoryStore::default());
    assert_eq!(cmd(&mut c, "designs").1, "ok 0 of 8 kept");
    ok(&mut c, "set vcc 12");
    let (_, st) = cmd(&mut c, "keep preamp-12");
    assert!(st.starts_with("ok kept preamp-12, design hash"), "{st}");
    let h12 = hash(&mut c);
    oks(&mut c, &["set vcc 15", "set temp-max 55", "meter gain 1%"]);
    // After an edit the stage is no longer the kept design.
    assert!(ok(&mut c, "stage").last().unwrap().ends_with("design=none"));
    ok(&mut c, "keep Pump15");
    let h15 = hash(&mut c);
    assert_ne!(h12, h15);
    let list = ok(&mut c, "designs");
    assert_eq!(list.len(), 2, "{list:?}");
    assert!(
        list[0].starts_with("design=preamp-12 ") && list[0].ends_with("chosen=0"),
        "{list:?}"
    );
    assert!(
        list[1].starts_with("design=Pump15 ") && list[1].ends_with("chosen=1"),
        "{list:?}"
    );
    assert!(list[1].contains(&format!("hash={}", &h15["hash=".len()..])));

    // Choose the first (names ignore case); a restart comes back on it.
    let (_, st) = cmd(&mut c, "choose PREAMP-12");
    assert!(
        st.starts_with("ok the stage is preamp-12, design hash"),
        "{st}"
    );
    assert_eq!(hash(&mut c), h12);
    let mut c = restart(c);
    assert_eq!(hash(&mut c), h12);
    assert!(ok(&mut c, "stage")
        .last()
        .unwrap()
        .ends_with("design=preamp-12"));
    // The second brings its ambient range and meter with it.
    ok(&mut c, "choose pump15");
    let mut c = restart(c);
    assert_eq!(hash(&mut c), h15);
    assert!(ok(&mut c, "stage")[0].contains("temp_max=55"));
    assert!(ok(&mut c, "meter")[0].starts_with("gain=0.01 "));

    // Forget the chosen one: the stage stays, the list shrinks.
    assert_eq!(cmd(&mut c, "forget pump15").1, "ok forgot pump15");
    assert_eq!(hash(&mut c), h15);
    assert_eq!(ok(&mut c, "designs").len(), 1);
    assert!(cmd(&mut c, "choose pump15")
        .1
        .starts_with("err VALUE name: pump15: no such design"));
    let mut c = restart(c);
    assert_eq!(hash(&mut c), h15, "the stage kept by the last choice stays");
    assert!(ok(&mut c, "stage").last().unwrap().ends_with("design=none"));
}

#[cfg(feature = "kept-designs")]
#[test]
fn eight_designs_fit_a_ninth_is_refused_and_a_name_is_replaced_in_place() {
    let mut c = unit(MemoryStore::default());
    for i in 0..DESIGN_SLOTS {
        ok(&mut c, &format!("set rc {}", 3000 + 100 * u32::from(i)));
        ok(&mut c, &format!("keep d{i}"));
    }
    assert_eq!(cmd(&mut c, "designs").1, "ok 8 of 8 kept");
    let (_, st) = cmd(&mut c, "keep d8");
    assert!(
        st.starts_with("err STORE keep: d8: the unit keeps 8 designs"),
        "{st}"
    );
    // The same name again replaces that design.
    ok(&mut c, "set rc 4k7");
    ok(&mut c, "keep D3");
    let list = ok(&mut c, "designs");
    assert_eq!(list.len(), 8);
    assert!(
        list[3].starts_with("design=D3 ") && list[3].ends_with("chosen=1"),
        "{list:?}"
    );
    ok(&mut c, "forget d5");
    ok(&mut c, "keep d8");
    assert!(ok(&mut c, "designs")[5].starts_with("design=d8 "));
}

#[cfg(feature = "kept-designs")]
#[test]
fn the_lock_guards_the_kept_designs_and_names_are_checked() {
    let mut c = unit(MemoryStore::default());
    oks(&mut c, &["keep a", "set vcc 9", "keep b", "lock 1234"]);
    for l in ["keep c", "choose a", "forget a"] {
        assert!(cmd(&mut c, l).1.starts_with("err LOCKED"), "{l}");
    }
    assert_eq!(ok(&mut c, "designs").len(), 2, "looking stays allowed");
    for l in ["keep", "keep a b", "choose"] {
        assert!(cmd(&mut c, l).1.starts_with("err USAGE"), "{l}");
    }
    for l in ["keep a/b", "keep 12345678901234567", "choose ä"] {
        let st = cmd(&mut c, l).1;
        assert!(
            st.starts_with("err VALUE name:") && st.contains("1 to 16 letters"),
            "{l}: {st}"
        );
    }
}

#[cfg(feature = "kept-designs")]
#[test]
fn a_damaged_design_record_is_left_out_not_loaded() {
    let mut c = unit(MemoryStore::default());
    oks(&mut c, &["keep a", "set vcc 9", "keep b"]);
    let mut store = c.store;
    // Slot 1 holds b: flip one byte of its payload.
    if let Some(rec) = store.records[3].as_mut() {
        rec[40] ^= 0x55;
    }
    let mut c = unit(store);
    let list = ok(&mut c, "designs");
    assert_eq!(list.len(), 1, "{list:?}");
    assert!(list[0].starts_with("design=a "));
}

#[cfg(feature = "kept-designs")]
#[test]
fn a_kept_design_carries_the_measuring_inputs() {
    let mut c = unit(MemoryStore::default());
    oks(
        &mut c,
        &[
            "set input-r 110k",
            "keep jig110k",
            "set input-r 10M",
            "keep meter10M",
        ],
    );
    assert!(ok(&mut c, "meter")[0].contains("input_r=1e7"));
    ok(&mut c, "choose jig110k");
    let mut c = restart(c);
    assert!(
        ok(&mut c, "meter")[0].contains("input_r=110000"),
        "{:?}",
        ok(&mut c, "meter")
    );
}

/// Without kept designs the unit refuses `keep`, `designs`, `choose` and `forget`, each naming
/// itself.
#[cfg(not(feature = "kept-designs"))]
#[test]
fn a_unit_without_kept_designs_refuses_them() {
    let mut c = unit(MemoryStore::default());
    for l in ["keep a", "designs", "choose a", "forget a"] {
        let (data, status) = cmd(&mut c, l);
        let word = l.split(' ').next().unwrap();
        assert!(
            data.is_empty() && status.starts_with(&format!("err NOT_SUPPORTED {word}: ")),
            "{l}: {status}"
        );
    }
}
