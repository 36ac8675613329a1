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
use lc_core::reader::{
    Electrodes, Input, LevelReader, MetalReader, ProbeOnly, ProximityReader, ReaderError,
    WithReference,
};
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

/// The level reader for one arrangement of electrodes
/// (`LevelReader::with_electrodes`) on each committed level image: the
/// arrangement the image has builds a reader that reads every input as
/// `LevelReader::new`'s, in place too; the other is refused with
/// `ReaderError::WrongElectrodes`.
#[test]
fn level_readers_for_one_arrangement() {
    fn reads_as_new<E: Electrodes>(path: &str, image: &Image<'_>, electrodes: E) {
        let mut any = LevelReader::new(image).expect("a level image");
        let mut fixed = LevelReader::with_electrodes(image, electrodes).expect(path);
        let mut slot = MaybeUninit::uninit();
        let placed = LevelReader::init_with_electrodes(&mut slot, image, electrodes).expect(path);
        for input in inputs() {
            let want = any.read(input);
            assert_eq!(fixed.read(input), want, "{path}: {input:?}");
            assert_eq!(placed.read(input), want, "{path}, in place: {input:?}");
        }
    }
    fn refused<E: Electrodes>(path: &str, image: &Image<'_>, electrodes: E, has: bool) {
        let want = Err(ReaderError::WrongElectrodes {
            image_has_reference: has,
        });
        let built = LevelReader::with_electrodes(image, electrodes).map(|_| ());
        assert_eq!(built, want, "{path}");
        let mut slot = MaybeUninit::uninit();
        let placed = LevelReader::init_with_electrodes(&mut slot, image, electrodes).map(|_| ());
        assert_eq!(placed, want, "{path}, in place");
    }
    let mut with_reference = 0;
    for (path, bytes) in IMAGES {
        let buf = ImageBuf::from_bytes(bytes).expect("the committed image fits");
        let image = buf.image().expect("the committed image is valid");
        if image.kind() != ReaderKind::Level {
            continue;
        }
        if image.companion_rest().is_some() {
            with_reference += 1;
            reads_as_new(path, &image, WithReference);
            refused(path, &image, ProbeOnly, true);
        } else {
            reads_as_new(path, &image, ProbeOnly);
            refused(path, &image, WithReference, false);
        }
    }
    // The unit firmware's level image has a reference electrode.
    assert!(with_reference >= 1);
}
