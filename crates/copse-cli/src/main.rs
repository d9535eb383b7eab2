//! The `copse` command: parse the arguments, run the subcommand, replace its outputs
//! all together, turn any error into a one-line `copse:` message on standard error and
//! the documented exit code (0 success or a closed output pipe, 1 failure while
//! running, 2 bad usage or input). Nothing here may fail on a closed or full standard
//! error: messages that cannot be written are dropped.
#![forbid(unsafe_code)]

use clap::Parser;
use copse_cli::{args, commands, error, interrupt, output, ui};
use error::Exit;

fn main() {
    // A fault in copse itself must still end with a `copse:` message and exit 1, not a
    // bare panic report.
    std::panic::set_hook(Box::new(|info| {
        ui::say(
            "copse: internal error: ",
            &format!("{info}; this is a fault in copse, please report it with the command you ran"),
        );
    }));
    interrupt::install();
    let cli = match args::Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => std::process::exit(usage_error(&e)),
    };
    let quiet = cli.quiet;
    let code = match std::panic::catch_unwind(move || {
        commands::run(cli).and_then(|()| output::commit_all())
    }) {
        Ok(Ok(())) => 0,
        Ok(Err(e)) => {
            output::discard_all();
            if e.exit() != Exit::ClosedPipe {
                ui::Ui::detect(quiet).error(e.message());
            }
            e.exit().code()
        }
        Err(_) => {
            output::discard_all();
            1
        }
    };
    std::process::exit(code);
}

/// Prints what clap found (help and version as clap writes them; a usage error as one
/// `copse: error:` line with clap's tip and where to find help) and returns the exit
/// code.
fn usage_error(e: &clap::Error) -> i32 {
    use clap::error::ErrorKind;
    match e.kind() {
        ErrorKind::DisplayHelp | ErrorKind::DisplayVersion => {
            let _ = e.print();
            0
        }
        ErrorKind::DisplayHelpOnMissingArgumentOrSubcommand => {
            let _ = e.print();
            2
        }
        _ => {
            ui::say("copse: error: ", &one_line_usage(&e.render().to_string()));
            2
        }
    }
}

/// Clap's several-line usage error as one line: the error, its tips, and the command
/// whose `--help` to read (from the usage line).
fn one_line_usage(text: &str) -> String {
    let mut lines = text.lines().map(str::trim).filter(|l| !l.is_empty());
    let first = lines.next().unwrap_or("bad arguments");
    let mut out = first.strip_prefix("error: ").unwrap_or(first).to_string();
    let mut command = "copse".to_string();
    for l in lines {
        if let Some(tip) = l.strip_prefix("tip: ") {
            out.push_str("; ");
            out.push_str(tip);
        } else if let Some(usage) = l.strip_prefix("Usage: ") {
            command = usage
                .split_whitespace()
                .take_while(|w| !w.starts_with(['-', '<', '[']))
                .collect::<Vec<_>>()
                .join(" ");
        }
    }
    format!("{out}; see '{command} --help'")
}

#[cfg(test)]
mod tests {
    use super::one_line_usage;

    #[test]
    fn clap_errors_become_one_line() {
        let text = "error: unexpected argument '--frobnicate' found\n\n  tip: to pass '--frobnicate' as a value, use '-- --frobnicate'\n\nUsage: copse train --data <FILE> --target <COL> --out <MODEL>\n\nFor more information, try '--help'.\n";
        assert_eq!(
            one_line_usage(text),
            "unexpected argument '--frobnicate' found; to pass '--frobnicate' as a value, use \
             '-- --frobnicate'; see 'copse train --help'"
        );
    }
}
