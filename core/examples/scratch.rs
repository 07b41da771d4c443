use biasjig_core::{device::*, solve::*, stage::*};
fn main() {
    let s = Stage {
        polarity: Polarity::Npn,
        vcc: Part::new(12.0, 0.0),
        r1: Part::new(56e3, 0.05),
        r2: Part::new(12e3, 0.05),
        rc: Part::new(3.3e3, 0.05),
        re1: Part::new(180.0, 0.05),
        re2: Part::new(820.0, 0.05),
        rl: Some(15e3),
        rs: 600.0,
        cin: None,
        cout: None,
        ce: None,
    };
    let p = Profile {
        beta_min: 100.0,
        beta_max: 300.0,
        ..Profile::default()
    };
    for b in [100.0, 200.0, 299.0] {
        let op = solve(
            &s,
            &p,
            Conditions {
                beta_25: b,
                ..Conditions::typical(&p)
            },
        )
        .unwrap();
        println!("{b} it {}", op.iterations);
    }
}
