use biasjig_core::device::{is_from_vbe, Profile};
use biasjig_core::solve::{solve, Conditions};
use biasjig_core::stage::{Part, Polarity, Stage};
fn main() {
    let t = 0.05;
    let stage = Stage { polarity: Polarity::Npn, vcc: Part::new(12.0, 0.0), r1: Part::new(47e3, t), r2: Part::new(10e3, t),
        rc: Part::new(4.7e3, t), re1: Part::new(220.0, t), re2: Part::new(1e3, t), rl: Some(15e3), rs: 600.0, cin: None, cout: None, ce: None };
    let profile = Profile { beta_min: 100.0, beta_typ: 180.0, beta_max: 300.0, is_25: is_from_vbe(0.65), ..Profile::default() };
    let op = solve(&stage, &profile, Conditions::typical(&profile)).unwrap();
    println!("{:e} {:e} {:e} {:e}", op.y.y11, op.y.y12, op.y.y21, op.y.y22);
    let m = biasjig_core::signal::midband(&stage, &profile, &op).unwrap();
    println!("{:.17e}", m.gain);
}
