//! Whole validation (issue 19, item 6): any image that validates builds its
//! reader, and any bytes either validate or give a typed error, never a
//! panic. Property tests over arbitrary bytes and over mutations of the
//! images `lc-host calibrate` makes (examples/unit-firmware/data, written by
//! `examples/unit-firmware/run.sh images`) and the firmware example's
//! images (examples/firmware/data), with the CRC-32 recomputed after the
//! mutation so that validation reaches the fields and their consistency.

use lc_core::counting::CountPair;
use lc_core::image::{Image, ImageBuf, ImageError, CRC32};
use lc_core::reader::{Input, Reader};
use lc_core::temperature::CentiCelsius;
use proptest::prelude::*;
use support::IMAGES;

mod support;

/// The stated length (bytes 6 and 7, little-endian; docs/image-format.md).
fn stated_len(bytes: &[u8]) -> usize {
    usize::from(u16::from_le_bytes([bytes[6], bytes[7]]))
}

/// Recomputes the trailing CRC-32 over the stated length.
fn fix_crc(bytes: &mut [u8]) {
    let len = stated_len(bytes).min(bytes.len());
    if len < 4 {
        return;
    }
    let crc = CRC32.checksum(&bytes[..len - 4]);
    bytes[len - 4..len].copy_from_slice(&crc.to_le_bytes());
}

/// Validates `bytes` (aligned, in an `ImageBuf`); a valid image must build
/// its reader, and the reader must read without panicking. Returns whether
/// the bytes validated.
fn check(bytes: &[u8]) -> Result<bool, TestCaseError> {
    let buf = match ImageBuf::from_bytes(bytes) {
        Ok(b) => b,
        Err(e) => {
            prop_assert_eq!(e, ImageError::BufferTooSmall);
            return Ok(false);
        }
    };
    let image = match buf.image() {
        Ok(i) => i,
        Err(e) => {
            // A typed error with a message.
            let message = e.to_string();
            prop_assert!(!message.is_empty());
            return Ok(false);
        }
    };
    let reader = Reader::new(&image);
    prop_assert!(
        reader.is_ok(),
        "validated image of kind {:?} builds no reader: {:?}",
        image.kind(),
        reader
    );
    let mut reader = reader.unwrap();
    let gate = image.gate().unwrap_or(16_384);
    let rest = image.rest().to_f64();
    for k in [0.5, 0.9, 1.0, 1.1, 2.0] {
        let ticks = (f64::from(gate) * rest * k)
            .round()
            .min(f64::from(u32::MAX)) as u32;
        let pair = CountPair::new(gate, ticks);
        let _ = reader.read(&Input {
            pair,
            companion: image.companion_rest().map(|_| pair),
            temperature: Some(CentiCelsius(2_500)),
            ring_count: Some(10),
        });
    }
    Ok(true)
}

#[test]
fn the_committed_images_validate_and_their_crc_is_where_the_tests_put_it() {
    for (path, bytes) in IMAGES {
        let mut copy = bytes.to_vec();
        fix_crc(&mut copy);
        assert_eq!(copy, bytes, "CRC position in {path}");
        let buf = ImageBuf::from_bytes(bytes).unwrap();
        let image = buf.image().unwrap();
        assert!(Reader::new(&image).is_ok(), "{path} builds its reader");
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(4_000))]

    /// Any bytes: a typed error or an image that builds its reader.
    #[test]
    fn any_bytes_validate_or_give_a_typed_error(bytes in prop::collection::vec(any::<u8>(), 0..1_400)) {
        check(&bytes)?;
        // Also unaligned, straight from a slice: never a panic.
        if bytes.len() > 1 {
            let _ = Image::new(&bytes[1..]);
        }
    }

    /// A committed image with a few bytes changed and its CRC made right
    /// again: whatever validates builds its reader.
    #[test]
    fn mutated_images_that_validate_build_their_reader(
        which in 0usize..IMAGES.len(),
        edits in prop::collection::vec((any::<prop::sample::Index>(), any::<u8>()), 1..4),
        cut in prop::option::of(any::<prop::sample::Index>()),
    ) {
        let mut bytes = IMAGES[which].1.to_vec();
        let body = stated_len(&bytes).saturating_sub(4).max(8);
        for (at, value) in &edits {
            // Never the framing's first eight bytes (magic, version,
            // length): those are checked first and would hide the rest.
            let i = 8 + at.index(body - 8);
            bytes[i] = *value;
        }
        fix_crc(&mut bytes);
        if let Some(c) = cut {
            bytes.truncate(c.index(bytes.len() + 1));
        }
        check(&bytes)?;
    }

    /// The same with one field-sized edit: a 32-bit word anywhere.
    #[test]
    fn mutated_words_that_validate_build_their_reader(which in 0usize..IMAGES.len(), at: prop::sample::Index, word: u32) {
        let mut bytes = IMAGES[which].1.to_vec();
        let body = stated_len(&bytes).saturating_sub(4);
        let i = 8 + at.index(body.saturating_sub(12).max(1));
        bytes[i..i + 4].copy_from_slice(&word.to_le_bytes());
        fix_crc(&mut bytes);
        check(&bytes)?;
    }
}
