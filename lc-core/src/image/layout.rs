//! The image layout, written once: every field's place, size, type and
//! rule. The parser ([`Image::new`](super::Image::new)), the encoder, the
//! tests and the table in `docs/image-format.md` (checked against
//! [`HEADER`] and [`SEGMENT`] by a test) all read it from here.
//!
//! Every field lies at a multiple of its own alignment up to 4 bytes, and
//! every table row is a whole number of 32-bit words, so the firmware
//! reads constants from flash with word loads.

use super::Field;

/// A field's place in the image: `len` bytes from byte `at`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Span {
    /// Offset of the first byte.
    pub at: usize,
    /// Length in bytes.
    pub len: usize,
}

impl Span {
    const fn new(at: usize, len: usize) -> Self {
        Self { at, len }
    }

    /// One past the last byte.
    pub const fn end(&self) -> usize {
        self.at + self.len
    }
}

/// One row of the layout: the field's name in the docs, the [`Field`] an
/// error names, its place, its type and its rule.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Row {
    /// Name in `docs/image-format.md`.
    pub name: &'static str,
    /// The field an [`ImageError`](super::ImageError) names.
    pub field: Field,
    /// Where it lies.
    pub span: Span,
    /// Its type, as the docs write it.
    pub ty: &'static str,
}

/// "LCIM".
pub const MAGIC: Span = Span::new(0, 4);
/// Format version, `u16`.
pub const VERSION: Span = Span::new(4, 2);
/// Image length in bytes, CRC included, `u16`.
pub const LENGTH: Span = Span::new(6, 2);
/// Reader kind, `u8`.
pub const KIND: Span = Span::new(8, 1);
/// Flags, `u8`.
pub const FLAGS: Span = Span::new(9, 1);
/// Curve node count, `u8`.
pub const CURVE_NODES: Span = Span::new(10, 1);
/// Volume table node count, `u8`.
pub const VOLUME_NODES: Span = Span::new(11, 1);
/// Unit serial, 16 bytes of ASCII, NUL padded.
pub const SERIAL: Span = Span::new(12, 16);
/// Reference clock, Hz, `u32`.
pub const REFERENCE_HZ: Span = Span::new(28, 4);
/// Reciprocal gate, sensor cycles, `u32` (0: none).
pub const GATE_CYCLES: Span = Span::new(32, 4);
/// Fault window: lowest plausible sensor frequency, Hz, `u32`.
pub const WINDOW_MIN_HZ: Span = Span::new(36, 4);
/// Fault window: highest plausible sensor frequency, Hz, `u32`.
pub const WINDOW_MAX_HZ: Span = Span::new(40, 4);
/// Fault window: fewest sensor cycles per gate, `u32`.
pub const WINDOW_MIN_CYCLES: Span = Span::new(44, 4);
/// Rest point, period ratio Q20.44, `u64`.
pub const REST: Span = Span::new(48, 8);
/// Companion rest point, Q20.44, `u64` (0 without a companion).
pub const COMPANION_REST: Span = Span::new(56, 8);
/// Drift model reference temperature, 0.01 °C, `i32`.
pub const DRIFT_REFERENCE: Span = Span::new(64, 4);
/// Drift model first-order coefficient, raw, `i32`.
pub const DRIFT_B1: Span = Span::new(68, 4);
/// Drift model second-order coefficient, raw, `i32`.
pub const DRIFT_B2: Span = Span::new(72, 4);
/// Output unit code (`u8`) and decimal exponent (`i8`).
pub const OUTPUT: Span = Span::new(76, 2);
/// Volume unit code (`u8`) and decimal exponent (`i8`).
pub const VOLUME_OUTPUT: Span = Span::new(78, 2);
/// Metal: enter threshold, ppb of shift, `u32`.
pub const METAL_ENTER_PPB: Span = Span::new(80, 4);
/// Metal: leave threshold, ppb of shift, `u32`.
pub const METAL_LEAVE_PPB: Span = Span::new(84, 4);
/// Metal: readings to enter, `u16`.
pub const METAL_ENTER_SAMPLES: Span = Span::new(88, 2);
/// Metal: readings to leave, `u16`.
pub const METAL_LEAVE_SAMPLES: Span = Span::new(90, 2);
/// Metal: baseline EMA weight exponent, `u8`.
pub const METAL_BASELINE_K: Span = Span::new(92, 1);
/// Reserved, zero.
pub const RESERVED_93: Span = Span::new(93, 1);
/// Metal: ring-count drop that confirms a lossy target, `u16`.
pub const METAL_RING_DROP: Span = Span::new(94, 2);
/// Metal: readings present before the baseline is re-learned, `u32`.
pub const METAL_RELEARN: Span = Span::new(96, 4);
/// The exponent e of [`REST_RECIPROCAL`]: 1/p_rest ≈ m · 2^-e (format 3).
pub const REST_EXPONENT: Span = Span::new(100, 1);
/// The exponent of [`GATE_RECIPROCAL`] (0 without a gate).
pub const GATE_EXPONENT: Span = Span::new(101, 1);
/// The exponent of [`COMPANION_RECIPROCAL`] (0 unless level with a
/// reference electrode).
pub const COMPANION_EXPONENT: Span = Span::new(102, 1);
/// The exponent of [`COMPANION_GATE_RECIPROCAL`] (0 unless level with a
/// reference electrode and a gate).
pub const COMPANION_GATE_EXPONENT: Span = Span::new(103, 1);
/// Calibration time, UTC, Unix seconds, `i64` (since format 2).
pub const CALIBRATED_AT: Span = Span::new(104, 8);
/// Plan identity: the first 8 bytes of the SHA-256 of the calibration
/// plan's text (since format 2).
pub const PLAN_ID: Span = Span::new(112, 8);

