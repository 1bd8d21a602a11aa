//! The `nadir` binary: parse the command line, run one verb, map the outcome to an exit code.
//!
//! The `cli` module is part of the binary, not the library, so nothing in the library can
//! import it. This file owns exit codes and error printing only; no physics and no formatting of results here.
//! Exit codes: 0 the verb ran and every check holds, 1 a criterion or audit rule fails,
//! 2 bad input or usage (clap's own usage errors included).

mod cli;

use clap::Parser;
use cli::{Cli, Outcome};
use std::process::ExitCode;

fn main() -> ExitCode {
    cli::clean_up_on_signals();
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            // --help and --version are not errors; every other clap error is a usage error.
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    match cli::run(cli) {
        Ok(Outcome::Pass) => ExitCode::from(0),
        Ok(Outcome::Fail) => ExitCode::from(1),
        Err(err) => {
            // A closed stderr must not turn a clean error into a panic.
            use std::io::Write;
            let _ = writeln!(std::io::stderr(), "{}", cli::render_error(&err));
            ExitCode::from(2)
        }
    }
}
