//! The checked-in C header is what the Rust code generates (cbindgen). Run with
//! RATEWELL_WRITE_HEADER=1 to rewrite `include/ratewell.h` after changing the ABI.

use std::path::Path;

#[test]
fn the_checked_in_header_is_up_to_date() {
    let crate_dir = Path::new(env!("CARGO_MANIFEST_DIR"));
    let config = cbindgen::Config::from_file(crate_dir.join("cbindgen.toml")).expect("cbindgen.toml");
    let mut generated = Vec::new();
    cbindgen::Builder::new()
        .with_crate(crate_dir)
        .with_config(config)
        .generate()
        .expect("cbindgen parses the crate")
        .write(&mut generated);
    let generated = String::from_utf8(generated).expect("UTF-8 header");
    let path = crate_dir.join("include/ratewell.h");
    if std::env::var_os("RATEWELL_WRITE_HEADER").is_some() {
        std::fs::write(&path, &generated).expect("write include/ratewell.h");
    }
    let checked_in = std::fs::read_to_string(&path).unwrap_or_default();
    assert!(
        checked_in == generated,
        "client/ffi/include/ratewell.h is out of date with the Rust code: run \
         `RATEWELL_WRITE_HEADER=1 cargo test -p ratewell-ffi --test header` and commit the header"
    );
}
