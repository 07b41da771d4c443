//! The screens' tests: pixels, layouts, and every screen against its golden picture.
use super::*;
const NODES: Readings = Readings {
    vcc: 12.0,
    vb: 2.1,
    ve: 1.45,
    vc: 6.8,
};

fn art(fb: &FrameBuffer) -> String {
    let mut v = Vec::new();
    fb.write_art(&mut v).unwrap();
    String::from_utf8(v).unwrap()
}

fn lit(fb: &FrameBuffer, y0: u32, y1: u32) -> usize {
    (y0..y1)
        .flat_map(|y| (0..WIDTH).map(move |x| (x, y)))
        .filter(|&(x, y)| fb.pixel(x, y))
        .count()
}

#[test]
fn framebuffer_pixels_and_art() {
    let mut fb = FrameBuffer::new();
    // Two off the screen, which are dropped.
    for (x, y) in [(0, 0), (1, 1), (2, 0), (2, 1), (-1, 5), (500, 5)] {
        Pixel(Point::new(x, y), BinaryColor::On)
            .draw(&mut fb)
            .unwrap();
    }
    assert!(fb.pixel(0, 0) && fb.pixel(1, 1) && !fb.pixel(1, 0) && !fb.pixel(999, 0));
    let a = art(&fb);
    let lines: Vec<&str> = a.split("\r\n").collect();
    assert_eq!(lines.len(), 33);
    assert_eq!(lines[0].len(), 128);
    assert!(lines[0].starts_with("\".#  "));
    Pixel(Point::new(0, 0), BinaryColor::Off)
        .draw(&mut fb)
        .unwrap();
    assert!(!fb.pixel(0, 0));
}

#[test]
fn verdict_screen_layout() {
    let mut fb = FrameBuffer::new();
    let s = VerdictScreen {
        verdict: Verdict::Fail,
        failing_node: Some(Channel::Vc),
        fault: "collector resistor open or transistor cut off",
    };
    draw_verdict(&mut fb, &s).unwrap();
    assert!(lit(&fb, 0, 20) > 100, "large verdict at the top");
    assert!(lit(&fb, 22, 32) > 20, "node line");
    assert!(lit(&fb, 33, 64) > 40, "fault text");
    let mut pass = FrameBuffer::new();
    draw_verdict(
        &mut pass,
        &VerdictScreen {
            verdict: Verdict::Pass,
            failing_node: None,
            fault: "",
        },
    )
    .unwrap();
    assert!(lit(&pass, 0, 20) > 100);
    assert_eq!(lit(&pass, 22, 64), 0);
    assert_ne!(art(&pass), art(&fb));
}

#[test]
fn measurement_screens() {
    let mut fb = FrameBuffer::new();
    draw_result(&mut fb, &Ok(NODES));
    assert!(lit(&fb, 14, 62) > 150);
    let mut e = FrameBuffer::new();
    draw_result(&mut e, &Err(JigError::OutOfRange(Channel::Ve)));
    assert!(lit(&e, 0, 20) > 100);
}

/// Compares a screen with its golden picture in `golden/NAME.txt`. The golden files are
/// regression pins: copied from our own output (`BIASJIG_BLESS=1` writes them again) after
/// a person looked at them; they catch any unintended change of a screen.
pub(crate) fn golden(name: &str, fb: &FrameBuffer) {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("golden")
        .join(format!("{name}.txt"));
    let got = art(fb).replace("\r\n", "\n");
    if std::env::var_os("BIASJIG_BLESS").is_some() {
        std::fs::create_dir_all(path.parent().unwrap()).unwrap();
        std::fs::write(&path, &got).unwrap();
    }
    let want = std::fs::read_to_string(&path)
        .unwrap_or_else(|e| panic!("{}: {e} (BIASJIG_BLESS=1 writes it)", path.display()));
    assert_eq!(got, want, "screen {name} differs from {}", path.display());
}

#[test]
fn every_screen_matches_its_golden_picture() {
    let mut fb = FrameBuffer::new();
    draw_verdict(
        &mut fb,
        &VerdictScreen {
            verdict: Verdict::Pass,
            failing_node: None,
            fault: "",
        },
    )
    .unwrap();
    golden("verdict-pass", &fb);
    draw_verdict(
        &mut fb,
        &VerdictScreen {
            verdict: Verdict::Fail,
            failing_node: Some(Channel::Vc),
            fault: "RC reads like 47 kohm instead of 4.7 kohm: a decade slip",
        },
    )
    .unwrap();
    golden("verdict-fail", &fb);
    draw_result(&mut fb, &Ok(NODES));
    golden("measured", &fb);
    draw_result(&mut fb, &Err(JigError::OpenProbe(Channel::Vb)));
    golden("no-read", &fb);
    let design = DesignScreen {
        name: "preamp-12",
        index: 1,
        count: 2,
        hash: 0x3f1e_0a2b_5c6d_7e8f,
        vcc: 12.0,
    };
    draw_design(&mut fb, &design).unwrap();
    golden("design", &fb);
    draw_design(
        &mut fb,
        &DesignScreen {
            name: "pump-monitor-15V",
            index: 2,
            count: 2,
            vcc: 15.0,
            ..design
        },
    )
    .unwrap();
    golden("design-long-name", &fb);
    draw_message(
        &mut fb,
        "NO DESIGNS",
        "keep one from the console: keep NAME",
    )
    .unwrap();
    golden("no-designs", &fb);
    draw_message(&mut fb, "LOCKED", "unlock from the console to choose").unwrap();
    golden("locked", &fb);
}

#[test]
fn wrapping() {
    assert_eq!(
        wrap::<3>("base divider open", 21),
        ["base divider open", "", ""]
    );
    assert_eq!(
        wrap::<3>("collector resistor open or transistor cut off", 21),
        ["collector resistor", "open or transistor", "cut off"]
    );
    assert_eq!(wrap::<2>("abcdefghij", 4), ["abcd", "efgh"]);
    assert_eq!(wrap::<2>("", 4), ["", ""]);
}
