//! kickturn command-line entry point: the command line lives in the binary's own modules
//! ([`cli`]); everything it computes comes from the library.

mod cli;

fn main() -> std::process::ExitCode {
    cli::main_with_args(std::env::args_os())
}
