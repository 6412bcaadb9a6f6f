//! `ohmstack share encode FILE` and `ohmstack share decode LINK`: the app's share links (`v1.…`) from and to
//! project JSON.

use ohmstack_core::design::share;
use ohmstack_core::Project;

use crate::files::read_input;
use anyhow::Result;

#[derive(clap::Args)]
#[command(subcommand_required = true, disable_help_subcommand = true)]
pub struct Args {
    #[command(subcommand)]
    pub command: Option<ShareCommand>,
}

#[derive(clap::Subcommand)]
pub enum ShareCommand {
    /// Print the share link (v1.…) of a project
    Encode {
        /// Project file (- reads stdin)
        #[arg(value_name = "FILE")]
        file: String,
    },
    /// Print the project JSON a share link holds (a whole URL is fine)
    Decode {
        /// The link, or - to read it from stdin
        #[arg(value_name = "LINK")]
        link: String,
    },
}

pub fn run(args: Args) -> Result<()> {
    match args.command {
        Some(ShareCommand::Encode { file }) => {
            let project = Project::from_json(&read_input(&file)?)?;
            println!("{}", share::encode(&project));
        }
        Some(ShareCommand::Decode { link }) => {
            let link = if link == "-" { read_input("-")? } else { link };
            let project = share::decode(&link)?;
            println!("{}", project.to_json());
        }
        // clap requires the subcommand; this arm is never reached.
        None => anyhow::bail!("share: missing command (encode or decode)"),
    }
    Ok(())
}