/// The shift converter's reciprocal of the rest point, 32-bit mantissa
/// with its top bit set (computed on the host, checked at start-up; its
/// exponent is [`REST_EXPONENT`]).
pub const REST_RECIPROCAL: Span = Span::new(120, 4);
/// The shift converter's reciprocal of rest point times gate, 32-bit
/// mantissa (0 without a gate).
pub const GATE_RECIPROCAL: Span = Span::new(124, 4);
/// Level with a reference electrode: its converter's reciprocal of its
/// rest point (0 otherwise).
pub const COMPANION_RECIPROCAL: Span = Span::new(128, 4);
/// Level with a reference electrode: its reciprocal of rest point times
/// gate (0 otherwise).
pub const COMPANION_GATE_RECIPROCAL: Span = Span::new(132, 4);

/// Bytes before the tables (formats 2 and 3: format 2 has bytes 100 to
/// 103 reserved, zero, where format 3 stores the reciprocals' exponents).
pub const HEADER_LEN: usize = 136;
/// Bytes before the tables in format 1 (no time, no plan identity).
pub const HEADER_LEN_V1: usize = 104;

/// The header, in byte order.
pub const HEADER: [Row; 38] = [
    row("magic", Field::Magic, MAGIC, "[u8; 4]"),
    row("version", Field::Version, VERSION, "u16"),
    row("length", Field::Length, LENGTH, "u16"),
    row("kind", Field::ReaderKind, KIND, "u8"),
    row("flags", Field::Flags, FLAGS, "u8"),
    row("curve_nodes", Field::CurveNodes, CURVE_NODES, "u8"),
    row("volume_nodes", Field::VolumeNodes, VOLUME_NODES, "u8"),
    row("serial", Field::Serial, SERIAL, "[u8; 16]"),
    row("reference_hz", Field::ReferenceHz, REFERENCE_HZ, "u32"),
    row("gate_cycles", Field::GateCycles, GATE_CYCLES, "u32"),
    row("window_min_hz", Field::Window, WINDOW_MIN_HZ, "u32"),
    row("window_max_hz", Field::Window, WINDOW_MAX_HZ, "u32"),
    row("window_min_cycles", Field::Window, WINDOW_MIN_CYCLES, "u32"),
    row("rest_q44", Field::RestPoint, REST, "u64"),
    row(
        "companion_rest_q44",
        Field::CompanionRest,
        COMPANION_REST,
        "u64",
    ),
    row("drift_reference", Field::Drift, DRIFT_REFERENCE, "i32"),
    row("drift_b1", Field::Drift, DRIFT_B1, "i32"),
    row("drift_b2", Field::Drift, DRIFT_B2, "i32"),
    row("output", Field::Output, OUTPUT, "u8, i8"),
    row(
        "volume_output",
        Field::VolumeOutput,
        VOLUME_OUTPUT,
        "u8, i8",
    ),
    row("metal_enter_ppb", Field::Metal, METAL_ENTER_PPB, "u32"),
    row("metal_leave_ppb", Field::Metal, METAL_LEAVE_PPB, "u32"),
    row(
        "metal_enter_samples",
        Field::Metal,
        METAL_ENTER_SAMPLES,
        "u16",
    ),
    row(
        "metal_leave_samples",
        Field::Metal,
        METAL_LEAVE_SAMPLES,
        "u16",
    ),
    row("metal_baseline_k", Field::Metal, METAL_BASELINE_K, "u8"),
    row("reserved", Field::Reserved, RESERVED_93, "u8"),
    row("metal_ring_drop", Field::Metal, METAL_RING_DROP, "u16"),
    row("metal_relearn", Field::Metal, METAL_RELEARN, "u32"),
    row("rest_exponent", Field::GateCycles, REST_EXPONENT, "u8"),
    row("gate_exponent", Field::GateCycles, GATE_EXPONENT, "u8"),
    row(
        "companion_exponent",
        Field::CompanionRest,
        COMPANION_EXPONENT,
        "u8",
    ),
    row(
        "companion_gate_exponent",
        Field::CompanionRest,
        COMPANION_GATE_EXPONENT,
        "u8",
    ),
    row("calibrated_at", Field::CalibratedAt, CALIBRATED_AT, "i64"),
    row("plan_id", Field::PlanId, PLAN_ID, "[u8; 8]"),
    row("rest_reciprocal", Field::GateCycles, REST_RECIPROCAL, "u32"),
    row("gate_reciprocal", Field::GateCycles, GATE_RECIPROCAL, "u32"),
    row(
        "companion_reciprocal",
        Field::CompanionRest,
        COMPANION_RECIPROCAL,
        "u32",
    ),
    row(
        "companion_gate_reciprocal",
        Field::CompanionRest,
        COMPANION_GATE_RECIPROCAL,
        "u32",
    ),
];

