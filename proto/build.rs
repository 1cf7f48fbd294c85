//! Compiles the .proto contract in pure Rust (protox: no system protoc) and generates the prost
//! messages and tonic services. The encoded descriptor set is written to OUT_DIR for server
//! reflection.
use prost::Message;
use std::path::PathBuf;

const PROTOS: &[&str] = &[
    "ratewell/v1/common.proto",
    "ratewell/v1/catalogue.proto",
    "ratewell/v1/rates.proto",
    "ratewell/v1/populations.proto",
    "ratewell/v1/consistency.proto",
    "ratewell/v1/admin.proto",
    "ratewell/v1/transport.proto",
];

fn main() -> Result<(), Box<dyn std::error::Error>> {
    println!("cargo:rerun-if-changed=ratewell");
    let out_dir = PathBuf::from(std::env::var("OUT_DIR")?);
    let descriptors = protox::compile(PROTOS, ["."])?;
    std::fs::write(
        out_dir.join("ratewell_descriptor.bin"),
        descriptors.encode_to_vec(),
    )?;
    tonic_prost_build::configure().compile_fds(descriptors)?;
    Ok(())
}
