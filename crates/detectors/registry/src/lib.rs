//! The built-in detector plugins, in one explicit list.
//!
//! Registration is deliberately boring: adding a detector is a new crate plus
//! one line in [`builtin`]. A team with detectors of its own builds its own
//! list (this one plus theirs) and hands it to the harness.
#![deny(missing_docs)]

use echobench_core::detector::DetectorPlugin;
use std::sync::Arc;

/// Every built-in plugin, in the order `echobench detectors` lists them.
pub fn builtin() -> Vec<Arc<dyn DetectorPlugin>> {
    vec![
        Arc::new(echobench_detector_energy::EnergyPlugin),
        Arc::new(echobench_detector_window_comparator::WindowComparatorPlugin),
        Arc::new(echobench_detector_ca_cfar::CaCfarPlugin),
        Arc::new(echobench_detector_os_cfar::OsCfarPlugin),
        Arc::new(echobench_detector_band_ratio::BandRatioPlugin),
        Arc::new(echobench_detector_periodicity::PeriodicityPlugin),
        Arc::new(echobench_detector_energy_c::EnergyCPlugin),
    ]
}

/// The built-ins plus the `external` plugin, which runs a program named in the suite as a
/// detector. Running programs is off unless `allow_exec` is set (the command line's
/// `--allow-exec`): a suite file from an untrusted branch must not start programs on a CI
/// machine by itself. Without it, a suite that names `external` is refused when loaded.
pub fn with_external(allow_exec: bool) -> Vec<Arc<dyn DetectorPlugin>> {
    add_external(builtin(), allow_exec)
}

/// `plugins` (the built-ins and a team's own, say) with the `external` plugin appended, as
/// [`with_external`] does for the built-ins alone.
pub fn add_external(
    mut plugins: Vec<Arc<dyn DetectorPlugin>>,
    allow_exec: bool,
) -> Vec<Arc<dyn DetectorPlugin>> {
    plugins.push(Arc::new(echobench_detector_external::ExternalPlugin::new(
        allow_exec,
    )));
    plugins
}

/// The plugin with this id.
pub fn find(id: &str) -> Option<Arc<dyn DetectorPlugin>> {
    builtin().into_iter().find(|p| p.id() == id)
}

#[cfg(test)]
mod tests {
    use super::*;
    use echobench_core::detector::{check_scores, test_stream, Params, Samples};

    #[test]
    fn ids_are_unique_and_every_plugin_builds_with_its_defaults() {
        let plugins = builtin();
        let mut ids: Vec<&str> = plugins.iter().map(|p| p.id()).collect();
        ids.sort_unstable();
        ids.dedup();
        assert_eq!(ids.len(), plugins.len());
        let info = test_stream(2000.0);
        for plugin in plugins {
            let params = Params::defaults(plugin.params());
            let mut detector = plugin
                .plan(&params, &info)
                .map(|plan| plan.start())
                .unwrap_or_else(|e| panic!("{e}"));
            let cost = plugin.cost(&params, &info).unwrap();
            assert!(
                cost.state_bytes > 0 && cost.ops_per_sample > 0.0,
                "{}",
                plugin.id()
            );
            // Silence, then full-scale clipping, then a single sample: finite scores in time order.
            let mut scores = Vec::new();
            detector
                .process(Samples::Real(&[0.0; 20_000]), &mut scores)
                .unwrap();
            detector
                .process(Samples::Real(&[1.65; 20_000]), &mut scores)
                .unwrap();
            detector
                .process(Samples::Real(&[0.1]), &mut scores)
                .unwrap();
            assert!(
                check_scores(&scores).is_ok(),
                "{}: {:?}",
                plugin.id(),
                check_scores(&scores)
            );
        }
    }
}
