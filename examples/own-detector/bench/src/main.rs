fn main() -> std::process::ExitCode {
    let mut plugins = echobench_detectors::builtin();
    plugins.push(std::sync::Arc::new(gated_energy::GatedEnergyPlugin));
    echobench::main_with(plugins)
}
