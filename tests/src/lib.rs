//! End-to-end test helpers (being written).
