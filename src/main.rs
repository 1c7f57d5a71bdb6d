//! The `plateau` executable: parse the command line, run the command, turn a failure into its
//! message and exit code. The commands live in [`cli`], one module each.

mod cli;

use std::process::ExitCode;

use clap::Parser;

fn main() -> ExitCode {
    // Output into a closed pipe (`plateau design s.yaml | head`) ends the process the usual
    // way, by SIGPIPE, instead of a panic in println! (Rust ignores SIGPIPE by default).
    #[cfg(unix)]
    // SAFETY: restoring the default action of one signal before any thread is started.
    unsafe {
        libc::signal(libc::SIGPIPE, libc::SIG_DFL);
    }
    let args = cli::Cli::parse();
    let result = cli::run(args.command);
    // An interrupt removed the temporary folders under the running command; the clean-up
    // thread ends the process by that signal in a moment, so no error is printed for it.
    while plateau::output::cleanup::is_stopping() {
        std::thread::sleep(std::time::Duration::from_millis(50));
    }
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(failure) => {
            failure.print();
            ExitCode::from(failure.code())
        }
    }
}
