//! `rfsite completions SHELL` and `rfsite man [SUBCOMMAND]`: shell completions
//! (`clap_complete`) and manual pages in roff (`clap_mangen`), both generated from the
//! clap definition of the binary that runs, so they never drift from its options.

use std::io::Write;

use clap_complete::Shell;

use crate::Outcome;

/// Arguments of `completions`.
#[derive(clap::Args)]
pub struct CompletionsArgs {
    /// The shell to write the completion script for.
    pub shell: Shell,
}

/// Arguments of `man`.
#[derive(clap::Args)]
pub struct ManArgs {
    /// A subcommand's page (`rfsite man report` is rfsite-report(1)); without it, rfsite(1).
    pub subcommand: Option<String>,
}

/// Writes the completion script for `a.shell` to stdout.
pub fn completions(a: CompletionsArgs, mut cmd: clap::Command) -> Outcome {
    let mut out = Vec::new();
    clap_complete::generate(a.shell, &mut cmd, "rfsite", &mut out);
    write_out(&out)
}

/// Writes the manual page, in roff, to stdout.
pub fn man(a: ManArgs, mut cmd: clap::Command) -> Outcome {
    cmd.build();
    let page = match &a.subcommand {
        None => cmd,
        Some(name) => match cmd
            .get_subcommands()
            .find(|s| s.get_name() == name && !s.is_hide_set())
        {
            Some(s) => s.clone().version(env!("CARGO_PKG_VERSION")),
            None => {
                let known: Vec<&str> = cmd
                    .get_subcommands()
                    .filter(|s| !s.is_hide_set() && s.get_name() != "help")
                    .map(|s| s.get_name())
                    .collect();
                eprintln!(
                    "error: `{name}` is not an rfsite subcommand\n  = hint: one of {}",
                    known.join(", ")
                );
                return Outcome::BadInput;
            }
        },
    };
    let mut out = Vec::new();
    if let Err(e) = clap_mangen::Man::new(page)
        .source(concat!("rfsite ", env!("CARGO_PKG_VERSION")))
        .render(&mut out)
    {
        eprintln!("error: man page: {e}");
        return Outcome::Failed;
    }
    write_out(&out)
}

fn write_out(bytes: &[u8]) -> Outcome {
    let mut stdout = std::io::stdout().lock();
    match stdout.write_all(bytes).and_then(|()| stdout.flush()) {
        Ok(()) => Outcome::Ok,
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Outcome::Ok,
        Err(e) => {
            eprintln!("error: writing to stdout: {e}");
            Outcome::Failed
        }
    }
}
