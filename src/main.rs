//! The `ripline` command: a thin layer over the library (see `cli/`).

mod cli;

fn main() -> std::process::ExitCode {
    cli::main()
}
