//! The command line: the arguments ([`args`]), one file per group of verbs
//! (each verb a function of its arguments), what they print ([`print`]) and
//! the helpers they share ([`common`]). The science is in the library.

mod args;
mod bar;
mod bifurcation;
mod cluster;
mod common;
mod compare;
mod fit;
mod grow;
mod json;
mod measure;
mod phase;
mod print;
mod run;
mod screen;

pub use args::{Cli, Command};

/// Runs the verb.
pub fn dispatch(cli: &Cli) -> anyhow::Result<()> {
    match &cli.command {
        Command::Check(a) => run::check(a),
        Command::Run(a) => run::run(a),
        Command::Render(a) => run::render(a),
        Command::Basins(a) => phase::basins(a),
        Command::Portrait(a) => phase::portrait(a),
        Command::Bifurcation(a) => bifurcation::bifurcation(a),
        Command::Figure(a) => phase::figure(a),
        Command::Screen(a) => screen::screen(a),
        Command::Sensitivity(a) => screen::sensitivity(a),
        Command::Sweep(a) => screen::sweep(a),
        Command::Replicates(a) => screen::replicates(a),
        Command::Fit(a) => fit::fit(a),
        Command::Measure(a) => measure::measure(a),
        Command::Compare(a) => compare::compare(a),
        Command::Synthesize(a) => measure::synthesize(a),
        Command::Completions(a) => {
            let mut cmd = <Cli as clap::CommandFactory>::command();
            clap_complete::generate(a.shell, &mut cmd, "anlage", &mut std::io::stdout());
            Ok(())
        }
        Command::Manual => {
            let cmd = <Cli as clap::CommandFactory>::command();
            clap_mangen::Man::new(cmd).render(&mut std::io::stdout())?;
            Ok(())
        }
    }
}
