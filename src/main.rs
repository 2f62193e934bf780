//! The `cuvette` binary: everything lives in the library.

fn main() -> std::process::ExitCode {
    cuvette::cli::run()
}
