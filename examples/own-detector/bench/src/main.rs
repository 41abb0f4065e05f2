fn main() -> std::process::ExitCode {
    let mut plugins = echobench_detectors::builtin();
    plugins.push(&gated_energy::GatedEnergyPlugin);
    echobench::main_with(plugins)
}
