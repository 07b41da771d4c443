//! Designs kept on the unit across a reset of the machine, and the button that chooses them.

use super::*;

/// Resets the machine (QEMU's `system_reset`) and opens a new console session in machine mode.
fn reset_and_open(sock: &Path, pts: &str) -> Session {
    monitor(sock, "system_reset");
    let mut s = Session::open(pts);
    s.ok("mode machine");
    s
}

/// Designs kept on the unit survive a reset of the machine (QEMU's `system_reset`: the RAM
/// flash model is not cleared): the unit comes back on the design chosen last, with the same
/// hash and calibration; the button path (a long press) chooses the other; the wrong-PIN count
/// survives the reset too, and its back-off runs on in real time while the unit waits.
#[test]
fn kept_designs_survive_a_reset_and_the_button_chooses() {
    let dir = temp_dir().join("reset");
    std::fs::create_dir_all(&dir).expect("temp dir");
    let sock = dir.join("monitor.sock");
    let _ = std::fs::remove_file(&sock);
    let (_qemu, pts) = boot_with(&images().join("jig-emulated"), Some(&sock));
    let mut s = Session::open(&pts);
    s.ok("mode machine");
    s.ok("set vcc 12");
    s.ok("keep preamp-12");
    let h12 = s.ok("hash");
    s.ok("set vcc 15");
    s.ok("set rc 3k9");
    s.ok("keep pump-15");
    let h15 = s.ok("hash");
    assert_ne!(h12, h15);
    // A calibration of VB from two points on the emulated board: VB near 0 V (R1 open) and
    // the good board's VB, read as 0.1 % higher than the converter gives.
    let vb = num(pairs(&s.ok("measure")[0])["vb"]);
    s.ok("inject r1 open");
    s.ok("calibrate vb low 0");
    s.ok("inject none");
    s.ok(&format!("calibrate vb high {}", vb * 1.001));
    // The signal path against a reference declared 5 % above what the jig reads at the first
    // test frequency: the correction (about 1/1.05) is kept with the channels.
    let ac = ac_lines(&s.ok("test"));
    let (f, g, ..) = ac.first().expect("the test reads gains");
    s.ok(&format!("calibrate gain {f} {}", num(g) * 1.05));
    let cal = s.ok("calibrate");
    assert!(
        !cal[1].contains("gain=1 "),
        "a calibration other than none: {cal:?}"
    );
    let k = num(pairs(&cal[4])["load_over_source"]);
    assert!((k * 1.05 - 1.0).abs() < 0.02, "signal correction: {cal:?}");
    s.close();

    let mut s = reset_and_open(&sock, &pts);
    assert_eq!(
        s.ok("hash"),
        h15,
        "the unit comes back on the design chosen last"
    );
    assert!(s
        .ok("stage")
        .last()
        .is_some_and(|l| l.ends_with("design=pump-15")));
    assert_eq!(s.ok("calibrate"), cal, "the calibration is kept");
    let list = s.ok("designs");
    assert_eq!(list.len(), 2, "{list:?}");

    // The button path: a long press chooses the next kept design, and the screen shows it.
    s.ok("fw:press long");
    assert_eq!(s.ok("hash"), h12, "a long press chose preamp-12");
    let screen = s.ok("fw:screen?").join("\n");
    assert!(screen.contains('#'), "the design screen is drawn");
    let r = parse_result(&s.ok("test"));
    assert_eq!(
        r.verdict, "pass",
        "the emulated board follows the chosen design: {r:?}"
    );
    s.close();

    let mut s = reset_and_open(&sock, &pts);
    assert_eq!(
        s.ok("hash"),
        h12,
        "the design chosen with the button is kept"
    );

    // Wrong PINs: counted in the store; the back-off (1 s after the third, doubling with each
    // further one) waits in real time while the unit idles.
    s.ok("lock 2468");
    for _ in 0..3 {
        let (_, st) = s.ask("unlock 1111");
        assert!(st.starts_with("err PIN"), "{st}");
    }
    let (_, st) = s.ask("unlock 1111");
    assert!(
        st.starts_with("err WAIT"),
        "a try within the back-off is refused: {st}"
    );
    for wait_ms in [1300, 2300] {
        std::thread::sleep(Duration::from_millis(wait_ms));
        let (_, st) = s.ask("unlock 1111");
        assert!(
            st.starts_with("err PIN"),
            "after {wait_ms} ms of real time: {st}"
        );
    }
    // Five wrong PINs: 4 s of back-off, also after a reset (it starts again at power-up).
    s.close();
    monitor(&sock, "system_reset");
    let mut s = Session::open(&pts);
    let (_, st) = s.ask("unlock 2468");
    assert!(
        st.starts_with("err WAIT"),
        "the wrong-PIN count survives a reset: {st}"
    );
    std::thread::sleep(Duration::from_millis(4500));
    let (_, st) = s.ask("unlock 2468");
    assert_eq!(
        st, "ok unlocked",
        "4 s of back-off passed in real time while the unit waited"
    );
    s.close();
    let _ = std::fs::remove_dir_all(&dir);
}
