//! # lc-core: readout core for resonant LC sensors
//!
//! A sensor built around an LC tank oscillates at f = 1/(2π·√(L·C)); a
//! target changes L or C and so the frequency. Firmware counts oscillator
//! cycles against a reference clock. This crate turns those counts into a
//! trustworthy reading on a Cortex-M0 without an FPU: integer math on the
//! reading path, an `f64` twin of every fixed-point stage for verification,
//! no heap, no `unsafe`, and no reachable panic.
//!
//! The modules follow the data path of one reading:
//!
//! 1. [`counting`]: raw timer captures become a [`counting::CountPair`]
//!    (sensor cycles, reference ticks over one gate); a
//!    [`counting::FaultWindow`] rejects implausible pairs with a typed error.
//! 2. [`ratio`]: a count pair becomes frequency and period ratio (ticks per
//!    sensor cycle), each in fixed point with an `f64` twin.
//! 3. [`shift`]: the period ratio against the unit's rest point becomes the
//!    shift s = (p/p_rest)² − 1, the relative change of the L·C product. This
//!    is the per-reading hot path: no division when the gate is a configured
//!    number of sensor cycles, one division otherwise.
//! 4. [`temperature`] and [`drift`]: an NTC thermistor read to hundredths
//!    of a degree, and temperature taken out of the shift by a per-unit
//!    temperature model or a companion channel (ratiometric).
//! 5. [`curve`]: shift to a physical value through a monotone calibration
//!    table (linear or monotone cubic), clamped with a status outside it.
//! 6. [`filter`] and [`detector`]: median and exponential moving average in
//!    fixed point, and a hysteresis-and-debounce detector.
//! 7. [`reader`]: the stages composed per product (proximity, level, metal)
//!    into a typed reading with its status, built from a calibration
//!    [`image`] that stays in flash.
//!
//! 8. [`scanner`] (feature `scanner`): several channels behind a
//!    multiplexer (embedded-hal 1.0): select, settle, count, check,
//!    round-robin.
//!
//! Design-time and host-side code (feature `design`): `tank` and
//! `ringdown`, the LC tank laws in `f64` and quality factor from a
//! ring-down; `geometry`, tank volumes, probe capacitance and volume
//! tables; owned curves ([`curve::CurveRef`]'s builder) and the image
//! writer (`image::Calibration`).
//!
//! ## A firmware, start to end
//!
//! ```
//! use lc_core::counting::CountPair;
//! use lc_core::image::Image;
//! use lc_core::reader::{Input, ProximityReader, Status};
//!
//! // 1. The image `lc-host calibrate` wrote, in flash, 4-byte aligned.
//! static IMAGE: &[u8] =
//!     lc_core::include_image!("../../examples/firmware/data/demo-proximity.lcim");
//! // 2. Validate it once: magic, version, length, CRC, every field, every
//! //    curve segment's stored constants. Nothing is copied out of flash.
//! let image = Image::new(IMAGE).expect("a valid image");
//! // 3. The reader of its kind (a level or metal image is refused). It
//! //    holds run-time state and borrows its curve from the image.
//! let mut reader = ProximityReader::new(&image).expect("a proximity image");
//! // 4. Read: a count pair (and temperature, companion, ring count when
//! //    the unit has them) in, a gap with its status out.
//! let r = reader.read(&Input::counts(CountPair::new(16_384, 123_700)));
//! assert_eq!(r.status, Status::Ok);
//! assert!((1_000..=2_500).contains(&r.gap)); // micrometres
//! ```
//!
//! API in short: [`image::Image::new`]`(&[u8]) -> Image<'a>` validates;
//! [`reader::ProximityReader`]`<'a>`, [`reader::LevelReader`]`<'a>` and
//! [`reader::MetalReader`] are built from `&Image` (`new` checks the
//! kind) and return [`reader::ProximityReading`] (gap),
//! [`reader::LevelReading`] (level, volume, shift or probe ratio) and
//! [`reader::MetalReading`] (class, ring-count drop); [`reader::Reader`]
//! is any of them, its [`reader::Reading`] the matching reading. A level
//! firmware for one arrangement of electrodes builds
//! [`reader::LevelReader::with_electrodes`]`(&image, WithReference)` (or
//! `ProbeOnly`): the other arrangement's reading path is left out of its
//! flash, and an image of the other arrangement is refused.
//! [`image::ImageBuf`] copies an image from elsewhere into an aligned
//! buffer; [`include_image!`] embeds one.
//!
//! ## Cargo features
//!
//! | feature | default | holds |
//! |---|---|---|
//! | `proximity` | yes | [`reader::ProximityReader`] |
//! | `level` | yes | [`reader::LevelReader`] |
//! | `metal` | yes | [`reader::MetalReader`] |
//! | `companion` | yes | a companion coil beside a proximity or metal unit's sensor coil (ratiometric shift); without it `Image::new` refuses such an image, the ratio's start-up division is left out and each reader is 40 bytes smaller |
//! | `scanner` | yes | [`scanner`]: channel scanner and multiplexers |
//! | `ntc` | yes | NTC conversions in [`temperature`] (Beta, Steinhart–Hart) |
//! | `crc-nibble` | no | CRC-32 from a 64-byte table instead of 1 KiB (about twice the start-up instructions per image byte) |
//! | `design` | no | design-time `f64` physics, owned curves and volume tables, the image writer and format-1 reader (enabled by lc-host) |
//! | `link` | no | `link`: the live link's encoder (docs/link.md), into an `embedded-io` sink; 4 bytes of state |
//! | `defmt` | no | `defmt::Format` on public types |
//!
//! A firmware names only what it runs, e.g.
//! `lc-core = { version = "0.1", default-features = false, features = ["proximity"] }`.
//! Code that is not called costs no flash either way; the features keep
//! it out of the build and the API. A firmware for one kind of unit also
//! validates with that kind's constructor
//! ([`image::Image::new_proximity`], `new_level`, `new_metal`): the other
//! kinds' checks are then left out of its flash.
//!
//! ## Memory
//!
//! The image stays in flash; a reader holds its run-time state and a
//! borrowed view of its curves, whatever the node count. `size_of` on a
//! 32-bit target (Cortex-M0 and Cortex-M4F, the same), checked at compile
//! time by the firmware example (`examples/firmware/src/sizes.rs`; a host
//! build has 64-bit pointers and larger borrowing types; the readers with
//! the default features, 32 bytes less each without `companion`;
//! `LevelReader` the same for every [`reader::Electrodes`]):
//!
//! | type | bytes | | type | bytes |
//! |---|---:|---|---|---:|
//! | `ProximityReader` | 168 | | `Image` | 12 |
//! | `LevelReader` | 248 | | `ImageBuf` (image copied to RAM) | 4 200 |
//! | `MetalReader` | 176 | | `CurveRef` | 28 |
//! | `Reader` (all three kinds) | 256 | | `Input` | 32 |
//! | `ProximityReading` | 16 | | `Reading` | 32 |
//! | `LevelReading` | 32 | | `MetalReading` | 24 |
//! | `ShiftConverter` | 32 | | `Companion` | 32 |
//! | `FaultWindow` | 16 | | `AcceptedTicks` | 12 |
//! | `TemperatureModel` | 12 | | `DriftFactor` | 4 |
//! | `CountPair`, `Gate`, `Shift`, `RestPoint` | 8 each | | `CentiCelsius` | 4 |
//! | `Node` | 16 | | `CurveValue` | 8 |
//! | `MetalParams` | 20 | | `Median<i32, 3>` | 32 |
//! | `Ema<i32>` | 24 | | `Detector<i32>` | 16 |
//! | `NtcBeta` | 72 | | `NtcSteinhartHart` | 80 |
//! | `Divider` | 12 | | | |
//!
//! Start-up on a Cortex-M0 (`Image::new_proximity` and
//! `ProximityReader::new`, `run.sh cost`): about 20 200 instructions for a
//! 32-node cubic proximity image, 5 300 for the five-node demo image; stack
//! of the two calls, a few hundred bytes. The `Image` is a 12-byte view of
//! the bytes in flash; each reader builds its fault window, converters and
//! drift model from the image's fields (checked once, by validation).
//!
//! ## Numeric contract
//!
//! Every fixed-point stage documents its input domain, its output format
//! (binary fixed point, `Qm.n`), how it rounds, and its error bound against
//! its `f64` twin. The bar: inside the declared domain the error is at most
//! one tenth of the counter's own quantisation step at that reading, so the
//! arithmetic never limits resolution. Property tests in each module prove
//! the bound over the whole domain.
//!
//! ## Panic contract
//!
//! No public function panics, for any input. Arithmetic that could overflow
//! is either impossible by construction (documented per function) or
//! checked, and failures come back as small `Copy` error enums. The firmware
//! example links with `panic-never` to prove this for the firmware path.
//!
//! ## Example
//!
//! ```
//! use lc_core::counting::{CountPair, Gating};
//! use lc_core::shift::{RestPoint, ShiftConverter};
//!
//! // 16 MHz reference; the rest point was 10.0 ticks per sensor cycle.
//! let rest = RestPoint::from_counts(CountPair::new(4096, 40_960)).unwrap();
//! let conv = ShiftConverter::new(rest, Gating::Reciprocal, Some(4096)).unwrap();
//! // A target lowered L·C by about 1 %: the period ratio fell by about 0.5 %.
//! let reading = conv.convert(CountPair::new(4096, 40_755)).unwrap();
//! let s = reading.shift().to_f64();
//! assert!((s - ((40_755.0f64 / 40_960.0).powi(2) - 1.0)).abs() < 1e-12);
//! ```
#![cfg_attr(not(test), no_std)]
#![forbid(unsafe_code)]
#![deny(missing_docs)]
// A build with only some readers leaves some shared helpers unused.
#![cfg_attr(
    not(all(feature = "proximity", feature = "level", feature = "metal")),
    allow(dead_code)
)]

pub mod counting;
pub mod curve;
// The start-up check of the image's derived constants.
mod derived;
pub mod detector;
pub mod drift;
pub mod filter;
// Crate-private: the integer helpers the stages share (widening multiply,
// rounding shifts, reciprocals). Not all are used by every feature set.
#[allow(dead_code)]
mod fixed;
#[cfg(feature = "design")]
pub mod geometry;
pub mod image;
#[cfg(feature = "link")]
pub mod link;
pub mod ratio;
pub mod reader;
#[cfg(feature = "design")]
pub mod ringdown;
#[cfg(feature = "scanner")]
pub mod scanner;
pub mod shift;
#[cfg(feature = "design")]
pub mod tank;
pub mod temperature;
