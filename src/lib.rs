//! Support shared by the workspace's cross-crate tests, benches and
//! examples. The products are `lc-core` (firmware) and `lc-host` (PC).
#![forbid(unsafe_code)]
#![deny(missing_docs)]
