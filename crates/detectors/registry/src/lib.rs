//! The built-in detector plugins, in one explicit list.
//!
//! Registration is deliberately boring: adding a detector is a new crate plus
//! one line in [`builtin`]. A team with detectors of its own builds its own
//! list (this one plus theirs) and hands it to the harness.
#![deny(missing_docs)]

use echobench_core::detector::DetectorPlugin;

/// Every built-in plugin, in the order `echobench detectors` lists them.
pub fn builtin() -> Vec<&'static dyn DetectorPlugin> {
    vec![
        &echobench_detector_energy::EnergyPlugin,
        &echobench_detector_window_comparator::WindowComparatorPlugin,
        &echobench_detector_ca_cfar::CaCfarPlugin,
        &echobench_detector_os_cfar::OsCfarPlugin,
        &echobench_detector_band_ratio::BandRatioPlugin,
        &echobench_detector_periodicity::PeriodicityPlugin,
        &echobench_detector_energy_c::EnergyCPlugin,
    ]
}

/// The external-program plugin, refusing to run anything.
static EXTERNAL_REFUSED: echobench_detector_external::ExternalPlugin =
    echobench_detector_external::ExternalPlugin::new(false);

/// The external-program plugin, allowed to run the programs a suite names.
static EXTERNAL_ALLOWED: echobench_detector_external::ExternalPlugin =
    echobench_detector_external::ExternalPlugin::new(true);

/// The built-ins plus the `external` plugin, which runs a program named in the suite as a
/// detector. Running programs is off unless `allow_exec` is set (the command line's
/// `--allow-exec`): a suite file from an untrusted branch must not start programs on a CI
/// machine by itself. Without it, a suite that names `external` is refused when loaded.
pub fn with_external(allow_exec: bool) -> Vec<&'static dyn DetectorPlugin> {
    add_external(builtin(), allow_exec)
}

/// `plugins` (the built-ins and a team's own, say) with the `external` plugin appended, as
/// [`with_external`] does for the built-ins alone.
pub fn add_external(
    mut plugins: Vec<&'static dyn DetectorPlugin>,
    allow_exec: bool,
) -> Vec<&'static dyn DetectorPlugin> {
    plugins.push(if allow_exec {
        &EXTERNAL_ALLOWED
    } else {
        &EXTERNAL_REFUSED
    });
    plugins
}

/// The plugin with this id.
pub fn find(id: &str) -> Option<&'static dyn DetectorPlugin> {
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
