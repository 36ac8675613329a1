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
mod support;

use core::fmt::Debug;

use lc_core::image::{Image, ImageBuf, ReaderKind};
use lc_core::reader::{Input, LevelReader, MetalReader, ProximityReader, ReaderError};
use support::IMAGES;

/// Every script's inputs, whatever the image's kind (the others' are
/// readings with faults or clamped values: the same from both readers).
fn inputs() -> impl Iterator<Item = &'static Input> {
    script::PROXIMITY
        .iter()
        .chain(&script::LEVEL)
        .chain(&script::METAL)
}

/// `new` and `init` of one reader on the image at `path`: the same reader
/// (and the same readings of every input) where the image is of `kind`,
/// the same `WrongKind` error where it is not. True where it built.
fn init_matches_new<'a, R: PartialEq + Debug, O: PartialEq + Debug>(
    path: &str,
    image: &Image<'a>,
    kind: ReaderKind,
    new: fn(&Image<'a>) -> Result<R, ReaderError>,
    init: for<'s> fn(&'s mut MaybeUninit<R>, &Image<'a>) -> Result<&'s mut R, ReaderError>,
    read: fn(&mut R, &Input) -> O,
) -> bool {
    let reader = core::any::type_name::<R>()
        .rsplit("::")
        .next()
        .unwrap_or("");
    let case = format!("{reader}, image {path}");
    let mut slot = MaybeUninit::uninit();
    match (new(image), init(&mut slot, image)) {
        (Ok(mut a), Ok(b)) => {
            assert_eq!(image.kind(), kind, "{case}: built from another kind");
            assert_eq!(&a, b, "{case}: init's reader");
            for input in inputs() {
                assert_eq!(read(&mut a, input), read(b, input), "{case}: {input:?}");
            }
            true
        }
        (Err(a), Err(b)) => {
            assert_eq!(a, b, "{case}: init's error");
            assert_eq!(b, ReaderError::WrongKind(image.kind()), "{case}: error");
            false
        }
        (a, b) => panic!("{case}: new {a:?} and init {b:?} disagree"),
    }
}

#[test]
fn init_builds_what_new_returns() {
    let mut kinds = [0usize; 3];
    for (path, bytes) in IMAGES {
        let buf = ImageBuf::from_bytes(bytes).expect("the committed image fits");
        let image = buf.image().expect("the committed image is valid");
        let built = [
            init_matches_new(
                path,
                &image,
                ReaderKind::Proximity,
                ProximityReader::new,
                ProximityReader::init,
                ProximityReader::read,
            ),
            init_matches_new(
                path,
                &image,
                ReaderKind::Level,
                LevelReader::new,
                LevelReader::init,
                LevelReader::read,
            ),
            init_matches_new(
                path,
                &image,
                ReaderKind::Metal,
                MetalReader::new,
                MetalReader::init,
                MetalReader::read,
            ),
        ];
        for (n, built) in kinds.iter_mut().zip(built) {
            *n += usize::from(built);
        }
    }
    // Each kind built from at least two images (and refused by the others).
    assert!(kinds.iter().all(|&n| n >= 2), "images per kind: {kinds:?}");
}
