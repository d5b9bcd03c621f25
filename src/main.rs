//! The `sleek` command: parses arguments, calls the library, prints. See `sleek --help`.

mod cli;

fn main() -> std::process::ExitCode {
    cli::main()
}
