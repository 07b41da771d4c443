use biasjig_core::{device::*, stage::*, solve::*, predict::*};
fn main() {
    let mut p = Profile::default();
    p.beta_min = 140.0; p.beta_typ = 140.0; p.beta_max = 140.0;
    p.is_25 = is_from_vbe(0.7);
    let s = Stage { polarity: Polarity::Npn, vcc: Part::new(22.0, 0.0), r1: Part::new(39e3, 0.05), r2: Part::new(3.9e3, 0.05),
        rc: Part::new(10e3, 0.05), re1: Part::new(0.0, 0.05), re2: Part::new(1.5e3, 0.05), rl: None, rs: 0.0, cin: None, cout: None, ce: None };
    let pr = predict(&s, &p, Conditions::typical(&p)).unwrap();
    println!("{:#?}", pr.op); println!("{:?}", pr.estimate); println!("{:?}", pr.midband); println!("{:?}", pr.low);
    let mut sp = s; sp.polarity = Polarity::Pnp; sp.r1 = s.r2; sp.r2 = s.r1;
    let q = solve(&sp, &p, Conditions::typical(&p)).unwrap();
    println!("PNP vb {} ve {} vc {} vbe {} ic {} {:?}", q.vb, q.ve, q.vc, q.vbe, q.ic, q.region);
    for f in DeviceFault::ALL { let o = solve(&s, &p, Conditions{fault:Some(f), ..Conditions::typical(&p)}); match o { Ok(o)=>println!("{:?}: vb {:.4} ve {:.4} vc {:.4} ic {:.3e} {:?} it {}", f, o.vb,o.ve,o.vc,o.ic,o.region,o.iterations), Err(e)=>println!("{f:?} {e}")} }
    for r in Resistor::ALL { for fl in [Fault::Open(r), Fault::Short(r)] { let o = solve(&s.with_fault(fl), &p, Conditions::typical(&p)); match o { Ok(o)=>println!("{:?}: vb {:.4} ve {:.4} vc {:.4} ic {:.3e} {:?} it {}", fl, o.vb,o.ve,o.vc,o.ic,o.region,o.iterations), Err(e)=>println!("{fl:?} {e}")} } }
    let mut s2 = s; s2.cin = Some(Part::new(10e-6,0.2)); s2.ce = Some(Part::new(100e-6,0.2)); s2.cout=Some(Part::new(10e-6,0.2)); s2.rl = Some(10e3); s2.rs = 600.0; s2.re1 = Part::new(200.0,0.05); s2.re2=Part::new(1300.0,0.05);
    let pr = predict(&s2, &p, Conditions::typical(&p)).unwrap();
    println!("{:?}\n{:?}", pr.midband, pr.low);
}
