//! Calibration images in the forms flash programmers, bootloaders and
//! firmware builds take:
//!
//! - [`padded`]: the raw image followed by erased-flash bytes up to a
//!   whole number of flash pages;
//! - [`intel_hex`]: the padded bytes as Intel HEX (I32HEX: data records of
//!   16 bytes, an extended linear address record wherever the upper 16
//!   bits of the address change, an end-of-file record) at a start
//!   address, written with the `ihex` crate;
//! - [`c_header`]: the padded bytes as a `static const uint8_t` array in a
//!   C header, with the image's own length beside it.
//!
//! Padding after the image is what the flash holds anyway: the firmware's
//! parser reads the image's length field and ignores what follows
//! (docs/image-format.md, "Flash pages").
//!
//! ```
//! use lc_host::export::{intel_hex, padded, FlashLayout};
//!
//! let image = [0x4C, 0x43, 0x49, 0x4D, 1, 0];
//! let layout = FlashLayout { address: 0x0800_F800, page_size: 8, erased: 0xFF };
//! assert_eq!(padded(&image, &layout).unwrap(), [0x4C, 0x43, 0x49, 0x4D, 1, 0, 0xFF, 0xFF]);
//! let hex = intel_hex(&image, &layout).unwrap();
//! assert!(hex.starts_with(":020000040800F2\n"));
//! assert!(hex.ends_with(":00000001FF\n"));
//! ```

use std::fmt::Write as _;

/// Where and how an image goes into flash.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct FlashLayout {
    /// Address of the image's first byte.
    pub address: u32,
    /// Flash page size in bytes: the padded length is a multiple of it
    /// (1: no padding).
    pub page_size: u32,
    /// The value of an erased flash byte (0xFF on most NOR flash).
    pub erased: u8,
}

impl Default for FlashLayout {
    fn default() -> Self {
        FlashLayout {
            address: 0,
            page_size: 1,
            erased: 0xFF,
        }
    }
}

/// Why an image could not be exported.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
pub enum ExportError {
    /// The page size is zero.
    #[error("page size 0: give the flash page size in bytes (e.g. --page-size 2048), or 1 for no padding")]
    ZeroPage,
    /// The padded image would run past the end of the 32-bit address space.
    #[error("{len} bytes at 0x{address:08X} run past 0xFFFFFFFF: give a lower --address")]
    AddressOverflow {
        /// Start address.
        address: u32,
        /// Padded length.
        len: u64,
    },
    /// The Intel HEX writer refused a record.
    #[error("Intel HEX: {0}")]
    Hex(String),
    /// A C identifier was asked for that is not one.
    #[error("`{0}` is not a C identifier: use letters, digits and `_`, not starting with a digit")]
    Symbol(String),
}

/// The image followed by `layout.erased` bytes up to a multiple of
/// `layout.page_size`.
pub fn padded(image: &[u8], layout: &FlashLayout) -> Result<Vec<u8>, ExportError> {
    if layout.page_size == 0 {
        return Err(ExportError::ZeroPage);
    }
    let page = u64::from(layout.page_size);
    let len = u64::try_from(image.len()).unwrap_or(u64::MAX);
    let total = len.div_ceil(page).max(1) * page;
    if u64::from(layout.address) + total > 1 << 32 {
        return Err(ExportError::AddressOverflow {
            address: layout.address,
            len: total,
        });
    }
    let total = usize::try_from(total).map_err(|_| ExportError::AddressOverflow {
        address: layout.address,
        len: total,
    })?;
    let mut out = image.to_vec();
    out.resize(total, layout.erased);
    Ok(out)
}

/// Bytes per data record.
const RECORD: usize = 16;

/// The padded image as Intel HEX at `layout.address`.
pub fn intel_hex(image: &[u8], layout: &FlashLayout) -> Result<String, ExportError> {
    let bytes = padded(image, layout)?;
    let mut records = Vec::new();
    let mut upper = None;
    let mut at = 0usize;
    while at < bytes.len() {
        // In range: `padded` checked address + length ≤ 2^32.
        let address = u64::from(layout.address) + at as u64;
        let high = (address >> 16) as u16;
        let low = (address & 0xFFFF) as u16;
        if upper != Some(high) {
            records.push(ihex::Record::ExtendedLinearAddress(high));
            upper = Some(high);
        }
        // A record never crosses a 64 KiB boundary.
        let to_boundary = 0x1_0000 - usize::from(low);
        let n = RECORD.min(to_boundary).min(bytes.len() - at);
        records.push(ihex::Record::Data {
            offset: low,
            value: bytes[at..at + n].to_vec(),
        });
        at += n;
    }
    records.push(ihex::Record::EndOfFile);
    ihex::create_object_file_representation(&records).map_err(|e| ExportError::Hex(e.to_string()))
}

/// A C identifier made from a serial: `lc_cal_` and the serial's letters
/// and digits in lower case, anything else `_`.
pub fn symbol_for(serial: &str) -> String {
    let mut s = String::from("lc_cal_");
    s.extend(serial.chars().map(|c| {
        if c.is_ascii_alphanumeric() {
            c.to_ascii_lowercase()
        } else {
            '_'
        }
    }));
    s
}

fn is_c_identifier(s: &str) -> bool {
    let mut chars = s.chars();
    chars
        .next()
        .is_some_and(|c| c.is_ascii_alphabetic() || c == '_')
        && chars.all(|c| c.is_ascii_alphanumeric() || c == '_')
}

