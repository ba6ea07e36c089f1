//! `heft` command line: parses arguments, calls the library, prints, sets the exit code.

mod cli;

fn main() -> std::process::ExitCode {
    cli::main()
}
