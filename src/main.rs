//! The `foldcheck` binary: parse arguments, call the library, set the exit status.

mod cli;
mod commands;

use clap::Parser;
use std::io::Write;
use std::process::ExitCode;

fn main() -> ExitCode {
    let cli = match cli::Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    let result = commands::run(cli.command);
    let mut stdout = std::io::stdout().lock();
    match result {
        Ok((text, code)) => {
            // A closed pipe (`foldcheck check | head`) ends quietly.
            match stdout
                .write_all(text.as_bytes())
                .and_then(|_| stdout.flush())
            {
                Ok(()) => ExitCode::from(code),
                Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => ExitCode::from(code),
                Err(e) => {
                    eprintln!("foldcheck: cannot write the output: {e}");
                    ExitCode::from(2)
                }
            }
        }
        Err(message) => {
            let _ = writeln!(std::io::stderr(), "{message}");
            ExitCode::from(2)
        }
    }
}
