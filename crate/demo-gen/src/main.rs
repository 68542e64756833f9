//! `demo-gen FILE` writes the demo ledger to FILE; `demo-gen --check FILE` regenerates it in
//! memory and exits non-zero if FILE differs byte for byte; `demo-gen --truth` prints the true
//! story (the table in demo-files/README.md).

use std::process::ExitCode;

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let usage = "usage: demo-gen FILE | demo-gen --check FILE | demo-gen --truth";
    match args.iter().map(String::as_str).collect::<Vec<_>>().as_slice() {
        ["--truth"] => {
            print!("{}", digitdrift_demo_gen::truth_markdown(&digitdrift_demo_gen::generate()));
            ExitCode::SUCCESS
        }
        ["--check", file] => {
            let want = digitdrift_demo_gen::generate().csv;
            match std::fs::read(file) {
                Ok(have) if have == want => {
                    println!("{file}: identical to the generator output ({} bytes)", want.len());
                    ExitCode::SUCCESS
                }
                Ok(have) => {
                    let at = have.iter().zip(&want).position(|(a, b)| a != b).unwrap_or(have.len().min(want.len()));
                    let line = 1 + want[..at].iter().filter(|&&b| b == b'\n').count();
                    eprintln!("{file}: differs from the generator output (first difference at byte {at}, line {line}; {} vs {} bytes)", have.len(), want.len());
                    ExitCode::FAILURE
                }
                Err(e) => {
                    eprintln!("{file}: {e}");
                    ExitCode::FAILURE
                }
            }
        }
        [file] if !file.starts_with("--") => {
            let l = digitdrift_demo_gen::generate();
            if let Err(e) = std::fs::write(file, &l.csv) {
                eprintln!("{file}: {e}");
                return ExitCode::FAILURE;
            }
            println!("wrote {file}: {} data rows, {} bytes", l.data_rows, l.csv.len());
            ExitCode::SUCCESS
        }
        _ => {
            eprintln!("{usage}");
            ExitCode::from(2)
        }
    }
}
