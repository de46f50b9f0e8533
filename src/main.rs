//! The `countersteer` program: the desktop workbench by default, headless subcommands beside it.

fn main() -> std::process::ExitCode {
    countersteer::cli::main()
}
