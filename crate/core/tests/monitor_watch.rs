//! The watch report on a small invented ledger: ordering by date, alarm bookkeeping (paid
//! before + after = total), replay as of a date (checked against sums computed here), JSON keys.

use digitdrift_core::intake::{days_from_civil, format_date};
use digitdrift_core::ledger::{supplier_key, Invoice, Ledger, Supplier, NO_DATE};
use digitdrift_core::monitor::{render_text, watch, WatchOptions, CAUTION};
use digitdrift_core::Amount;
use rand_core::{Rng, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;

fn unif(r: &mut Xoshiro256PlusPlus) -> f64 {
    (r.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
}

/// Supplier 0 "Harbour Lamps" honest, 1,100 invoices a year for 3 years; supplier 1 "Quill &
/// Fern" honest for 1,000 invoices, then amounts spread evenly over 100..900; supplier 2
/// "Undated Works" honest, no dates. File order is shuffled (dates are not in file order).
fn ledger(seed: u64) -> (Ledger, i32) {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let names = ["Harbour Lamps", "Quill & Fern", "Undated Works"];
    let mut l = Ledger::default();
    for n in names {
        l.suppliers.push(Supplier { name: n.into(), key: supplier_key(n) });
    }
    let day0 = days_from_civil(2023, 1, 1);
    let mut rows: Vec<(u32, i32, f64)> = Vec::new();
    for i in 0..3300 {
        rows.push((0, day0 + (i as f64 / 1100.0 * 365.25) as i32, 10f64.powf(1.0 + 4.0 * unif(&mut rng))));
    }
    let switch_day = day0 + 365;
    for i in 0..2000 {
        let d = day0 + (i as f64 / 1000.0 * 365.0) as i32;
        let x = if i < 1000 { 10f64.powf(1.0 + 4.0 * unif(&mut rng)) } else { 100.0 + 800.0 * unif(&mut rng) };
        rows.push((1, d, x));
    }
    for _ in 0..300 {
        rows.push((2, NO_DATE, 10f64.powf(1.0 + 4.0 * unif(&mut rng))));
    }
    // shuffle (Fisher-Yates)
    for i in (1..rows.len()).rev() {
        let j = (unif(&mut rng) * (i + 1) as f64) as usize;
        rows.swap(i, j);
    }
    for (k, (s, d, x)) in rows.into_iter().enumerate() {
        l.invoices.push(Invoice::new(Amount::from_scaled((x * 100.0).floor() as i64, 2).unwrap(), 0, s, d, k as u64 + 2));
    }
    (l, switch_day)
}

#[test]
fn alarm_bookkeeping_and_replay() {
    let (l, switch_day) = ledger(99);
    let rep = watch(&l, &WatchOptions::default());
    let by = |name: &str| rep.suppliers.iter().find(|s| s.name == name).unwrap();
    let q = by("Quill & Fern");
    eprintln!(
        "Quill & Fern: alarm {:?} by {:?} at invoice {:?}; paid before {:?} after {:?}; estimate {:?}",
        q.alarm_date, q.alarm_evidence, q.alarm_invoice, q.paid_before_alarm, q.paid_after_alarm, q.estimate.as_ref().map(|e| (e.share, e.window_from_invoice))
    );
    assert!(q.in_alarm);
    let alarm = q.alarm_date.clone().unwrap();
    assert!(alarm >= format_date(switch_day), "alarm {alarm} before the switch");
    assert_eq!(q.paid_before_alarm.unwrap().0 + q.paid_after_alarm.unwrap().0, q.amount_total.0);
    assert_eq!(q.invoices_before_alarm.unwrap() + q.invoices_after_alarm.unwrap(), q.invoices);
    // Paid before the alarm, recomputed here from the ledger in date order (ties by line).
    let mut mine: Vec<&Invoice> = l.invoices.iter().filter(|i| i.supplier == 1).collect();
    mine.sort_by_key(|i| (i.date, i.line()));
    let k = q.alarm_invoice.unwrap() as usize;
    let before: i64 = mine[..k].iter().map(|i| i.amount.0).sum();
    assert_eq!(q.paid_before_alarm.unwrap().0, before);
    assert_eq!(format_date(mine[k - 1].date), alarm);
    // Run length: 2,000 invoices over one year (span floor) -> 1,000/year... the span is
    // 730 days here, so 2000 / (730/365.25) invoices a year, times 100 years.
    let per_year = 2000.0 / (730.0 / 365.25);
    assert!((q.evidence.run_length_invoices - 100.0 * per_year).abs() < 1e-6);
    assert!((q.evidence.run_length_years - 100.0).abs() < 1e-9);
    // Estimate: since the estimated start the invoices are (almost) all evenly spread.
    let e = q.estimate.as_ref().unwrap();
    assert!(e.share.high >= 0.9 && e.share.mle > 0.7, "{:?}", e.share);
    assert!(e.amount_low <= e.amount && e.amount <= e.amount_high && e.amount_high <= e.window_paid.to_f64() + 1e-6);
    // Trajectory: at most ~400 points, the alarm marked once, on the alarm invoice.
    assert!(q.trajectory.len() <= 402);
    let marks: Vec<_> = q.trajectory.iter().filter(|p| p.alarm).collect();
    assert_eq!(marks.len(), 1);
    assert_eq!(marks[0].invoice, q.alarm_invoice.unwrap());
    // The honest suppliers (seeded; each may alarm falsely with small probability).
    assert!(!by("Harbour Lamps").in_alarm);
    let u = by("Undated Works");
    assert_eq!(u.order, "file order");
    assert!(u.alarm_date.is_none());
    assert!(!rep.notes.is_empty());
    // Amount at risk: only the alarmed supplier.
    assert_eq!(rep.amount_at_risk.paid_to_suppliers_in_alarm, q.amount_total);
    assert_eq!(rep.suppliers[0].name, "Quill & Fern");

    // Replay the day before the alarm and 30 days after it.
    let alarm_day = mine[k - 1].date;
    let r0 = watch(&l, &WatchOptions { as_of: Some(alarm_day - 1), ..Default::default() });
    assert!(r0.replay.as_ref().unwrap().suppliers_in_alarm.is_empty());
    let r1 = watch(&l, &WatchOptions { as_of: Some(alarm_day + 30), ..Default::default() });
    let rp = r1.replay.as_ref().unwrap();
    assert_eq!(rp.suppliers_in_alarm.len(), 1);
    let so_far: i64 = mine.iter().filter(|i| i.date <= alarm_day + 30).map(|i| i.amount.0).sum();
    assert_eq!(rp.suppliers_in_alarm[0].paid_so_far.0, so_far);
    assert_eq!(rp.paid_to_suppliers_in_alarm.0, so_far);
    assert_eq!(rp.suppliers_in_alarm[0].paid_since_alarm.0, so_far - before);
    assert_eq!(rp.undated_invoices_left_out, 300);

    let js = serde_json::to_value(&rep).unwrap();
    let sup = js["suppliers"].as_array().unwrap();
    let h = sup.iter().find(|s| s["name"] == "Harbour Lamps").unwrap();
    assert!(h["alarm_date"].is_null() && h.get("paid_before_alarm").is_some() && h["evidence"].is_object());
    assert_eq!(sup[0]["alarm_date"], serde_json::json!(alarm));
    let txt = render_text(&rep);
    assert!(txt.trim_end().ends_with(CAUTION));
    eprintln!("{txt}");
}

#[test]
fn confidence_changes_the_since_start_line() {
    let (l, _) = ledger(5);
    let a = watch(&l, &WatchOptions { confidence: 0.99, ..Default::default() });
    for s in &a.suppliers {
        assert!((s.evidence.since_start_threshold_log - 100f64.ln()).abs() < 1e-9);
    }
}
