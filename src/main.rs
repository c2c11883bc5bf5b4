//! The `concord` binary: parse the command line, run the command, map the outcome to the
//! exit code (0 passed, 1 gate failed, 2 could not run).

fn main() -> std::process::ExitCode {
    concord::cli::main()
}
