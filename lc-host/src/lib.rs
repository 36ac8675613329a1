//! # lc-host: PC side of the LC sensor toolkit
#![forbid(unsafe_code)]
#![deny(missing_docs)]