const fn row(name: &'static str, field: Field, span: Span, ty: &'static str) -> Row {
    Row {
        name,
        field,
        span,
        ty,
    }
}

/// A node: shift (Q23.40, `i64`) and value (`i32`).
pub const NODE_LEN: usize = 12;
/// Node: the shift (or the level · 2^32 of a volume table).
pub const NODE_X: Span = Span::new(0, 8);
/// Node: the value.
pub const NODE_Y: Span = Span::new(8, 4);

/// A linear segment's constants.
pub const SEGMENT_LEN_LINEAR: usize = 8;
/// A cubic segment's constants.
pub const SEGMENT_LEN_CUBIC: usize = 20;
/// Segment: width shift `sh`, `u8`.
pub const SEG_SH: Span = Span::new(0, 1);
/// Segment: exponent of `k`, `u8`.
pub const SEG_K_EXP: Span = Span::new(1, 1);
/// Segment: reserved, zero.
pub const SEG_RESERVED: Span = Span::new(2, 2);
/// Segment: slope mantissa (linear) or 1/w' mantissa (cubic), `i32`.
pub const SEG_K: Span = Span::new(4, 4);
/// Cubic segment: Horner coefficient c1 (= D0), Q8 output units, `i32`.
pub const SEG_C1: Span = Span::new(8, 4);
/// Cubic segment: Horner coefficient c2 = 3Δy − 2D0 − D1, Q8, `i32`.
pub const SEG_C2: Span = Span::new(12, 4);
/// Cubic segment: Horner coefficient c3 = D0 + D1 − 2Δy, Q8, `i32`.
pub const SEG_C3: Span = Span::new(16, 4);

/// A segment's fields, in byte order (the docs' segment table).
pub const SEGMENT: [Row; 7] = [
    row("sh", Field::Curve, SEG_SH, "u8"),
    row("k_exp", Field::Curve, SEG_K_EXP, "u8"),
    row("reserved", Field::Reserved, SEG_RESERVED, "u16"),
    row("k", Field::Curve, SEG_K, "i32"),
    row("c1_q8", Field::Curve, SEG_C1, "i32"),
    row("c2_q8", Field::Curve, SEG_C2, "i32"),
    row("c3_q8", Field::Curve, SEG_C3, "i32"),
];

