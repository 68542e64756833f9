//! `digitdrift trial FILE --pattern even|below-limit|repeat|by-hand --share S --from DATE
//! --replications R --seed N [--suppliers consistent|all|NAME;NAME] [--controls 0.5]
//! [--range LOW;HIGH] [--limit X] [--repeated 3] [--levels 0.8,0.9,0.95,0.99,0.999]
//! [intake and screen flags] [--format json|text] [--out RESULTS.csv|RESULTS.json]`: the
//! detection trial.
//!
//! `--out` also writes the trial's results to a file of their own (CSV or JSON by the file's
//! extension), marked on its first line as a trial on invented invoices with its pattern, share,
//! replications and seed, the ledger's name and SHA-256, and the caution. It is never one of the
//! screen's exports and may not overwrite the ledger.
//!
//! The ledger is screened first (its verdicts choose the default pool: suppliers `consistent`);
//! the trial then works on copies with invented invoices. Its results are printed apart from
//! the screen's and say so. `--seed` seeds the trial; the screen's calibration keeps its own
//! seed (`--calibration-seed`, default 1) so the pool does not change with the trial seed.

use crate::args::Args;
use crate::common::{format_flag, intake_options, read_ledger};
use crate::screen::screen_options;
use crate::watch::parse_iso_day;
use digitdrift_core::report;
use digitdrift_core::trial::{self, Pattern, Trial, TrialOptions};
use digitdrift_core::Amount;

fn money(flag: &str, s: &str) -> Result<Amount, String> {
    digitdrift_core::intake::parse_amount_simple(s.trim())
        .map(|a| Amount(a.0.abs()))
        .ok_or_else(|| format!("--{flag}: cannot read '{s}'"))
}

fn share(flag: &str, v: f64) -> Result<f64, String> {
    // Accept 0.3 or 30 (per cent).
    let v = if v > 1.0 { v / 100.0 } else { v };
    if !(0.0..=1.0).contains(&v) || v.is_nan() {
        return Err(format!("--{flag} takes a share between 0 and 1 (or a percentage), not {v}"));
    }
    Ok(v)
}