/// A C header defining `symbol` as the padded image (`static const
/// uint8_t symbol[]`), `SYMBOL_LEN` as the image's own length and
/// `SYMBOL_ADDRESS` as its flash address. `about` goes into the opening
/// comment (e.g. the unit's serial and attempt).
pub fn c_header(
    image: &[u8],
    layout: &FlashLayout,
    symbol: &str,
    about: &str,
) -> Result<String, ExportError> {
    if !is_c_identifier(symbol) {
        return Err(ExportError::Symbol(symbol.to_string()));
    }
    let bytes = padded(image, layout)?;
    let upper = symbol.to_ascii_uppercase();
    let about: String = about
        .chars()
        .map(|c| if c.is_control() { ' ' } else { c })
        .collect::<String>()
        .replace("*/", "* /");
    let mut h = String::with_capacity(bytes.len() * 6 + 600);
    let _ = writeln!(
        h,
        "/* Calibration image: {about}.\n * Written by lc-host {}; layout in docs/image-format.md.\n * {} bytes of image, padded with 0x{:02X} to {} bytes (flash pages of {} bytes). */",
        env!("CARGO_PKG_VERSION"),
        image.len(),
        layout.erased,
        bytes.len(),
        layout.page_size
    );
    let _ = writeln!(
        h,
        "#ifndef {upper}_H\n#define {upper}_H\n\n#include <stdint.h>\n"
    );
    let _ = writeln!(h, "#define {upper}_LEN {}u", image.len());
    let _ = writeln!(h, "#define {upper}_ADDRESS 0x{:08X}u\n", layout.address);
    let _ = writeln!(h, "static const uint8_t {symbol}[{}] = {{", bytes.len());
    for chunk in bytes.chunks(12) {
        h.push_str("   ");
        for b in chunk {
            let _ = write!(h, " 0x{b:02X},");
        }
        h.push('\n');
    }
    let _ = writeln!(h, "}};\n\n#endif /* {upper}_H */");
    Ok(h)
}

/// Parses a number given in decimal or as `0x…` hexadecimal (for
/// addresses, page sizes and byte values on the command line).
pub fn parse_number(text: &str) -> Result<u64, String> {
    let t = text.trim().replace('_', "");
    let parsed = match t.strip_prefix("0x").or_else(|| t.strip_prefix("0X")) {
        Some(hex) => u64::from_str_radix(hex, 16),
        None => t.parse(),
    };
    parsed.map_err(|_| format!("`{text}` is not a number (decimal, or hexadecimal as 0x…)"))
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    #[test]
    fn records_break_at_64_kib() {
        let layout = FlashLayout {
            address: 0x0000_FFF8,
            page_size: 32,
            erased: 0xFF,
        };
        let hex = intel_hex(&[1; 20], &layout).unwrap();
        let lines: Vec<&str> = hex.lines().collect();
        assert_eq!(lines[0], ":020000040000FA");
        assert!(lines[1].starts_with(":08FFF800"));
        assert_eq!(lines[2], ":020000040001F9");
        assert!(lines.contains(&":00000001FF"));
    }

    #[test]
    fn bad_layouts_are_refused() {
        let zero = FlashLayout {
            page_size: 0,
            ..FlashLayout::default()
        };
        assert_eq!(padded(&[1], &zero), Err(ExportError::ZeroPage));
        let high = FlashLayout {
            address: 0xFFFF_FFF0,
            page_size: 2048,
            erased: 0xFF,
        };
        assert!(matches!(
            intel_hex(&[1], &high),
            Err(ExportError::AddressOverflow { .. })
        ));
        assert!(c_header(&[1], &FlashLayout::default(), "9x", "u").is_err());
        assert_eq!(parse_number("0x0800_F800"), Ok(0x0800_F800));
        assert_eq!(parse_number("2048"), Ok(2048));
        assert!(parse_number("12k").is_err());
        assert_eq!(symbol_for("DEMO-01-0007"), "lc_cal_demo_01_0007");
    }

    proptest! {
        #[test]
        fn numbers_parse_in_both_bases(v in any::<u64>()) {
            prop_assert_eq!(parse_number(&format!("{v}")), Ok(v));
            prop_assert_eq!(parse_number(&format!("0x{v:X}")), Ok(v));
            prop_assert_eq!(parse_number(&format!("0x{v:x}")), Ok(v));
        }

        #[test]
        fn any_text_parses_or_is_refused(t in any::<String>()) {
            let _ = parse_number(&t);
        }

        /// Parsing the written HEX gives the padded bytes at the address,
        /// for any image, address and page size.
        #[test]
        fn hex_round_trips(
            image in prop::collection::vec(any::<u8>(), 0..600),
            address in any::<u32>(),
            page in 1u32..300,
            erased in any::<u8>(),
        ) {
            let layout = FlashLayout { address, page_size: page, erased };
            let Ok(want) = padded(&image, &layout) else {
                prop_assert!(u64::from(address) + 600 > 1 << 32);
                return Ok(());
            };
            prop_assert_eq!(want.len() % page as usize, 0);
            prop_assert_eq!(&want[..image.len()], &image[..]);
            prop_assert!(want[image.len()..].iter().all(|b| *b == erased));
            let hex = intel_hex(&image, &layout).unwrap();
            let mut upper = 0u64;
            let mut got = Vec::new();
            let mut start = None;
            for rec in ihex::Reader::new(&hex) {
                match rec.unwrap() {
                    ihex::Record::ExtendedLinearAddress(h) => upper = u64::from(h) << 16,
                    ihex::Record::Data { offset, value } => {
                        let a = upper + u64::from(offset);
                        let s = *start.get_or_insert(a);
                        prop_assert_eq!(a, s + got.len() as u64);
                        got.extend(value);
                    }
                    ihex::Record::EndOfFile => {}
                    other => prop_assert!(false, "unexpected {:?}", other),
                }
            }
            prop_assert_eq!(start, Some(u64::from(address)));
            prop_assert_eq!(got, want);
        }
    }
}
