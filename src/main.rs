//! kickturn command-line entry point: everything lives in the library (`kickturn::cli`).

fn main() -> std::process::ExitCode {
    kickturn::cli::main_with_args(std::env::args_os())
}