pub fn run(raw: &[String]) -> Result<u8, String> {
    let a = Args::parse(raw, &[])?;
    let iopts = intake_options(&a)?;
    let mut sopts = screen_options(&a)?;
    let json = format_flag(&a)?;
    let mut t = TrialOptions::default();
    t.pattern = match a.get("pattern") {
        None => Pattern::Even,
        Some(p) => Pattern::parse(p).ok_or_else(|| format!("--pattern takes even, below-limit, repeat or by-hand, not '{p}'"))?,
    };
    if let Some(v) = a.parse_num::<f64>("share")? {
        t.share = share("share", v)?;
    }
    if let Some(d) = a.get("from") {
        t.from = Some(parse_iso_day(d).ok_or_else(|| format!("--from takes a date as YYYY-MM-DD, not '{d}'"))?);
    }
    if let Some(r) = a.parse_num::<u32>("replications")? {
        if r == 0 {
            return Err("--replications must be at least 1".into());
        }
        t.replications = r;
    }
    t.seed = a.parse_num::<u64>("seed")?.unwrap_or(1);
    if let Some(v) = a.parse_num::<f64>("controls")? {
        let v = share("controls", v)?;
        if v >= 1.0 {
            return Err("--controls must be below 1 (some suppliers must be injected)".into());
        }
        t.controls = v;
    }
    if let Some(r) = a.get("range") {
        let parts: Vec<&str> = r.split(';').filter(|p| !p.trim().is_empty()).collect();
        let [lo, hi] = parts.as_slice() else {
            return Err(format!("--range takes LOW;HIGH (e.g. 100;900), not '{r}'"));
        };
        let (lo, hi) = (money("range", lo)?, money("range", hi)?);
        if !(lo.0 > 0 && hi.0 >= lo.0) {
            return Err("--range needs 0 < LOW <= HIGH".into());
        }
        t.range = Some((lo, hi));
    }
    t.limit = match a.get("limit") {
        Some(l) => Some(money("limit", l)?),
        None => sopts.battery.approval_limits.first().copied(),
    };
    if let Some(k) = a.parse_num::<u32>("repeated")? {
        t.repeated_amounts = k.clamp(1, 1000);
    }
    if let Some(l) = a.get("levels") {
        let mut v = Vec::new();
        for part in l.split(',').filter(|p| !p.trim().is_empty()) {
            let x: f64 = part.trim().parse().map_err(|_| format!("--levels: cannot read '{part}'"))?;
            let x = if x > 1.0 { x / 100.0 } else { x };
            if !(x > 0.0 && x < 1.0) {
                return Err(format!("--levels takes confidence levels between 0 and 1, not {x}"));
            }
            v.push(x);
        }
        t.levels = v;
    }
    if let Some(y) = a.parse_num::<f64>("arl-years")? {
        if !(y.is_finite() && y >= 1.0) {
            return Err(format!("--arl-years takes a number of years >= 1, not {y}"));
        }
        t.arl_years = y;
    }
    let pool_arg = a.get("suppliers").map(String::from);
    let cal_seed = a.parse_num::<u64>("calibration-seed")?.unwrap_or(1);
    let out_file = a.get("out").map(String::from);
    a.finish()?;
    let [file] = a.positionals.as_slice() else {
        return Err("trial takes exactly one FILE".into());
    };
    let out_csv = match out_file.as_deref() {
        None => None,
        Some(o) => {
            let lower = o.to_ascii_lowercase();
            let csv = if lower.ends_with(".csv") {
                true
            } else if lower.ends_with(".json") {
                false
            } else {
                return Err(format!("--out takes a file name ending in .csv or .json, not '{o}'"));
            };
            let same = std::fs::canonicalize(o).ok().zip(std::fs::canonicalize(file).ok()).is_some_and(|(x, y)| x == y);
            if same || o == file {
                return Err("--out must not be the ledger itself".into());
            }
            Some(csv)
        }
    };
    let Some(cal) = sopts.calibration.as_mut() else {
        return Err("the trial needs the calibrated screen (drop --no-calibration)".into());
    };
    cal.seed = cal_seed;
    t.calibration = cal.clone();
    t.min_amount = iopts.min_amount;
    let min = iopts.min_amount;
    let res = read_ledger(file, iopts)?;
    let ledger = &res.ledger;
    let pool: Vec<u32> = match pool_arg.as_deref() {
        None | Some("consistent") => {
            let rep = report::screen(ledger, &res.info, min, &sopts);
            trial::consistent_suppliers(&rep)
        }
        Some("all") => (0..ledger.suppliers.len() as u32).filter(|&s| ledger.invoices_of(s).next().is_some()).collect(),
        Some(list) => {
            let mut v = Vec::new();
            for name in list.split(';').map(str::trim).filter(|n| !n.is_empty()) {
                let key = digitdrift_core::ledger::supplier_key(name);
                let id = ledger.suppliers.iter().position(|s| s.key == key).ok_or_else(|| format!("--suppliers: no supplier named '{name}'"))?;
                v.push(id as u32);
            }
            v
        }
    };
    if pool.is_empty() {
        return Err("no supplier to inject into (the pool is empty: try --suppliers all)".into());
    }
    let mut tr = Trial::new(ledger, t, &pool)?;
    tr.run();
    let rep = tr.report();
    if json {
        crate::common::print_json(&rep)?;
    } else {
        print!("{}", trial::render_text(&rep));
    }
    if let (Some(o), Some(csv)) = (out_file.as_deref(), out_csv) {
        let sha = fingerprint(file)?;
        let name = std::path::Path::new(file).file_name().map_or(file.clone(), |n| n.to_string_lossy().into_owned());
        let text = if csv { trial::trial_csv(&rep, &name, &sha) } else { trial::trial_json(&rep, &name, &sha) };
        std::fs::write(o, text).map_err(|e| format!("--out {o}: {e}"))?;
        eprintln!("trial results (invented invoices, not the screen's results) written to {o}");
    }
    Ok(0)
}

/// SHA-256 of the ledger file as read (the screen's fingerprint); standard input is not re-read.
fn fingerprint(path: &str) -> Result<String, String> {
    use std::io::Read;
    if path == "-" {
        return Ok("standard input (not fingerprinted)".into());
    }
    let mut f = std::fs::File::open(path).map_err(|e| format!("{path}: {e}"))?;
    let mut fp = digitdrift_core::export::Fingerprint::new();
    let mut buf = vec![0u8; 1 << 20];
    loop {
        let k = f.read(&mut buf).map_err(|e| format!("{path}: {e}"))?;
        if k == 0 {
            break;
        }
        fp.update(&buf[..k]);
    }
    Ok(fp.hex())
}
