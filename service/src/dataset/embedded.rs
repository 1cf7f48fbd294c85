//! The invented demo dataset, compiled into the binary so a server always has data to serve.
//! It is loaded through the same code path as on-disk datasets.

use super::error::DatasetError;
use super::load::assemble;
use super::model::Dataset;

/// Origin name of the embedded demo in catalogues and problem messages.
pub const EMBEDDED_DEMO_ORIGIN: &str = "embedded:demo";

/// `(file name, text)` of every file of `service/data/demo/`, as compiled in.
pub const EMBEDDED_DEMO_FILES: [(&str, &str); 3] = [
    ("dataset.toml", include_str!("../../data/demo/dataset.toml")),
    ("mk-ii.toml", include_str!("../../data/demo/mk-ii.toml")),
    ("mk-iii.toml", include_str!("../../data/demo/mk-iii.toml")),
];

/// Load the embedded demo dataset (INVENTED data, for trying the service out).
pub fn demo_dataset() -> Result<Dataset, DatasetError> {
    assemble(
        &format!("{EMBEDDED_DEMO_ORIGIN}/"),
        EMBEDDED_DEMO_ORIGIN,
        &EMBEDDED_DEMO_FILES,
    )
}
