//! The sharecast command: everything happens in the library's `cli` module.

fn main() -> std::process::ExitCode {
    sharecast::cli::main()
}
