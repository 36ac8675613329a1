//! CRC-32/ISO-HDLC (the CRC of zlib and IEEE 802.3: reflected polynomial
//! 0xEDB88320, initial value and final XOR 0xFFFFFFFF; check value
//! 0xCBF43926 for "123456789" in Cook's catalogue of parametrised CRC
//! algorithms).
//!
//! Two tables, chosen by the `crc-nibble` cargo feature, with the same
//! results: by default one byte per step from a 256-entry table (1 KiB of
//! flash, about 9 Cortex-M0 instructions per byte); with `crc-nibble`, four
//! bits per step from a 16-entry table (64 bytes, about twice the
//! instructions). Both tables are computed at compile time.

/// The reflected generator polynomial.
const POLY: u32 = 0xEDB8_8320;

/// The CRC register after shifting `v` through `bits` zero bits.
const fn shifted(mut v: u32, bits: u32) -> u32 {
    let mut i = 0;
    while i < bits {
        v = if v & 1 != 0 { (v >> 1) ^ POLY } else { v >> 1 };
        i += 1;
    }
    v
}

/// The table for `N` entries of `bits` bits each.
const fn table<const N: usize>(bits: u32) -> [u32; N] {
    let mut t = [0u32; N];
    let mut i = 0;
    while i < N {
        // i < N ≤ 256: the cast is exact.
        t[i] = shifted(i as u32, bits);
        i += 1;
    }
    t
}

#[cfg(not(feature = "crc-nibble"))]
static BYTE_TABLE: [u32; 256] = table::<256>(8);

#[cfg(feature = "crc-nibble")]
static NIBBLE_TABLE: [u32; 16] = table::<16>(4);

/// One byte into the register (without the initial and final inversion).
#[inline(always)]
fn step(crc: u32, byte: u8) -> u32 {
    #[cfg(not(feature = "crc-nibble"))]
    {
        // The index is masked to 8 bits: always inside the 256 entries.
        let i = ((crc ^ u32::from(byte)) & 0xFF) as usize;
        BYTE_TABLE.get(i).copied().unwrap_or(0) ^ (crc >> 8)
    }
    #[cfg(feature = "crc-nibble")]
    {
        let nib = |crc: u32, n: u32| {
            // Masked to 4 bits: always inside the 16 entries.
            let i = ((crc ^ n) & 0xF) as usize;
            NIBBLE_TABLE.get(i).copied().unwrap_or(0) ^ (crc >> 4)
        };
        let b = u32::from(byte);
        nib(nib(crc, b), b >> 4)
    }
}

/// The CRC-32/ISO-HDLC of a byte string, with the catalogue's parameters
/// (the [`CRC32`] value holds the same function for call sites that name
/// the algorithm).
pub fn crc32(bytes: &[u8]) -> u32 {
    !bytes.iter().fold(!0u32, |crc, &b| step(crc, b))
}

/// [`crc32`] of the bytes of little-endian words (an image's words): the
/// same value, four bytes per step of the loop.
pub(crate) fn crc32_words(words: &[u32]) -> u32 {
    !words.iter().fold(!0u32, |crc, &w| {
        // The word's bytes in memory order are its little-endian bytes.
        let mut c = crc ^ u32::from_le(w);
        #[cfg(not(feature = "crc-nibble"))]
        for _ in 0..4 {
            // Masked to 8 bits: always inside the 256 entries.
            c = BYTE_TABLE.get((c & 0xFF) as usize).copied().unwrap_or(0) ^ (c >> 8);
        }
        #[cfg(feature = "crc-nibble")]
        for _ in 0..8 {
            // Masked to 4 bits: always inside the 16 entries.
            c = NIBBLE_TABLE.get((c & 0xF) as usize).copied().unwrap_or(0) ^ (c >> 4);
        }
        c
    })
}

/// The CRC-32/ISO-HDLC as a value: `CRC32.checksum(bytes)` is
/// [`crc32`]`(bytes)`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
pub struct Crc32;

/// The image's CRC algorithm.
pub const CRC32: Crc32 = Crc32;

impl Crc32 {
    /// The CRC of `bytes`.
    #[inline]
    pub fn checksum(&self, bytes: &[u8]) -> u32 {
        crc32(bytes)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The byte and nibble tables agree with the bitwise definition.
    #[test]
    fn tables_agree_with_the_bitwise_crc() {
        let bitwise = |data: &[u8]| {
            let mut crc = !0u32;
            for &b in data {
                crc = shifted(crc ^ u32::from(b), 8);
            }
            !crc
        };
        let data: Vec<u8> = (0..1000u32).map(|i| (i * 7919 % 251) as u8).collect();
        for n in [0, 1, 9, 100, 1000] {
            assert_eq!(crc32(&data[..n]), bitwise(&data[..n]));
        }
        // By words: the same as by bytes.
        for n in [0usize, 4, 100, 1000] {
            let words: Vec<u32> = data[..n]
                .chunks_exact(4)
                .map(|c| u32::from_le_bytes(c.try_into().unwrap()))
                .collect();
            assert_eq!(crc32_words(&words), bitwise(&data[..n]));
        }
        // Both tables, whichever the build uses.
        let (bytes, nibbles) = (table::<256>(8), table::<16>(4));
        let by_bytes = |data: &[u8]| {
            !data.iter().fold(!0u32, |c, &b| {
                bytes[((c ^ u32::from(b)) & 0xFF) as usize] ^ (c >> 8)
            })
        };
        let nib = |c: u32, n: u32| nibbles[((c ^ n) & 0xF) as usize] ^ (c >> 4);
        let by_nibbles = |data: &[u8]| {
            !data
                .iter()
                .fold(!0u32, |c, &b| nib(nib(c, u32::from(b)), u32::from(b) >> 4))
        };
        for n in [0, 1, 9, 100, 1000] {
            assert_eq!(by_bytes(&data[..n]), bitwise(&data[..n]));
            assert_eq!(by_nibbles(&data[..n]), bitwise(&data[..n]));
        }
    }
}
