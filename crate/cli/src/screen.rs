//! `digitdrift screen`: the batch screen of a ledger.

use crate::args::Args;
use crate::common::{format_flag, intake_options, read_ledger};
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
    Ok(o)
}

pub fn run(raw: &[String]) -> Result<u8, String> {
    let a = Args::parse(raw, &[])?;
    let opts = intake_options(&a)?;
    let sopts = screen_options(&a)?;
    let json = format_flag(&a)?;
    a.finish()?;
    let [file] = a.positionals.as_slice() else {
        return Err("screen takes exactly one FILE".into());
    };
    let min = opts.min_amount;
    let res = read_ledger(file, opts)?;
    let rep = report::screen(&res.ledger, &res.info, min, &sopts);
    if json {
        println!("{}", serde_json::to_string_pretty(&rep).map_err(|e| e.to_string())?);
    } else {
        print!("{}", report::render_text(&rep));
    }
    Ok(0)
}
