//! The `isodisc` command.

fn main() -> std::process::ExitCode {
    isodisc_runner::main_entry()
}
