//! Shell conventions from the binary's own clap definitions: completion
//! scripts for bash, zsh and fish (`furrow completions SHELL`) and a roff
//! manual page (`furrow manual`). Both are generated from `cli::Cli`, the
//! same definitions that parse the command line, so they list exactly the
//! commands and flags furrow accepts.

use crate::cli::Cli;
use clap::CommandFactory;

/// The shells a completion script can be written for.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Shell {
    Bash,
    Zsh,
    Fish,
}

/// The completion script for `shell`.
pub fn completions(shell: Shell) -> Vec<u8> {
    use clap_complete::{generate, shells};
    let mut cmd = Cli::command();
    let mut out = Vec::new();
    match shell {
        Shell::Bash => generate(shells::Bash, &mut cmd, "furrow", &mut out),
        Shell::Zsh => generate(shells::Zsh, &mut cmd, "furrow", &mut out),
        Shell::Fish => generate(shells::Fish, &mut cmd, "furrow", &mut out),
    }
    out
}

/// The manual page, in roff: the main page followed by, for each visible
/// command, its name, synopsis, description and options, so `man` shows
/// every command's flags.
pub fn manual() -> std::io::Result<Vec<u8>> {
    let cmd = Cli::command();
    let mut out = Vec::new();
    clap_mangen::Man::new(cmd.clone()).render(&mut out)?;
    for sub in cmd.get_subcommands().filter(|s| !s.is_hide_set()) {
        let named = sub.clone().bin_name(format!("furrow {}", sub.get_name()));
        let man = clap_mangen::Man::new(named);
        man.render_name_section(&mut out)?;
        man.render_synopsis_section(&mut out)?;
        man.render_description_section(&mut out)?;
        man.render_options_section(&mut out)?;
    }
    Ok(out)
}
