//! Prints calibration internals as JSON for the reference scripts (tests/reference/test_calibrate*.py).
//! Usage:
//!   calibrate_probe rng <seed> <count> [stream words...]   raw u64 outputs
//!   calibrate_probe mad-quantile <n> <sims> <q> <seed>      simulated quantile of first-two MAD
//!   calibrate_probe binom <n> <p> <draws> <seed>            histogram of Binomial(n, p) draws
//!   calibrate_probe multinomial <n> <sims> <seed>           summed counts over sims samples
//!   calibrate_probe uniform <a> <b>                         first-two probabilities of U[a, b]
//!   calibrate_probe adjust <fdr|bonferroni> <q> <p...>      adjusted p-values

use digitdrift_core::benford;
use digitdrift_core::calibrate::{adjust, sample::binomial, uniform_first_two, Categorical, Correction, NullTable, Statistic};
use digitdrift_core::rng::DetRng;
use serde_json::json;

fn main() {
    let a: Vec<String> = std::env::args().skip(1).collect();
    let num = |i: usize| -> f64 { a[i].parse().expect("number") };
    let int = |i: usize| -> u64 { a[i].parse().expect("integer") };
    let out = match a.first().map(String::as_str) {
        Some("rng") => {
            let words: Vec<u64> = a[3..].iter().map(|w| w.parse().unwrap()).collect();
            let mut r = if words.is_empty() { DetRng::seed_from_u64(int(1)) } else { DetRng::stream(int(1), &words) };
            let v: Vec<String> = (0..int(2)).map(|_| r.next_u64().to_string()).collect();
            json!({ "outputs": v })
        }
        Some("mad-quantile") => {
            let cat = Categorical::new(&benford::first_two());
            let t = NullTable::simulate(&cat, int(1), int(2) as u32, int(4));
            let v = t.sorted(Statistic::Mad);
            let q = num(3);
            let i = ((q * v.len() as f64).ceil() as usize).clamp(1, v.len()) - 1;
            json!({ "n": int(1), "sims": v.len(), "q": q, "mad_quantile": v[i], "critical": t.critical(Statistic::Mad, 1.0 - q) })
        }
        Some("binom") => {
            let (n, p, draws) = (int(1), num(2), int(3));
            let mut r = DetRng::seed_from_u64(int(4));
            let mut h = vec![0u64; n as usize + 1];
            for _ in 0..draws {
                h[binomial(&mut r, n, p) as usize] += 1;
            }
            json!({ "n": n, "p": p, "hist": h })
        }
        Some("multinomial") => {
            let cat = Categorical::new(&benford::first_two());
            let mut r = DetRng::seed_from_u64(int(3));
            let mut tot = vec![0u64; 90];
            let mut c = vec![0u64; 90];
            for _ in 0..int(2) {
                c.iter_mut().for_each(|x| *x = 0);
                cat.add(&mut r, int(1), &mut c);
                tot.iter_mut().zip(&c).for_each(|(t, x)| *t += x);
            }
            json!({ "n": int(1), "sims": int(2), "totals": tot })
        }
        Some("uniform") => json!({ "probs": uniform_first_two(num(1), num(2)).to_vec() }),
        Some("adjust") => {
            let corr = if a[1] == "bonferroni" { Correction::Bonferroni } else { Correction::Fdr };
            let ps: Vec<f64> = a[3..].iter().map(|x| x.parse().unwrap()).collect();
            json!({ "adjusted": adjust(&ps, corr, num(2)) })
        }
        _ => {
            eprintln!("usage: see the file header");
            std::process::exit(2);
        }
    };
    println!("{out}");
}
