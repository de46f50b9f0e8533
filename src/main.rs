//! The `countersteer` program: the desktop workbench by default, headless subcommands beside it.
//! The command line lives here, on the binary side: the library's public API does not hold it.

mod cli;

fn main() -> std::process::ExitCode {
    cli::main()
}
