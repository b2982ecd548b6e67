//! The sharecast command: everything happens in the library's `cli` module.

fn main() -> std::process::ExitCode {
    // Die quietly on a closed pipe (`sharecast fit ... | head`) instead of panicking.
    // SAFETY: restoring the default disposition of SIGPIPE before any thread starts.
    #[cfg(unix)]
    unsafe {
        libc::signal(libc::SIGPIPE, libc::SIG_DFL);
    }
    sharecast::cli::main()
}
