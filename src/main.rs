//! The `anlage` command: parses arguments and calls the library.

mod cli;

use std::process::ExitCode;

use clap::Parser;

use anlage::error::Blame;
use cli::Cli;

fn main() -> ExitCode {
    // A reader that stops early (`anlage … | head`) closes standard output:
    // stop with exit 1 and say so, instead of a panic's backtrace.
    let default_hook = std::panic::take_hook();
    std::panic::set_hook(Box::new(move |info| {
        let message = info.payload_as_str().unwrap_or("");
        if message.contains("failed printing to stdout") {
            eprintln!(
                "anlage: standard output was closed before the command finished; stopped (outputs may be incomplete)"
            );
            std::process::exit(1);
        }
        default_hook(info);
    }));
    let cli = Cli::parse();
    match cli::dispatch(&cli) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("anlage: {e:#}");
            // 2: the input is wrong; 1: the computation or output failed
            // (also for errors of the command line's own, such as a bad --starts).
            let blame = e.chain().find_map(anlage::error::blame_of).unwrap_or(Blame::Run);
            ExitCode::from(blame.exit_code())
        }
    }
}
