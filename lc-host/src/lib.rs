//! # lc-host: the PC side of the LC sensor toolkit
//!
//! Engineers convert logged counts exactly as the firmware would: every
//! number here comes from `lc-core`'s own code path, never a second
//! implementation.
//!
//! - [`fieldlog`]: streaming reader of field logs (CSV), with errors that
//!   name the file, line and field.
//! - [`counts`]: count pairs to frequency, period ratio, shift and
//!   quantisation step, with the fault window applied.
//! - [`convert`]: field logs to readings through a unit's calibration
//!   image, with lc-core's reader; [`verify`]: that path against its `f64`
//!   twin over the image's whole domain; [`budget`]: what a readout set-up
//!   resolves and what temperature costs.
//! - [`riglog`], [`calib`], [`store`]: end-of-line calibration from rig logs
//!   to calibration images and unit records (SQLite).
//! - [`coil`]: coil design: inductance (Mohan, Wheeler, Maxwell loops),
//!   resistance and Q, the tank capacitor, the pull of a metal target.
//! - [`report`]: the lot report (offline HTML) and unit certificates;
//!   [`export`]: calibration images as Intel HEX, C arrays, padded binaries.
//! - [`link`]: the live link's tolerant decoder and the listener behind
//!   `lc-host listen` (docs/link.md).
//! - [`sim`]: simulated rig and field logs; [`svg`]: plots for reports;
//!   [`stream`], [`csvin`], [`csvout`], [`atomic`]: streaming CSV in and
//!   out, atomic files.
//!
//! ```
//! use lc_host::counts::{CountsConfig, RowStatus};
//! use lc_core::counting::CountPair;
//!
//! let cfg = CountsConfig::new(16_000_000, CountPair::new(4096, 19_275), Some(4096), None).unwrap();
//! let row = cfg.convert(CountPair::new(4096, 19_180));
//! assert_eq!(row.status, RowStatus::Ok);
//! assert!(row.shift_ppm.unwrap() < 0.0); // a target lowered L·C
//! ```
#![forbid(unsafe_code)]
#![deny(missing_docs)]

pub mod atomic;
pub mod budget;
pub mod calib;
pub mod coil;
pub mod convert;
pub mod counts;
pub mod csvin;
pub mod csvout;
pub mod demo;
pub mod export;
pub mod fieldlog;
pub mod link;
pub mod liquid;
pub mod ntc;
pub mod quantity;
pub mod report;
pub mod riglog;
pub mod sim;
pub mod status;
pub mod store;
pub mod stream;
pub mod svg;
#[cfg(test)]
mod testdata;
pub mod verify;
pub mod volume;

/// The validated image of a calibration, to build lc-core's readers on the
/// host. lc-core's readers borrow their curves from the image's bytes; a
/// host converter or verification lives as long as its run, so the
/// image's aligned buffer (about 4 KB) is leaked: build one per
/// calibration, not per reading.
pub fn host_image(
    cal: &lc_core::image::Calibration,
) -> Result<lc_core::image::Image<'static>, lc_core::image::ImageError> {
    let buf: &'static lc_core::image::ImageBuf = Box::leak(Box::new(cal.to_image_buf()?));
    buf.image()
}
