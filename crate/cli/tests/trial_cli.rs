//! `digitdrift trial`: JSON keys per confidence level, the text output's caution, seeds, and
//! bad input (exit 2).

use std::process::Command;

fn run(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_digitdrift")).args(args).output().expect("run digitdrift");
    (out.status.code().unwrap_or(-1), String::from_utf8_lossy(&out.stdout).into(), String::from_utf8_lossy(&out.stderr).into())
}

/// 30 suppliers of 300 invoices, log-uniform amounts (Benford digits) from a fixed LCG, dated over 2023-2024.
/// Each test writes its own copy (`tag`): the tests run as threads of one process, and one test
/// rewriting a shared file while another reads it made the reader see a half-written ledger.
fn ledger(tag: &str) -> std::path::PathBuf {
    let dir = std::env::temp_dir().join(format!("dd-trial-cli-{}-{tag}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let f = dir.join("honest.csv");
    let mut s = String::from("Supplier,Date,Amount\n");
    let mut x: u64 = 12345;
    for sup in 0..30 {
        for i in 0..300 {
            x = x.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            let u = (x >> 11) as f64 / (1u64 << 53) as f64;
            let cents = (10f64.powf(1.0 + 4.0 * u) * 100.0) as u64;
            let day = i * 730 / 300;
            let (y, d) = if day < 365 { (2023, day) } else { (2024, day - 365) };
            let (m, dd) = (d / 31 + 1, d % 28 + 1);
            s.push_str(&format!("Supplier {sup},{y}-{m:02}-{dd:02},{}.{:02}\n", cents / 100, cents % 100));
        }
    }
    std::fs::write(&f, s).unwrap();
    f
}

#[test]
fn json_per_level_and_text_with_caution() {
    let f = ledger("levels");
    let f = f.to_str().unwrap();
    let args = ["trial", f, "--pattern", "even", "--share", "0.5", "--from", "2024-01-01", "--replications", "3", "--seed", "7", "--suppliers", "all", "--sims", "1000", "--format", "json"];
    let (code, out, err) = run(&args);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert!(v["kind"].as_str().unwrap().contains("not the screen"));
    let levels = v["levels"].as_array().unwrap();
    assert_eq!(levels.len(), 5);
    for l in levels {
        for k in ["confidence", "sensitivity", "sensitivity_se", "false_alarm_rate", "false_alarm_rate_se", "median_delay_invoices", "median_delay_days", "paid_before_detection"] {
            assert!(l.get(k).is_some(), "missing {k}");
        }
        assert!(l["batch"]["sensitivity"].is_number() && l["monitoring"]["median_delay_invoices"].is_number());
        // Each median carries its 95 % order-statistic interval (null below 6 observations).
        for k in ["median_delay_invoices_interval", "median_delay_days_interval", "paid_before_detection_interval"] {
            let iv = l.get(k).unwrap_or_else(|| panic!("missing {k}"));
            if !iv.is_null() {
                assert!(iv["low"].as_f64().unwrap() <= iv["high"].as_f64().unwrap() && iv["coverage"].as_f64().unwrap() >= 0.95, "{k}: {iv}");
            }
        }
    }
    assert_eq!(v["parameters"]["replications"], 3);
    assert_eq!(v["parameters"]["from"], "2024-01-01");
    assert_eq!(v["pool"].as_array().unwrap().len(), 30);
    // Half of 300 invoices dated 2024 at 50 %: about 75 invented per injected supplier, 15 injected.
    let inv = v["mean_invented_invoices"].as_f64().unwrap();
    assert!((inv - 15.0 * 0.5 * 150.0).abs() < 15.0 * 10.0, "{inv}");
    // Same seed, same output.
    assert_eq!(run(&args).1, out);
    let mut text_args = args.to_vec();
    *text_args.last_mut().unwrap() = "text";
    let (code, text, _) = run(&text_args);
    assert_eq!(code, 0);
    assert!(text.contains("DETECTION TRIAL") && text.contains("not proof of wrongdoing"), "{text}");
}

#[test]
fn bad_input_is_exit_2() {
    let f = ledger("bad");
    let f = f.to_str().unwrap();
    for bad in [
        vec!["trial", f, "--pattern", "zigzag"],
        vec!["trial", f, "--share", "150"],
        vec!["trial", f, "--from", "2024-13-01"],
        vec!["trial", f, "--replications", "0"],
        vec!["trial", f, "--suppliers", "Nobody Ltd"],
        vec!["trial", f, "--bogus", "1"],
        vec!["trial", f, "--replications", "1", "--out", "results.txt"],
        vec!["trial", f, "--replications", "1", "--out", f],
    ] {
        let (code, _, err) = run(&bad);
        assert_eq!(code, 2, "{bad:?}: {err}");
        assert!(!err.is_empty());
    }
}

#[test]
fn out_writes_a_marked_results_file_of_its_own() {
    let f = ledger("out");
    let out = f.with_file_name("trial-results.csv");
    let (code, _, err) = run(&["trial", f.to_str().unwrap(), "--replications", "2", "--seed", "4", "--suppliers", "all", "--sims", "500", "--out", out.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    let text = std::fs::read_to_string(&out).unwrap();
    let first = text.split("\r\n").next().unwrap();
    assert!(first.starts_with("# digitdrift DETECTION TRIAL on invented invoices") && first.contains("seed 4") && first.contains("2 replications"), "{first}");
    assert!(first.contains("file: honest.csv") && first.contains("sha256: "), "{first}");
    assert!(text.contains("not proof of wrongdoing"));
}
