//! The readers' in-place constructors (`ProximityReader::init`,
//! `LevelReader::init`, `MetalReader::init`: what the C API builds its
//! readers with): each writes into the caller's slot the reader that
//! `new` returns, field for field, and that reader reads what `new`'s
//! reads; an image of another kind is `ReaderError::WrongKind` with that
//! kind, as from `new`. Images: the unit firmwares' (`lc-host calibrate`,
//! examples/unit-firmware/data) and the firmware example's
//! (examples/firmware/data), inputs: the unit firmwares' scripts.

use core::mem::MaybeUninit;

#[path = "../../examples/unit-firmware/src/script.rs"]
mod script;

use lc_core::image::{ImageBuf, ReaderKind};
use lc_core::reader::{Input, LevelReader, MetalReader, ProximityReader, ReaderError};

const IMAGES: [&[u8]; 8] = [
    include_bytes!("../../examples/unit-firmware/data/proximity.lcim"),
    include_bytes!("../../examples/unit-firmware/data/level.lcim"),
    include_bytes!("../../examples/unit-firmware/data/metal.lcim"),
    include_bytes!("../../examples/firmware/data/demo-proximity.lcim"),
    include_bytes!("../../examples/firmware/data/demo-proximity-32.lcim"),
    include_bytes!("../../examples/firmware/data/demo-proximity-tc.lcim"),
    include_bytes!("../../examples/firmware/data/demo-level.lcim"),
    include_bytes!("../../examples/firmware/data/demo-metal.lcim"),
];

/// Every script's inputs, whatever the image's kind (the others' are
/// readings with faults or clamped values: the same from both readers).
fn inputs() -> impl Iterator<Item = &'static Input> {
    script::PROXIMITY
        .iter()
        .chain(&script::LEVEL)
        .chain(&script::METAL)
}

#[test]
fn init_builds_what_new_returns() {
    let mut kinds = [0usize; 3];
    for bytes in IMAGES {
        let buf = ImageBuf::from_bytes(bytes).expect("the committed image fits");
        let image = buf.image().expect("the committed image is valid");
        let kind = image.kind();

        let mut slot = MaybeUninit::uninit();
        match (
            ProximityReader::new(&image),
            ProximityReader::init(&mut slot, &image),
        ) {
            (Ok(mut a), Ok(b)) => {
                assert_eq!(kind, ReaderKind::Proximity);
                assert_eq!(&a, b);
                for input in inputs() {
                    assert_eq!(a.read(input), b.read(input));
                }
                kinds[0] += 1;
            }
            (Err(a), Err(b)) => {
                assert_eq!(a, b);
                assert_eq!(b, ReaderError::WrongKind(kind));
            }
            (a, b) => panic!("new {a:?} and init {b:?} disagree on a {kind:?} image"),
        }

        let mut slot = MaybeUninit::uninit();
        match (
            LevelReader::new(&image),
            LevelReader::init(&mut slot, &image),
        ) {
            (Ok(mut a), Ok(b)) => {
                assert_eq!(kind, ReaderKind::Level);
                assert_eq!(&a, b);
                for input in inputs() {
                    assert_eq!(a.read(input), b.read(input));
                }
                kinds[1] += 1;
            }
            (Err(a), Err(b)) => {
                assert_eq!(a, b);
                assert_eq!(b, ReaderError::WrongKind(kind));
            }
            (a, b) => panic!("new {a:?} and init {b:?} disagree on a {kind:?} image"),
        }

        let mut slot = MaybeUninit::uninit();
        match (
            MetalReader::new(&image),
            MetalReader::init(&mut slot, &image),
        ) {
            (Ok(mut a), Ok(b)) => {
                assert_eq!(kind, ReaderKind::Metal);
                assert_eq!(&a, b);
                for input in inputs() {
                    assert_eq!(a.read(input), b.read(input));
                }
                kinds[2] += 1;
            }
            (Err(a), Err(b)) => {
                assert_eq!(a, b);
                assert_eq!(b, ReaderError::WrongKind(kind));
            }
            (a, b) => panic!("new {a:?} and init {b:?} disagree on a {kind:?} image"),
        }
    }
    // Each kind built from at least two images (and refused by the others).
    assert!(kinds.iter().all(|&n| n >= 2), "images per kind: {kinds:?}");
}
