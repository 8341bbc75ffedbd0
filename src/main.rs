use clap::Parser;
use std::process::ExitCode;

fn main() -> ExitCode {
    let cli = match capstack::cli::Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    match capstack::cmd::run(cli.command) {
        Ok(outcome) => ExitCode::from(outcome.code()),
        Err(e) if capstack::output::is_broken_pipe(&e) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("error: {e:#}");
            ExitCode::from(2)
        }
    }
}
