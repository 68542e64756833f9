//! `digitdrift screen`: the batch screen of a ledger.

use crate::args::Args;
use crate::common::{format_flag, intake_options, read_ledger};
use digitdrift_core::report;

pub fn run(raw: &[String]) -> Result<u8, String> {
    let a = Args::parse(raw, &[])?;
    let opts = intake_options(&a)?;
    let json = format_flag(&a)?;
    a.finish()?;
    let [file] = a.positionals.as_slice() else {
        return Err("screen takes exactly one FILE".into());
    };
    let res = read_ledger(file, opts)?;
    let rep = report::screen(&res.ledger, &res.info);
    if json {
        println!("{}", serde_json::to_string_pretty(&rep).map_err(|e| e.to_string())?);
    } else {
        print!("{}", report::render_text(&rep));
    }
    Ok(0)
}
