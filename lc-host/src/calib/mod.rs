//! End-of-line calibration: from a lot's rig log to one calibration image
//! per passing unit, a unit record per attempt, and a lot report.

pub mod linalg;
pub mod monotone;
pub mod plan;
