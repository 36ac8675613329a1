//! `size_of` of every public firmware type of lc-core on this target (the
//! emulated Cortex-M0 and Cortex-M4F: both 32-bit, the same sizes), checked
//! at compile time: a change of layout fails the firmware build until the
//! table here and the one in lc-core's `lib.rs` docs ("Memory") are
//! updated. `run.sh cost` prints the table. (A host build has 64-bit
//! pointers: the types that borrow the image are larger there.)

use core::mem::size_of;
use lc_core::counting::{AcceptedTicks, CountPair, FaultWindow, Gate};
use lc_core::curve::{CurveRef, CurveValue, Node};
use lc_core::detector::Detector;
use lc_core::drift::{Companion, DriftFactor, TemperatureModel};
use lc_core::filter::{Ema, Median};
use lc_core::image::{Image, ImageBuf, MetalParams};
use lc_core::reader::{
    Input, LevelReader, LevelReading, MetalReader, MetalReading, ProximityReader, ProximityReading,
    Reader, Reading,
};
use lc_core::shift::{RestPoint, Shift, ShiftConverter};
use lc_core::temperature::{CentiCelsius, Divider, NtcBeta, NtcSteinhartHart};

/// (type, bytes) on this target.
pub const SIZES: [(&str, usize); 30] = [
    ("CountPair", size_of::<CountPair>()),
    ("Gate", size_of::<Gate>()),
    ("FaultWindow", size_of::<FaultWindow>()),
    ("AcceptedTicks", size_of::<AcceptedTicks>()),
    ("Shift", size_of::<Shift>()),
    ("RestPoint", size_of::<RestPoint>()),
    ("ShiftConverter", size_of::<ShiftConverter>()),
    ("TemperatureModel", size_of::<TemperatureModel>()),
    ("DriftFactor", size_of::<DriftFactor>()),
    ("Companion", size_of::<Companion>()),
    ("CentiCelsius", size_of::<CentiCelsius>()),
    ("Node", size_of::<Node>()),
    ("CurveRef", size_of::<CurveRef<'static>>()),
    ("CurveValue", size_of::<CurveValue>()),
    ("MetalParams", size_of::<MetalParams>()),
    ("Image", size_of::<Image<'static>>()),
    ("ImageBuf", size_of::<ImageBuf>()),
    ("Input", size_of::<Input>()),
    ("ProximityReader", size_of::<ProximityReader<'static>>()),
    ("LevelReader", size_of::<LevelReader<'static>>()),
    ("MetalReader", size_of::<MetalReader>()),
    ("Reader", size_of::<Reader<'static>>()),
    ("ProximityReading", size_of::<ProximityReading>()),
    ("LevelReading", size_of::<LevelReading>()),
    ("MetalReading", size_of::<MetalReading>()),
    ("Reading", size_of::<Reading>()),
    ("Median<i32, 3>", size_of::<Median<i32, 3>>()),
    ("Ema<i32>", size_of::<Ema<i32>>()),
    ("Detector<i32>", size_of::<Detector<i32>>()),
    ("NtcBeta", size_of::<NtcBeta>()),
];

/// Divider and Steinhart–Hart NTC (outside the table's 30 for brevity).
pub const NTC_SIZES: [(&str, usize); 2] = [
    ("Divider", size_of::<Divider>()),
    ("NtcSteinhartHart", size_of::<NtcSteinhartHart>()),
];

/// The sizes [`SIZES`] must have, bytes (Cortex-M0 and Cortex-M4F).
const EXPECTED: [usize; 30] = [
    8, 8, 16, 12, 8, 8, 32, 12, 4, 32, 4, 16, 28, 8, 20, 12, 4200, 32, 168, 248, 176, 256, 16, 32,
    24, 32, 32, 24, 16, 72,
];

/// The compile-time check: a layout change fails the build here.
const _: () = {
    let mut i = 0;
    while i < SIZES.len() {
        assert!(
            SIZES[i].1 == EXPECTED[i],
            "a firmware type's size changed: update sizes.rs and lc-core's Memory table"
        );
        i += 1;
    }
    assert!(NTC_SIZES[0].1 == 12 && NTC_SIZES[1].1 == 80);
};
