//! Compiles the firmware C file with the `cc` crate into a static library
//! that the crate links (see the crate doc for swapping in your own file).

fn main() {
    println!("cargo::rerun-if-changed=c/energy.c");
    println!("cargo::rerun-if-changed=c/energy.h");
    cc::Build::new()
        .file("c/energy.c")
        .include("c")
        .std("c99")
        .warnings(true)
        .extra_warnings(true)
        .flag_if_supported("-pedantic")
        // One rounding per operation, as written: no fused multiply-adds, so
        // the host build rounds like an MCU whose compiler does not contract.
        .flag_if_supported("-ffp-contract=off")
        .compile("echobench_energy_c");
}
