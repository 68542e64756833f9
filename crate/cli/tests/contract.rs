//! The CLI's JSON contract on a small hand-worked ledger (values worked out by hand below).

use std::process::Command;

fn run(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_digitdrift")).args(args).output().expect("run digitdrift");
    (out.status.code().unwrap_or(-1), String::from_utf8_lossy(&out.stdout).into(), String::from_utf8_lossy(&out.stderr).into())
}

#[test]
fn hand_worked_ledger_json_contract() {
    let dir = std::env::temp_dir().join(format!("dd-contract-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let f = dir.join("hand.csv");
    // 8 data rows: 5 analysed for "Alder" (first-two digits 12, 12, 47, 99, 10), one below the
    // minimum of 10 (9.99), one credit note (-45.00), one with an empty supplier.
    std::fs::write(
        &f,
        "Supplier,Date,Amount\nAlder,2024-01-02,12.50\nalder ,2024-01-03,1200\nAlder,2024-01-04,47.00\n\
         Alder,2024-01-05,99.99\nAlder,2024-01-06,10.00\nAlder,2024-01-07,9.99\nAlder,2024-01-08,-45.00\n,2024-01-09,300\n",
    )
    .unwrap();
    let (code, out, err) = run(&["screen", f.to_str().unwrap(), "--format", "json", "--sims", "200"]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["rows"]["read"], 8);
    assert_eq!(v["rows"]["analysed"], 5);
    assert_eq!(v["rows"]["excluded"], 3);
    let ex = v["rows"]["exclusions"].as_array().unwrap();
    let find = |r: &str| ex.iter().find(|e| e["reason"] == r).unwrap_or_else(|| panic!("no {r} in {ex:?}")).clone();
    assert_eq!(find("below_minimum")["count"], 1);
    assert_eq!(find("below_minimum")["rows"], serde_json::json!([7]));
    assert_eq!(find("credit_note")["rows"], serde_json::json!([8]));
    assert_eq!(find("missing_supplier")["rows"], serde_json::json!([9]));
    let s = &v["suppliers"][0];
    assert_eq!(s["name"], "Alder");
    assert_eq!(s["invoices"], 5);
    // 12.50 + 1200 + 47.00 + 99.99 + 10.00 = 1369.49
    assert!((s["amount_total"].as_f64().unwrap() - 1369.49).abs() < 1e-9);
    let counts: Vec<u64> = s["first_two"]["counts"].as_array().unwrap().iter().map(|c| c.as_u64().unwrap()).collect();
    assert_eq!(counts.len(), 90);
    let mut want = vec![0u64; 90];
    for d in [12, 12, 47, 99, 10] {
        want[d - 10] += 1;
    }
    assert_eq!(counts, want);
    // MAD by hand: sum over bins |o - p| / 90 with o = 0.4 (12), 0.2 (10, 47, 99), else 0.
    let p = |d: f64| (1.0 + 1.0 / d).log10();
    let mut mad: f64 = (10..=99).map(|d| p(d as f64)).sum();
    for (d, o) in [(12.0, 0.4), (10.0, 0.2), (47.0, 0.2), (99.0, 0.2)] {
        mad += (o - p(d)).abs() - p(d);
    }
    mad /= 90.0;
    assert!((s["first_two"]["mad"].as_f64().unwrap() - mad).abs() < 1e-12);
    for k in ["chi_square", "p_value", "mc_p_value", "mad_critical"] {
        assert!(s["first_two"][k].is_number(), "{k}");
    }
    assert!(s["verdict"].is_string());
}

#[test]
fn bad_usage_exits_2() {
    let (code, _, err) = run(&["screen"]);
    assert_eq!(code, 2);
    assert!(err.contains("FILE"));
    let (code, _, _) = run(&["screen", "/nonexistent/file.csv"]);
    assert_eq!(code, 2);
}
