//! The `copse` command line tool (placeholder until the CLI issue lands).
fn main() {
    eprintln!("copse: not yet: the command-line tool arrives with the CLI issue");
    std::process::exit(1);
}
