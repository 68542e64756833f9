//! `digitdrift screen`: the batch screen of a ledger.

use crate::args::Args;
use crate::common::{format_flag, intake_options, read_ledger_with};
use digitdrift_core::battery::TestSet;
use digitdrift_core::report::{self, ScreenOptions};
use digitdrift_core::Amount;

/// Screen options shared with `watch` and `trial`: --tests, --limits.
pub fn screen_options(a: &Args) -> Result<ScreenOptions, String> {
    let mut o = ScreenOptions::default();
    if let Some(t) = a.get("tests") {
        o.battery.tests = t.parse::<TestSet>().map_err(|e| format!("--tests: {e}"))?;
    }
    if let Some(l) = a.get("limits") {
        for part in l.split(';').flat_map(|p| p.split(' ')).filter(|p| !p.trim().is_empty()) {
            let v = digitdrift_core::intake::parse_amount_simple(part)
                .ok_or_else(|| format!("--limits: cannot read '{part}' (separate limits with ';')"))?;
            o.battery.approval_limits.push(Amount(v.0.abs()));
        }
    }
    let mut c = digitdrift_core::calibrate::CalibrationOptions::default();
    if let Some(v) = a.parse_num::<f64>("confidence")? {
        // Accept 0.95 or 95.
        let v = if v > 1.0 { v / 100.0 } else { v };
        if !(v > 0.0 && v < 1.0) {
            return Err("--confidence must be between 0 and 1 (e.g. 0.95) or a percentage".into());
        }
        c.confidence = v;
    }
    if let Some(v) = a.parse_num::<u64>("seed")? {
        c.seed = v;
    }
    if let Some(v) = a.parse_num::<f64>("power")? {
        c.power = if v > 1.0 { v / 100.0 } else { v };
    }
    if let Some(v) = a.parse_num::<f64>("fabricated-share")? {
        c.fabricated_share = if v > 1.0 { v / 100.0 } else { v };
    }
    if let Some(v) = a.parse_num::<u32>("sims")? {
        c.sims = v.max(100);
    }
    c.correction = match a.get("correction") {
        None | Some("fdr") => digitdrift_core::calibrate::Correction::Fdr,
        Some("bonferroni") => digitdrift_core::calibrate::Correction::Bonferroni,
        Some("none") => digitdrift_core::calibrate::Correction::None,
        Some(v) => return Err(format!("--correction takes fdr, bonferroni or none, not '{v}'")),
    };
    c.deviation_model = match a.get("deviation-model") {
        None | Some("even") => digitdrift_core::calibrate::DeviationModel::EvenSpread,
        Some("observed") => digitdrift_core::calibrate::DeviationModel::ObservedProfile,
        Some(v) => return Err(format!("--deviation-model takes even or observed, not '{v}'")),
    };
    o.calibration = if a.flag("no-calibration") { None } else { Some(c) };
    Ok(o)
}

pub fn run(raw: &[String]) -> Result<u8, String> {
    let a = Args::parse(raw, &["no-calibration"])?;
    let opts = intake_options(&a)?;
    let sopts = screen_options(&a)?;
    let json = format_flag(&a)?;
    a.finish()?;
    let [file] = a.positionals.as_slice() else {
        return Err("screen takes exactly one FILE".into());
    };
    let min = opts.min_amount;
    // A digit-count table (supplier, first_two, invoices, amount) made by an SQL engine.
    if file != "-" {
        use std::io::Read;
        let mut head = vec![0u8; 4096];
        let k = std::fs::File::open(file).and_then(|mut f| f.read(&mut head)).map_err(|e| format!("{file}: {e}"))?;
        if digitdrift_core::counts::is_count_table(&head[..k]) {
            let bytes = std::fs::read(file).map_err(|e| format!("{file}: {e}"))?;
            let t = digitdrift_core::counts::read(&bytes).map_err(|e| format!("{file}: {e}"))?;
            let rep = digitdrift_core::counts::screen(&t, &sopts);
            if json {
                crate::common::print_screen_json(rep)?;
            } else {
                print!("{}", report::render_text(&rep));
            }
            return Ok(0);
        }
    }
    // The null tables almost every screen reads (the power-curve checkpoints) are simulated on
    // a second thread while this one reads the file (which that thread then helps to read); the
    // same tables as later (seeded by size).
    let cal = sopts.calibration.as_ref().map(|c| digitdrift_core::calibrate::Calibrator::new(c.clone()));
    let (res, cal) = read_ledger_with(file, opts, move || {
        let mut cal = cal;
        if let Some(c) = cal.as_mut() {
            let likely = c.likely_tables();
            c.prepare(&likely, 1);
        }
        cal
    });
    let res = res?;
    let rep = report::screen_with(&res.ledger, &res.info, min, &sopts, cal);
    if json {
        crate::common::print_screen_json(rep)?;
    } else {
        print!("{}", report::render_text(&rep));
    }
    Ok(0)
}
