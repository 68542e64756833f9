//! Probe for the reference tests (tests/reference/test_trial_cli.py).
//!
//!   trial_probe median-ranks M [M...]   prints, per M, the ranks r and s and the coverage of
//!       the 95 % order-statistic interval for a median of M observations
//!       (`digitdrift_core::trial::median_ranks`), and the exact big-integer rank, as JSON lines:
//!       {"m": M, "r": r, "s": s, "coverage": c, "r_exact": r} (r, s and coverage null below 6).

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    match args.first().map(String::as_str) {
        Some("median-ranks") => {
            for a in &args[1..] {
                let m: u64 = a.parse().unwrap_or_else(|_| {
                    eprintln!("not a count: {a}");
                    std::process::exit(2)
                });
                let v = digitdrift_core::trial::median_ranks(m);
                let exact = if m <= 20_000 { digitdrift_core::trial::median_rank_exact(m) } else { None };
                println!(
                    "{}",
                    serde_json::json!({"m": m, "r": v.map(|x| x.0), "s": v.map(|x| x.1), "coverage": v.map(|x| x.2), "r_exact": exact})
                );
            }
        }
        _ => {
            eprintln!("usage: trial_probe median-ranks M [M...]");
            std::process::exit(2);
        }
    }
}
