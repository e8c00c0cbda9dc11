//! The `plumbline` command: the workbench window, or a command-line tool.

fn main() -> std::process::ExitCode {
    plumbline::cli::run()
}
