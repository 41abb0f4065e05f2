//! Only for this template's own self-test (`tests/guide.rs`): turns on the slow
//! copy-and-build test when `ECHOBENCH_TEMPLATE_BUILD=1`. The guide tells you to
//! delete this file in your copy.

fn main() {
    // Declare the cfg so that rustc does not warn about an unknown name.
    println!("cargo::rustc-check-cfg=cfg(echobench_template_build)");
    // Re-run this script only when the variable changes.
    println!("cargo::rerun-if-env-changed=ECHOBENCH_TEMPLATE_BUILD");
    if std::env::var("ECHOBENCH_TEMPLATE_BUILD").as_deref() == Ok("1") {
        println!("cargo::rustc-cfg=echobench_template_build");
    }
}
