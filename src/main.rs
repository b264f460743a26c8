//! The `anlage` command: parses arguments and calls the library.

mod cli;

use std::process::ExitCode;

use clap::Parser;

use anlage::model::ModelError;
use anlage::render::StyleError;
use anlage::run_dir::RunDirError;
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
            // 2: the input is wrong; 1: the computation or output failed.
            let bad_input = e.chain().any(|c| {
                c.is::<ModelError>()
                    || c.is::<StyleError>()
                    || c.is::<RunDirError>()
                    || c.is::<anlage::measure::MeasureError>()
                    || c.is::<anlage::compare::CompareError>()
                    || c.is::<anlage::integrate::CheckpointError>()
                    || c.is::<anlage::fit::FitSetupError>()
            });
            if bad_input { ExitCode::from(2) } else { ExitCode::from(1) }
        }
    }
}
