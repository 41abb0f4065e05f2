//! The `echobench` binary: the command line with the built-in detectors.

fn main() -> std::process::ExitCode {
    echobench::main_with(echobench_detectors::builtin())
}
