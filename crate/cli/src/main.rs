//! `digitdrift` command line. Exit status: 0 fine, 2 bad input or usage, 3 `watch` found a
//! supplier in alarm.

mod args;
mod common;
mod screen;
mod trial;
mod watch;

use std::process::ExitCode;

const USAGE: &str = "digitdrift — Benford digit screening of supplier invoices, locally

usage:
  digitdrift screen FILE [--supplier COL] [--amount COL] [--date COL] [--invoice COL]
                         [--decimal comma|point] [--date-order dmy|mdy|ymd] [--min-amount X]
                         [--tests all|first,second,first_two,first_three,last_two,summation,
                                  second_order,distortion,amounts]
                         [--limits 5000;10000] [--confidence 0.95] [--seed N] [--sims 10000]
                         [--power 0.8] [--fabricated-share 0.3] [--deviation-model even|observed]
                         [--correction fdr|bonferroni|none] [--no-calibration] [--format json|text]
  digitdrift watch FILE [--as-of YYYY-MM-DD] [--confidence 0.95] [--arl-years 100]
                        [intake flags] [--format json|text]
  digitdrift trial FILE --pattern even|below-limit|repeat|by-hand --share S [--from YYYY-MM-DD]
                        [--replications 100] [--seed N] [--suppliers consistent|all|NAME;NAME]
                        [--controls 0.5] [--range LOW;HIGH] [--limit X] [--repeated 3]
                        [--levels 0.8,0.9,0.95,0.99,0.999] [intake and screen flags]
                        [--calibration-seed 1] [--format json|text] [--out RESULTS.csv|RESULTS.json]

COL is a header name or a 1-based column number. A digit deviation is a reason to look,
not proof of wrongdoing.";

fn main() -> ExitCode {
    let raw: Vec<String> = std::env::args().skip(1).collect();
    let Some(cmd) = raw.first() else {
        eprintln!("{USAGE}");
        return ExitCode::from(2);
    };
    let rest = &raw[1..];
    let r = match cmd.as_str() {
        "screen" => screen::run(rest),
        "watch" => watch::run(rest),
        "trial" => trial::run(rest),
        "-h" | "--help" | "help" => {
            println!("{USAGE}");
            Ok(0)
        }
        other => Err(format!("unknown command '{other}'\n\n{USAGE}")),
    };
    match r {
        Ok(code) => ExitCode::from(code),
        Err(msg) => {
            eprintln!("digitdrift: {msg}");
            ExitCode::from(2)
        }
    }
}