/// Bytes of the trailing CRC-32.
pub const CRC_LEN: usize = 4;

/// Flag: the curve is a monotone cubic.
pub const FLAG_CUBIC: u8 = 1 << 0;
/// Flag: the unit has a companion channel (proximity, metal: a companion
/// coil; level: a reference electrode).
pub const FLAG_COMPANION: u8 = 1 << 1;
/// Flag: the image carries a volume table (level).
pub const FLAG_VOLUME: u8 = 1 << 2;
/// Flag: the volume table is a monotone cubic.
pub const FLAG_VOLUME_CUBIC: u8 = 1 << 3;
/// Every defined flag.
pub const KNOWN_FLAGS: u8 = FLAG_CUBIC | FLAG_COMPANION | FLAG_VOLUME | FLAG_VOLUME_CUBIC;

/// Bytes of a table of `nodes` nodes: the nodes, then one segment per gap
/// between neighbours (formats 2 and 3).
pub const fn table_len(nodes: usize, cubic: bool) -> usize {
    let seg = if cubic {
        SEGMENT_LEN_CUBIC
    } else {
        SEGMENT_LEN_LINEAR
    };
    nodes * NODE_LEN + nodes.saturating_sub(1) * seg
}

/// Bytes of a format-1 table: nodes, then one `i64` derivative per node
/// when cubic.
pub const fn table_len_v1(nodes: usize, cubic: bool) -> usize {
    nodes * (NODE_LEN + if cubic { 8 } else { 0 })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The header rows tile bytes 0 to [`HEADER_LEN`] in order, without
    /// gaps or overlaps, each at a multiple of its own alignment (up to 4).
    #[test]
    fn header_rows_tile_the_header() {
        let mut at = 0;
        for r in HEADER {
            assert_eq!(r.span.at, at, "{}", r.name);
            let align = r.span.len.min(4);
            if align.is_power_of_two() {
                assert_eq!(r.span.at % align, 0, "{}", r.name);
            }
            at = r.span.end();
        }
        assert_eq!(at, HEADER_LEN);
        let mut at = 0;
        for r in SEGMENT {
            assert_eq!(r.span.at, at, "{}", r.name);
            at = r.span.end();
        }
        assert_eq!(at, SEGMENT_LEN_CUBIC);
        assert_eq!(SEG_K.end(), SEGMENT_LEN_LINEAR);
        assert_eq!(NODE_Y.end(), NODE_LEN);
        for n in [
            NODE_LEN,
            SEGMENT_LEN_LINEAR,
            SEGMENT_LEN_CUBIC,
            HEADER_LEN,
            CRC_LEN,
        ] {
            assert_eq!(n % 4, 0);
        }
    }

    /// The rows `| offset | size | type | `name` | rule |` of the table
    /// under the heading `section` in docs/image-format.md.
    fn doc_rows(section: &str) -> Vec<(usize, usize, String, String)> {
        let doc = include_str!("../../../docs/image-format.md");
        let start = doc.find(section).expect("section in the docs");
        doc[start..]
            .lines()
            .skip(1)
            .skip_while(|l| !l.starts_with('|'))
            .take_while(|l| l.starts_with('|'))
            .filter_map(|l| {
                let cells: Vec<&str> = l.split('|').map(str::trim).collect();
                let at = cells.get(1)?.parse().ok()?;
                let len = cells.get(2)?.parse().ok()?;
                let name = cells.get(4)?.trim_matches('`').to_string();
                Some((at, len, cells.get(3)?.to_string(), name))
            })
            .collect()
    }

    /// docs/image-format.md's header and segment tables are this layout,
    /// row for row: offset, size, type and name.
    #[test]
    fn docs_tables_match_the_layout() {
        for (section, rows) in [
            ("## Header (136 bytes)", &HEADER[..]),
            ("A segment's constants", &SEGMENT[..]),
        ] {
            let want: Vec<(usize, usize, String, String)> = rows
                .iter()
                .map(|r| (r.span.at, r.span.len, r.ty.to_string(), r.name.to_string()))
                .collect();
            assert_eq!(doc_rows(section), want, "{section}");
        }
        assert!(include_str!("../../../docs/image-format.md")
            .contains(&format!("## Header ({HEADER_LEN} bytes)")));
    }
}
