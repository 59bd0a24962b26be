use coldtrace::line::{
    file,
    simulate::{simulate, SimConfig},
    Perturbation, State,
};
use std::path::Path;
fn main() {
    let text = std::fs::read_to_string("/tmp/truth54.toml").unwrap();
    let line = file::parse(&text, Path::new("t")).unwrap();
    let p = Perturbation {
        permittivity_change_scale: 1.85,
        contraction_scale: 0.936,
        surface_resistance_scale: 0.944,
    };
    for st in [State::Warm, State::Cold] {
        let mut cfg = SimConfig::linear(st, 1e9, 18e9, 2001);
        cfg.perturbation = p;
        let net = simulate(&line, &cfg).unwrap();
        let s = net.s11();
        let f = &net.freqs_hz;
        let n = f.len();
        let h = |t: f64| {
            let mut acc = num_complex::Complex64::new(0.0, 0.0);
            let mut ws = 0.0;
            for i in 0..n {
                let w = 0.5 - 0.5 * (2.0 * std::f64::consts::PI * i as f64 / (n - 1) as f64).cos();
                acc += s[i]
                    * w
                    * num_complex::Complex64::from_polar(
                        1.0,
                        2.0 * std::f64::consts::PI * f[i] * t,
                    );
                ws += w;
            }
            acc / ws
        };
        let mut best = (0.0, 0.0);
        for k in 0..4000 {
            let t = 8.4e-9 + k as f64 * 0.1e-12;
            let m = h(t).norm();
            if m > best.1 {
                best = (t, m);
            }
        }
        let v = h(best.0);
        println!(
            "{st:?} J1 peak t={:.2} ps |h|={:.2} dB arg={:.1}",
            best.0 * 1e12,
            20.0 * best.1.log10(),
            v.arg().to_degrees()
        );
    }
}
