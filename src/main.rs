//! `rfsite`: the command line. Thin by design: parse, dispatch one module per subcommand,
//! map the outcome to an exit code (0 done, 2 bad input, 1 any other failure).

use std::process::ExitCode;

use clap::{CommandFactory, Parser, Subcommand};

mod calc;
mod check;
mod init;
mod isolate;
mod materials;
mod plan;
mod plugins;
mod portfolio;
mod progress;
mod report;
mod rules;
mod shell;
mod term;

/// Exit status of a subcommand.
pub enum Outcome {
    /// Done.
    Ok,
    /// Bad input: nothing written, every problem listed.
    BadInput,
    /// Anything else went wrong.
    Failed,
}

#[derive(Parser)]
#[command(
    name = "rfsite",
    version,
    about = "Radio coverage assessment of buildings: a site project in, a signed-off report out"
)]
struct Cli {
    /// Print only errors, warnings and a command's answer: no progress display, no status
    /// or summary lines.
    #[arg(long, short, global = true)]
    quiet: bool,
    #[command(subcommand)]
    cmd: Cmd,
}

#[derive(Subcommand)]
enum Cmd {
    /// Scaffold a new site project that passes `check`.
    Init(init::Args),
    /// Validate a site project; every problem as file:line:column with a hint.
    Check(check::Args),
    /// Run the pipeline and write report.pdf, findings.json and figures/.
    Report(report::Args),
    /// One published calculation, for quick what-ifs.
    Calc(calc::Args),
    /// The material library with sources and validity ranges.
    Materials(materials::Args),
    /// The acceptance rule sets, every number with its source.
    Rules(rules::Args),
    /// DXF floor plans: `plan layers FILE.dxf` lists layers, `plan import FILE.dxf --map
    /// MAP.toml` prints the walls as site TOML.
    Plan(plan::Args),
    /// The plugins, their methods and run order.
    Plugins(plugins::Args),
    /// Run every site below a folder; write one folder per site and a portfolio summary.
    /// `rfsite portfolio merge OUT... -o MERGED` combines the outputs of shards.
    Portfolio(portfolio::Args),
    /// A shell completion script on stdout: `rfsite completions bash > ~/.local/share/bash-completion/completions/rfsite`.
    Completions(shell::CompletionsArgs),
    /// The manual page in roff on stdout: `rfsite man > rfsite.1`, `rfsite man report`.
    Man(shell::ManArgs),
    /// One site of a portfolio, run in a child process (internal).
    #[command(hide = true)]
    PortfolioSite(isolate::Args),
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    term::set_quiet(cli.quiet);
    let outcome = match cli.cmd {
        Cmd::Init(a) => init::run(a),
        Cmd::Check(a) => check::run(a),
        Cmd::Report(a) => report::run(a),
        Cmd::Calc(a) => calc::run(a),
        Cmd::Materials(a) => materials::run(a),
        Cmd::Plan(a) => plan::run(a),
        Cmd::Plugins(a) => plugins::run(a),
        Cmd::Rules(a) => rules::run(a),
        Cmd::Portfolio(a) => portfolio::run(a),
        Cmd::PortfolioSite(a) => isolate::child(a),
        Cmd::Completions(a) => shell::completions(a, Cli::command()),
        Cmd::Man(a) => shell::man(a, Cli::command()),
    };
    match outcome {
        Outcome::Ok => ExitCode::SUCCESS,
        Outcome::BadInput => ExitCode::from(2),
        Outcome::Failed => ExitCode::from(1),
    }
}
