//! What the reader tests share: the committed images, each with its path
//! below examples/ (for failure messages).

/// `(path, bytes)` of each image from examples/: `path` names the file.
macro_rules! images {
    ($($path:literal),* $(,)?) => {
        [$(($path, include_bytes!(concat!("../../../examples/", $path)) as &[u8])),*]
    };
}

/// The unit firmwares' images (`lc-host calibrate`, written by
/// `examples/unit-firmware/run.sh images`) and the firmware example's
/// (examples/firmware/data).
pub const IMAGES: [(&str, &[u8]); 8] = images![
    "unit-firmware/data/proximity.lcim",
    "unit-firmware/data/level.lcim",
    "unit-firmware/data/metal.lcim",
    "firmware/data/demo-proximity.lcim",
    "firmware/data/demo-proximity-32.lcim",
    "firmware/data/demo-proximity-tc.lcim",
    "firmware/data/demo-level.lcim",
    "firmware/data/demo-metal.lcim",
];
