//! The `copse` command: parse the arguments, run the subcommand, turn any error into a
//! `copse:` message on standard error and the documented exit code (0 success or a
//! closed output pipe, 1 failure while running, 2 bad usage or input).
#![forbid(unsafe_code)]

use clap::Parser;
use copse_cli::{args, commands, error, interrupt, ui};
use error::Exit;

fn main() {
    // A fault in copse itself must still end with a `copse:` message and exit 1, not a
    // bare panic report.
    std::panic::set_hook(Box::new(|info| {
        eprintln!(
            "copse: internal error: {info}; this is a fault in copse, please report it with the command you ran"
        );
    }));
    interrupt::install();
    let cli = match args::Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            use clap::error::ErrorKind;
            let code = match e.kind() {
                ErrorKind::DisplayHelp
                | ErrorKind::DisplayVersion
                | ErrorKind::DisplayHelpOnMissingArgumentOrSubcommand => {
                    let _ = e.print();
                    if e.kind() == ErrorKind::DisplayHelpOnMissingArgumentOrSubcommand {
                        2
                    } else {
                        0
                    }
                }
                _ => {
                    let text = e.render().to_string();
                    let text = text.strip_prefix("error: ").unwrap_or(&text);
                    eprint!("copse: error: {text}");
                    2
                }
            };
            std::process::exit(code);
        }
    };
    let quiet = cli.quiet;
    let code = match std::panic::catch_unwind(move || commands::run(cli)) {
        Ok(Ok(())) => 0,
        Ok(Err(e)) => {
            if e.exit() != Exit::ClosedPipe {
                ui::Ui::detect(quiet).error(e.message());
            }
            e.exit().code()
        }
        Err(_) => 1,
    };
    std::process::exit(code);
}
