//! Tells the fixed-point kernels whether the target core lacks a
//! 32 × 32 → 64 multiply (Armv6-M and Armv8-M Baseline: Cortex-M0, M0+,
//! M1, M23), where they build the Q31 product from 16-bit halves instead of
//! calling the general 64-bit multiply helper. Stable Rust does not expose
//! Arm target features to `cfg`, so the target name decides.

fn main() {
    println!("cargo::rustc-check-cfg=cfg(lookout_no_long_multiply)");
    println!("cargo::rerun-if-changed=build.rs");
    let target = std::env::var("TARGET").unwrap_or_default();
    if target.starts_with("thumbv6m") || target.starts_with("thumbv8m.base") {
        println!("cargo::rustc-cfg=lookout_no_long_multiply");
    }
}
