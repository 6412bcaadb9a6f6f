//! `ohmstack completions SHELL`: a completion script for the shell, generated from the same definitions that
//! parse the arguments (so it lists every command, option, structure KIND and choice).

use anyhow::Result;
use clap::CommandFactory;
use clap_complete::Shell;

#[derive(clap::Args)]
#[command(
    after_help = "Example (bash): ohmstack completions bash > ~/.local/share/bash-completion/completions/ohmstack"
)]
pub struct Args {
    /// The shell to write the script for
    #[arg(value_name = "SHELL")]
    pub shell: Shell,
}

pub fn run(args: Args) -> Result<()> {
    let mut cmd = crate::Cli::command();
    let mut out = Vec::new();
    clap_complete::generate(args.shell, &mut cmd, "ohmstack", &mut out);
    // Through `print!`, so a closed pipe ends quietly like every other output.
    print!("{}", String::from_utf8_lossy(&out));
    Ok(())
}
