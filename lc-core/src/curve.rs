//! The curve: a monotone calibration table from shift to a physical value
//! (gap, level, …), with linear or monotone cubic interpolation, evaluated
//! in integer math.
//!
//! Nodes are (shift, value) pairs: shifts strictly increasing, values
//! monotone (non-decreasing or non-increasing; flat segments allowed). The
//! value is an `i32` in the reader's output units (the calibration image
//! gives unit and scale). Outside the table the curve **clamps** to the end
//! node and says so in [`CurveStatus`]; it never extrapolates silently.
//!
//! ## Interpolation
//!
//! - [`Interpolation::Linear`]: straight segments between nodes.
//! - [`Interpolation::MonotoneCubic`]: cubic Hermite with the node
//!   derivatives of Fritsch & Butland (1984), *SIAM J. Sci. Stat. Comput.*
//!   5(2):300–304: weighted harmonic means at interior nodes and the
//!   three-point shape-preserving end formula, the variant SciPy's
//!   `PchipInterpolator` and MATLAB's `pchip` use (Moler, *Numerical
//!   Computing with MATLAB*, 2004, §3.4). Not the original Fritsch–Carlson
//!   (1980) step-5 variant; their values differ (docs/references.md, Monotone interpolation cases). The
//!   derivatives are computed on the host by `pchip_derivatives` (`design` feature), and the
//!   image stores each segment's Horner coefficients derived from them, so
//!   the firmware does no floating-point work and no derivation.
//!
//! ## Fixed-point evaluation, rounding and bound
//!
//! Per segment of width w (in Q23.40 shift units) the host computes (the
//! owned `Curve`, `design` feature) and the calibration image stores
//! a shift `sh` with 2^30 ≤ w·2^-sh < 2^31 and the slope's 31-bit mantissa
//! (linear) or 1/w's mantissa (cubic). Per reading: one binary search
//! (at most 6 comparisons for 64 nodes), then
//!
//! - linear: y = y0 + (d · k_m) · 2^-e with d = (s − x0)·2^-sh rounded: one
//!   32 × 32 → 64-bit multiply;
//! - cubic: t = d / w' in Q16 from the precomputed reciprocal, then the
//!   Hermite form y0 + Δy·(3t² − 2t³) + D0·(t³ − 2t² + t) + D1·(t³ − t²)
//!   with D = w·dy/ds, evaluated by Horner's rule on coefficients
//!   precomputed in Q8 output units: one 32 × 32 → 64-bit multiply for t
//!   and three Horner steps of two 32-bit multiplies each.
//!
//! No division per reading. The result is rounded to nearest. Bound against
//! the `f64` twin of the same curve (`Curve::eval_f64`, `design` feature):
//! |y_fixed − y| ≤ 0.5 + 2^-28·|Δy| (linear) or
//! 0.5 + 3·2^-9 + 2^-16·(|Δy| + |D0| + |D1|) (cubic) output units, where the
//! terms are the segment's. In the cubic, each of the three Horner
//! products rounds to a Q8 value (2^-9 each), and t to 16 bits moves the
//! value by at most 2^-17·max|dy/dt| ≤ 2^-17·(|D0| + |D1| + 1.5·|Δy|) (the
//! Hermite basis' derivatives are at most 1, 1 and 1.5 on [0, 1]). For a
//! linear table that is the output's own rounding, 0.5 units, plus at most
//! 0.004 for |Δy| below 2^20 units per segment; for a cubic one, 2^-16 of
//! its segments' steps and end slopes: 0.70 mL on the demo tank's 17-row
//! table of 125.7 L (its interpolation bound against the tank is 20 mL).
//! The bound assumes a monotone segment: construction refuses tangent
//! terms beyond three times the segment's step (Fritsch–Carlson).
//! The input loses nothing finer than w·2^-31 of shift.
//!
//! The firmware reads a curve in place from the image as a [`CurveRef`]
//! (validated once, [`CurveRef::from_words`]); the owned `Curve` evaluates
//! through the same `CurveRef`, so host and firmware run one evaluation.
//!
//! ```
//! use lc_core::curve::{Curve, CurveStatus, Interpolation, Node};
//! use lc_core::shift::Shift;
//! // Gap in micrometres against shift: the plate's pull on L fades with distance.
//! let nodes = [
//!     Node::new(Shift::from_f64(-0.30).unwrap(), 500),
//!     Node::new(Shift::from_f64(-0.10).unwrap(), 2_000),
//!     Node::new(Shift::from_f64(-0.02).unwrap(), 5_000),
//! ];
//! let curve = Curve::linear(&nodes).unwrap();
//! let v = curve.eval(Shift::from_f64(-0.20).unwrap());
//! assert_eq!((v.value, v.status), (1_250, CurveStatus::InRange));
//! // Closer than the first node: clamped and reported.
//! assert_eq!(curve.eval(Shift::from_f64(-0.5).unwrap()).status, CurveStatus::BelowRange);
//! ```

use crate::derived::is_rounded_ratio_word;
#[cfg(any(test, feature = "design"))]
use crate::fixed::{leading_zeros_u32, round_shr_u64};
use crate::fixed::{mul_u32_wide, shr_u64};
use crate::shift::Shift;
use core::fmt;

/// Most nodes a curve holds (fixed, so the firmware needs no heap).
pub const MAX_NODES: usize = 64;

/// One calibration node: a shift and the value at it.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Node {
    /// Shift at the node.
    pub shift: Shift,
    /// Value at the node, in the reader's output units.
    pub value: i32,
}

impl Node {
    /// A node.
    pub const fn new(shift: Shift, value: i32) -> Self {
        Self { shift, value }
    }
}

/// How to interpolate between nodes.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Interpolation {
    /// Straight segments.
    Linear,
    /// Cubic Hermite with Fritsch–Butland (1984) node derivatives.
    MonotoneCubic,
}

/// Why a curve was refused. Each malformed table gets its own error.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum CurveError {
    /// Fewer than two nodes.
    TooFewNodes,
    /// More than [`MAX_NODES`] nodes.
    TooManyNodes,
    /// Shifts not strictly increasing.
    ShiftsNotIncreasing,
    /// Values not monotone (they rise and fall).
    NotMonotone,
    /// A segment's value step is 2^30 units or more (linear), or its value
    /// step or a tangent term w·dy/ds is 2^21 units or more (cubic): beyond
    /// what the fixed-point path evaluates without overflow.
    SegmentTooSteep,
    /// Derivatives given do not match the nodes (count) or break
    /// monotonicity: a sign against the table's direction, or a tangent
    /// term w·dy/ds beyond three times the segment's step (Fritsch &
    /// Carlson's limit, which `pchip_derivatives` always keeps).
    BadDerivatives,
    /// A stored segment's constants (width shift, slope or reciprocal
    /// mantissa and exponent) are not the ones its end nodes give.
    BadSegment,
}

impl fmt::Display for CurveError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            CurveError::TooFewNodes => "a curve needs at least two nodes",
            CurveError::TooManyNodes => "a curve holds at most 64 nodes",
            CurveError::ShiftsNotIncreasing => "curve shifts must be strictly increasing",
            CurveError::NotMonotone => "curve values must be monotone",
            CurveError::SegmentTooSteep => "a curve segment is too steep for the fixed-point path",
            CurveError::BadDerivatives => "curve derivatives do not match the nodes",
            CurveError::BadSegment => "a stored curve segment's constants do not match its nodes",
        })
    }
}

impl core::error::Error for CurveError {}

/// Where the input lay relative to the table.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum CurveStatus {
    /// Inside the table (end nodes included).
    InRange,
    /// Below the first node's shift; the value is the first node's.
    BelowRange,
    /// Above the last node's shift; the value is the last node's.
    AboveRange,
}

/// A curve's value and status.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct CurveValue {
    /// Value in output units, rounded to nearest (clamped outside the table).
    pub value: i32,
    /// Where the input lay.
    pub status: CurveStatus,
}

/// One segment's constants, as stored in the image (module docs).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
pub(crate) struct Segment {
    /// d = (s − x0) · 2^-sh fits 31 bits.
    pub(crate) sh: u8,
    /// Linear: value = d·k · 2^-k_exp. Cubic: t = d·k · 2^-k_exp in Q30
    /// (taken to Q16 per reading).
    pub(crate) k_exp: u8,
    /// Linear: slope mantissa (signed, |k| < 2^31). Cubic: mantissa of 1/w'.
    pub(crate) k: i32,
    /// Cubic: y − y0 = t·(c1 + t·(c2 + t·c3)), output units in Q8, with
    /// c1 = D0, c2 = 3Δy − 2D0 − D1, c3 = D0 + D1 − 2Δy and D = w·dy/ds.
    /// With |Δy|, |D| < 2^29 in Q8 and D0, D1, Δy of one sign (checked at
    /// construction and by the image's validation), |c2| < 3·2^29 and
    /// |c3| < 2^30 fit `i32`, and so do the Horner accumulators.
    pub(crate) c1_q8: i32,
    pub(crate) c2_q8: i32,
    pub(crate) c3_q8: i32,
}

/// 32-bit words per node: x (low, high), y.
pub(crate) const NODE_WORDS: usize = 3;
/// 32-bit words per linear segment: (sh, k_exp), k.
pub(crate) const LINEAR_SEGMENT_WORDS: usize = 2;
/// 32-bit words per cubic segment: (sh, k_exp), k, c1, c2, c3.
pub(crate) const CUBIC_SEGMENT_WORDS: usize = 5;

/// Word `i` of `w` (little endian in the image), 0 past the end.
#[cfg(any(test, feature = "design"))]
#[inline(always)]
fn word(w: &[u32], i: usize) -> u32 {
    u32::from_le(w.get(i).copied().unwrap_or(0))
}

/// Record `i` of `r` (an `N`-word node or segment), zeros past the end:
/// one bounds check for all of its words.
#[inline(always)]
fn record<const N: usize>(r: &[[u32; N]], i: usize) -> [u32; N] {
    r.get(i).copied().unwrap_or([0; N]).map(u32::from_le)
}

/// A node's shift, raw Q23.40, from its words.
#[inline(always)]
fn node_x(n: &[u32; NODE_WORDS]) -> i64 {
    ((u64::from(u32::from_le(n[1])) << 32) | u64::from(u32::from_le(n[0]))) as i64
}

/// A node's shift's high word: the level of a volume table's node.
#[inline(always)]
fn node_level(n: &[u32; NODE_WORDS]) -> i32 {
    u32::from_le(n[1]) as i32
}

/// A node's value.
#[inline(always)]
fn node_y(n: &[u32; NODE_WORDS]) -> i32 {
    u32::from_le(n[2]) as i32
}

/// Bit length of a `u64` (0 for 0), from 32-bit counts: on a Cortex-M0
/// `u64::leading_zeros` is a library call.
#[cfg(any(test, feature = "design"))]
#[inline]
fn bits_u64(w: u64) -> u32 {
    let (hi, lo) = ((w >> 32) as u32, w as u32);
    if hi != 0 {
        64 - leading_zeros_u32(hi)
    } else {
        32 - leading_zeros_u32(lo)
    }
}

#[cfg(any(test, feature = "design"))]
impl Segment {
    /// The segment's words: 2 (linear) or 5 (cubic).
    pub(crate) fn to_words(self) -> [u32; CUBIC_SEGMENT_WORDS] {
        [
            u32::from(self.sh) | u32::from(self.k_exp) << 8,
            self.k as u32,
            self.c1_q8 as u32,
            self.c2_q8 as u32,
            self.c3_q8 as u32,
        ]
        .map(u32::to_le)
    }
}

/// A validated curve read in place: its nodes and per-segment constants
/// borrowed from a calibration image (or from an owned `Curve`, `design`
/// feature), in
/// 32-bit words. 20 bytes on a 32-bit target, whatever the node count.
///
/// A curve is obtained from a validated image
/// ([`Image::curve`](crate::image::Image::curve)), so every node and
/// constant has passed the checks of [`CurveRef::from_words`]: evaluating
/// it never panics and stays within the module's bound.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct CurveRef<'a> {
    /// x low word, x high word, y, per node.
    nodes: &'a [[u32; NODE_WORDS]],
    /// A linear curve's segments (empty when cubic).
    linear: &'a [[u32; LINEAR_SEGMENT_WORDS]],
    /// A cubic curve's segments (empty when linear).
    cubic: &'a [[u32; CUBIC_SEGMENT_WORDS]],
    /// The table's direction (last value ≥ first): every non-flat segment
    /// goes this way (validated monotone), and on a flat one the step is 0
    /// either way.
    rising: bool,
    /// Every node on a whole level (x's low word zero) and every segment's
    /// width shift in 1..=32: [`CurveRef::eval_whole`] may stand in for
    /// [`CurveRef::eval`].
    whole: bool,
}

/// Shift that brings a positive width below 2^31 (and at or above 2^30).
#[cfg(any(test, feature = "design"))]
fn width_shift(w: u64) -> u8 {
    // bits ≤ 64, so the result is at most 33.
    bits_u64(w).saturating_sub(31) as u8
}

/// The firmware's check of one segment against its end nodes `ends`
/// (x's low and high words and y, each): x increasing, y of the table's
/// direction; the width shift is the one that brings the width into
/// [2^30, 2^31); k and its exponent are the correctly rounded slope
/// (linear) or 1/w' (cubic) with |k| in [2^30, 2^31) (0 for a flat linear
/// segment); the cubic's Horner coefficients are consistent
/// (c1 + c2 + c3 = Δy, that is c2 = 3Δy − 2D0 − D1 with D0 = c1 and
/// D1 = c3 − c1 + 2Δy), its tangent terms below 2^29 Q8 units, of the
/// table's direction and within Fritsch and Carlson's three steps; the
/// reserved byte pair is zero. What the evaluation's bound and its
/// overflow argument assume, checked with shifts, multiplies and
/// compares. Returns whether the segment ends on a whole level with a
/// width shift in 1..=32 ([`CurveRef::on_whole_levels`]).
///
/// Not inlined: one call per segment keeps the loop's few values and this
/// function's in registers (inlined, both spill to the stack).
#[inline(never)]
fn check_segment(
    [lo0, hi0, y0]: [u32; NODE_WORDS],
    [lo1, hi1, y1]: [u32; NODE_WORDS],
    seg: &[u32],
    cubic: bool,
    rising: bool,
) -> Result<bool, CurveError> {
    // A linear segment's words are its first two; a cubic one's Horner
    // coefficients are read where they are checked.
    let word = |i: usize| u32::from_le(seg.get(i).copied().unwrap_or(0));
    let (head, k) = (word(0), word(1));
    let x = |lo: u32, hi: u32| {
        ((u64::from(u32::from_le(hi)) << 32) | u64::from(u32::from_le(lo))) as i64
    };
    let (x0, x1) = (x(lo0, hi0), x(lo1, hi1));
    if x1 <= x0 {
        return Err(CurveError::ShiftsNotIncreasing);
    }
    let (y0, y1) = (u32::from_le(y0) as i32, u32::from_le(y1) as i32);
    if (rising && y1 < y0) || (!rising && y1 > y0) {
        return Err(CurveError::NotMonotone);
    }
    let (sh, k_exp) = (head & 0xFF, (head >> 8) & 0xFF);
    if head >> 16 != 0 || sh > 33 {
        return Err(CurveError::BadSegment);
    }
    // The width shift is the one that brings w into [2^30, 2^31) (w below
    // 2^31 for sh = 0), and w' = round(w · 2^-sh) ≥ 1, at most 2^31: from
    // t = w · 2^-(sh−1), the halved value with its half bit.
    let width = x1.wrapping_sub(x0) as u64; // x1 > x0: exact
    let d = if sh == 0 {
        match u32::try_from(width) {
            Ok(w) if w < 1 << 31 => w,
            _ => return Err(CurveError::BadSegment),
        }
    } else {
        let t = shr_u64(width, sh - 1);
        if !(1 << 31..1 << 32).contains(&t) {
            return Err(CurveError::BadSegment);
        }
        let t = t as u32; // < 2^32
                          // t >> 1 < 2^31: adding the half bit cannot wrap.
        (t >> 1).wrapping_add(t & 1)
    };
    // |Δy|, exact in u32; its sign is the table's direction (checked).
    let a = y1.abs_diff(y0);
    let k = k as i32;
    let m = k.unsigned_abs();
    let normal = (1 << 30..1 << 31).contains(&m);
    let whole = lo1 == 0 && (1..=32).contains(&sh);
    // Linear: k = round(Δy · 2^e / w') with the table's sign (0 for a flat
    // segment); cubic: k = round(2^30 · 2^e / w'), positive.
    if !cubic && a >= 1 << 30 {
        return Err(CurveError::SegmentTooSteep);
    }
    let ok = if !cubic && a == 0 {
        k == 0 && k_exp == 0
    } else {
        let n = if cubic { 1 << 30 } else { a };
        normal && (k > 0) == (cubic || rising) && is_rounded_ratio_word(m, n, k_exp, d)
    };
    if !ok {
        return Err(CurveError::BadSegment);
    }
    if !cubic {
        return Ok(whole);
    }
    if a >= 1 << 21 {
        return Err(CurveError::SegmentTooSteep);
    }
    // In the table's direction (falling: every term negated), in i32:
    // Δy = a in Q8 below 2^29, the tangent terms D0 = c1 and
    // D1 = c3 − c1 + 2Δy in 0 ..= L = min(3|Δy| + 2, 2^29 − 1), and
    // c1 + c2 + c3 = Δy. The wrapping forms are exact for these tests:
    // a term's negation wraps only for −2^31, which reads as 2^31 > L; D1
    // is tested after D0 lies in 0..=L, when its true value lies in
    // (−2^32, 2^32) and wraps into 0..=L only if it is there; and with
    // both in range the true sum lies within 2^32 of Δy, so its wrapped
    // value equals Δy only if it does.
    let dir = |c: u32| {
        if rising {
            c as i32
        } else {
            (c as i32).wrapping_neg()
        }
    };
    let (c1, c2, c3) = (dir(word(2)), dir(word(3)), dir(word(4)));
    let a8 = (a << 8) as i32; // < 2^29
    let limit = (a8.wrapping_mul(3).wrapping_add(2)).min((1 << 29) - 1) as u32;
    let d0 = c1;
    if d0 as u32 > limit {
        return Err(too_steep_or_bad(d0));
    }
    let d1 = c3.wrapping_sub(c1).wrapping_add(a8).wrapping_add(a8);
    if d1 as u32 > limit {
        return Err(too_steep_or_bad(d1));
    }
    if c1.wrapping_add(c2).wrapping_add(c3) != a8 {
        return Err(CurveError::BadDerivatives);
    }
    Ok(whole)
}

/// The error of a tangent term outside 0 ..= min(3|Δy| + 2, 2^29 − 1):
/// too steep for the fixed-point path from 2^29 (Q8) in size, else
/// against the direction or beyond Fritsch and Carlson's limit.
#[cold]
fn too_steep_or_bad(d: i32) -> CurveError {
    if d.unsigned_abs() >= 1 << 29 {
        CurveError::SegmentTooSteep
    } else {
        CurveError::BadDerivatives
    }
}

/// The first `count` records of `N` words of `words` (`None` when there
/// are fewer), for `count` ≤ 64.
///
/// The cast divides the slice's length by the record size. Left to
/// itself, the optimizer narrows count · N (it knows count ≤ 64) to 16
/// bits and loses the product, so that division stays, a call of the
/// library's 32-bit division on a Cortex-M0. With the count passed
/// through `black_box` as a `u16` (exact: count ≤ 64) the product
/// visibly cannot wrap and the division folds away; cutting the records
/// to `count` then tells the compiler their length again.
#[inline(always)]
fn records<const N: usize>(words: &[u32], count: usize) -> Option<&[[u32; N]]>
where
    [u32; N]: bytemuck::Pod,
{
    let n = usize::from(core::hint::black_box(count as u16));
    // n < 2^16 and N ≤ 5: the product cannot wrap.
    let typed: &[[u32; N]] = bytemuck::try_cast_slice(words.get(..n * N)?).ok()?;
    typed.get(..count)
}

impl<'a> CurveRef<'a> {
    /// The curve of `len` nodes in `nodes` (three words each: x's low and
    /// high words, y) with their segment constants in `segs` (two words
    /// each when linear, five when cubic), validated: 2 to
    /// [`MAX_NODES`] nodes, shifts strictly increasing, values monotone,
    /// segment steps inside the fixed-point path, and each segment's stored
    /// constants correct for its end nodes ([`CurveError::BadSegment`]
    /// otherwise). Words are little endian (the image's byte order).
    ///
    /// Cost: no division; on a Cortex-M0 about 300 instructions per cubic
    /// segment (one call of `check_segment` and one of the rounded-ratio
    /// check each). Stack: under 200 bytes.
    pub fn from_words(
        nodes: &'a [u32],
        segs: &'a [u32],
        len: usize,
        cubic: bool,
    ) -> Result<Self, CurveError> {
        let mut c = Self::view_of(nodes, segs, len, cubic)?;
        c.whole = c.check_segments(cubic)?;
        Ok(c)
    }

    /// [`CurveRef::from_words`]' checks without the view: the table's
    /// direction (rising) and [`CurveRef::on_whole_levels`], or the same
    /// error. What image validation needs (it keeps no view).
    #[inline(always)]
    pub(crate) fn check_words(
        nodes: &[u32],
        segs: &[u32],
        len: usize,
        cubic: bool,
    ) -> Result<(bool, bool), CurveError> {
        let c = CurveRef::view_of(nodes, segs, len, cubic)?;
        Ok((c.rising, c.check_segments(cubic)?))
    }

    /// One pass, segment after segment, each with its two end nodes:
    /// shifts increasing, each step of the table's direction (the
    /// direction of the first and last nodes: a step against it means the
    /// values rise and fall), each segment's constants. One loop for both
    /// kinds: a segment's words from `stride` words on. Returns whether
    /// the curve lies on whole levels.
    #[inline(always)]
    fn check_segments(&self, cubic: bool) -> Result<bool, CurveError> {
        let (mut seg, stride): (&[u32], usize) = if cubic {
            (bytemuck::cast_slice(self.cubic), CUBIC_SEGMENT_WORDS)
        } else {
            (bytemuck::cast_slice(self.linear), LINEAR_SEGMENT_WORDS)
        };
        let mut whole = record(self.nodes, 0)[0] == 0;
        for e in self.nodes.windows(2) {
            if let [n0, n1] = e {
                whole &= check_segment(*n0, *n1, seg, cubic, self.rising)?;
            }
            seg = seg.get(stride..).unwrap_or(&[]);
        }
        Ok(whole)
    }

    /// The view of `len` nodes and their segments, unchecked but for the
    /// node count and the words' presence; its direction set. Out of
    /// line: validation and each reader's constructor share one copy.
    #[inline(never)]
    fn view_of(
        nodes: &'a [u32],
        segs: &'a [u32],
        len: usize,
        cubic: bool,
    ) -> Result<Self, CurveError> {
        if len < 2 {
            return Err(CurveError::TooFewNodes);
        }
        if len > MAX_NODES {
            return Err(CurveError::TooManyNodes);
        }
        let short = CurveError::TooFewNodes;
        // (The nodes' cast divides by 12, which folds: len · 3 stays a
        // product the compiler sees.)
        let nodes = nodes.get(..len * NODE_WORDS).ok_or(short)?;
        // len − 1 ≥ 1: no wrap.
        let segments = len.wrapping_sub(1);
        let mut c = CurveRef {
            nodes: bytemuck::try_cast_slice(nodes).map_err(|_| short)?,
            linear: &[],
            cubic: &[],
            rising: true,
            whole: false,
        };
        if cubic {
            c.cubic = records(segs, segments).ok_or(short)?;
        } else {
            c.linear = records(segs, segments).ok_or(short)?;
        }
        c.rising = c.y(len - 1) >= c.y(0);
        Ok(c)
    }

    /// [`CurveRef::from_words`] of words that passed it (a validated
    /// image's table, `whole` what `from_words` found,
    /// [`CurveRef::on_whole_levels`]), without the checks: what a reader's
    /// constructor builds at start-up. `None` only where `from_words`
    /// would refuse the node count or the words' presence.
    pub(crate) fn from_checked_words(
        nodes: &'a [u32],
        segs: &'a [u32],
        len: usize,
        cubic: bool,
        whole: bool,
    ) -> Option<Self> {
        let mut c = Self::view_of(nodes, segs, len, cubic).ok()?;
        c.whole = whole;
        Some(c)
    }

    /// Number of nodes.
    #[inline]
    pub fn len(&self) -> usize {
        self.nodes.len()
    }

    /// Always false: a curve has at least two nodes.
    pub fn is_empty(&self) -> bool {
        self.nodes.is_empty()
    }

    /// Whether the segments are cubic.
    #[inline(always)]
    fn is_cubic(&self) -> bool {
        !self.cubic.is_empty()
    }

    /// The interpolation in use.
    pub fn interpolation(&self) -> Interpolation {
        if self.is_cubic() {
            Interpolation::MonotoneCubic
        } else {
            Interpolation::Linear
        }
    }

    /// Whether the values rise along the table (last ≥ first).
    #[inline]
    pub fn is_rising(&self) -> bool {
        self.rising
    }

    /// Whether every node lies on a whole level (low word of x zero) and
    /// every segment's width shift is at most 32, so that
    /// [`CurveRef::eval_whole`] may stand in for [`CurveRef::eval`] (a
    /// volume table's curve from strapping rows or a sampled shape always
    /// does).
    pub fn on_whole_levels(&self) -> bool {
        self.whole
    }

    /// Node `i`'s shift, raw Q23.40.
    #[inline(always)]
    fn x(&self, i: usize) -> i64 {
        let [lo, hi, _] = record(self.nodes, i);
        ((u64::from(hi) << 32) | u64::from(lo)) as i64
    }

    /// Node `i`'s value.
    #[inline(always)]
    fn y(&self, i: usize) -> i32 {
        record(self.nodes, i)[2] as i32
    }

    /// Segment `i`'s words, a linear segment's in the first two.
    #[inline(always)]
    fn segment_words(&self, i: usize) -> [u32; CUBIC_SEGMENT_WORDS] {
        if self.is_cubic() {
            record(self.cubic, i)
        } else {
            let [head, k] = record(self.linear, i);
            [head, k, 0, 0, 0]
        }
    }

    /// Segment `i`'s constants.
    #[inline(always)]
    pub(crate) fn segment_constants(&self, i: usize) -> Segment {
        let [head, k, c1, c2, c3] = self.segment_words(i);
        Segment {
            sh: (head & 0xFF) as u8,
            k_exp: ((head >> 8) & 0xFF) as u8,
            k: k as i32,
            c1_q8: c1 as i32,
            c2_q8: c2 as i32,
            c3_q8: c3 as i32,
        }
    }

    /// Node `i`, if it exists.
    pub fn node(&self, i: usize) -> Option<Node> {
        (i < self.len()).then(|| Node::new(Shift::from_raw_q40(self.x(i)), self.y(i)))
    }

    /// The nodes in order.
    pub fn nodes(&self) -> impl Iterator<Item = Node> + '_ {
        (0..self.len()).filter_map(|i| self.node(i))
    }

    /// The node words and the segment words this curve reads (what an
    /// image stores).
    pub fn words(&self) -> (&'a [u32], &'a [u32]) {
        let segs: &'a [u32] = if self.is_cubic() {
            bytemuck::cast_slice(self.cubic)
        } else {
            bytemuck::cast_slice(self.linear)
        };
        (bytemuck::cast_slice(self.nodes), segs)
    }

    /// Segment `i`'s tangent terms (D0, D1) = w·dy/ds at its two ends, in
    /// Q8 output units (cubic; (0, 0) for a linear curve), as stored.
    pub fn tangent_terms_q8(&self, i: usize) -> Option<(i32, i32)> {
        if i + 1 >= self.len() {
            return None;
        }
        if !self.is_cubic() {
            return Some((0, 0));
        }
        let seg = self.segment_constants(i);
        let dy = (i64::from(self.y(i + 1)) - i64::from(self.y(i))) << 8;
        let d1 = i64::from(seg.c3_q8) - i64::from(seg.c1_q8) + 2 * dy;
        Some((seg.c1_q8, i32::try_from(d1).ok()?))
    }

    /// Where `v` lies on the nodes' keys `key` (the shift, or a volume
    /// table's level): `Err` with the first node's value below the table,
    /// the last node's at or above its last node (with the status);
    /// inside, `Ok` with the segment `i` holding it (key(i) ≤ v <
    /// key(i+1)) and its two nodes. Halving search with a fixed trip count
    /// per table size (2 steps for 5 nodes, 5 for 32, 6 for 64), each a
    /// node read and a compare: the index stays inside the nodes by the
    /// loop's invariant, and the node is read by `get`, so no step copies
    /// a default record.
    #[inline(always)]
    fn locate<K: PartialOrd>(
        &self,
        v: K,
        key: impl Fn(&[u32; NODE_WORDS]) -> K,
    ) -> Result<(usize, &'a [u32; NODE_WORDS], &'a [u32; NODE_WORDS]), CurveValue> {
        let nodes = self.nodes;
        let Some((first, last)) = self.ends() else {
            return Err(CurveValue {
                value: 0,
                status: CurveStatus::InRange,
            });
        };
        if v < key(first) {
            return Err(CurveValue {
                value: node_y(first),
                status: CurveStatus::BelowRange,
            });
        }
        let at_last = key(last);
        if v >= at_last {
            return Err(CurveValue {
                value: node_y(last),
                status: if v == at_last {
                    CurveStatus::InRange
                } else {
                    CurveStatus::AboveRange
                },
            });
        }
        // key(first) ≤ v < key(last): the segment among the n − 1.
        let (mut i, mut len) = (0usize, nodes.len().wrapping_sub(1));
        while len > 1 {
            let half = len / 2;
            // i + half < i + len ≤ the segment count ≤ 63 (the
            // invariant of the loop): the sum cannot wrap, and the node
            // is always there.
            let mid = i.wrapping_add(half);
            if let Some(n) = nodes.get(mid) {
                if key(n) <= v {
                    i = mid;
                }
            }
            len -= half;
        }
        // i is a segment (< 63): node i + 1 is there too.
        match nodes.get(i..) {
            Some([n0, n1, ..]) => Ok((i, n0, n1)),
            _ => Err(CurveValue {
                value: node_y(first),
                status: CurveStatus::InRange,
            }),
        }
    }

    /// The first and the last node's records, by one length check (a
    /// validated curve has at least two nodes; `None` only keeps the
    /// function total).
    #[inline(always)]
    fn ends(&self) -> Option<(&'a [u32; NODE_WORDS], &'a [u32; NODE_WORDS])> {
        match self.nodes {
            [first, .., last] => Some((first, last)),
            _ => None,
        }
    }

    /// The value at shift `s`, rounded to nearest; clamped with a status
    /// outside the table. No division, and on a 32-bit core no 64-bit
    /// library call: the segment's offset, the products and the rounding
    /// shifts are done in 32-bit words (`round_shr_to_u32`, `mul_u32_wide`).
    /// Always inlined into the readers: on a Cortex-M0 the call and its
    /// spills cost 17 of a proximity reading's instructions.
    #[inline(always)]
    pub fn eval(&self, s: Shift) -> CurveValue {
        let s = s.raw_q40();
        let (i, n0, n1) = match self.locate(s, node_x) {
            Ok(segment) => segment,
            Err(end) => return end,
        };
        let seg = self.segment_constants(i);
        // 0 ≤ s − x0 < w < 2^(31 + sh), so (s − x0)·2^-(sh−1) < 2^32: d is
        // (s − x0)·2^-sh rounded, below 2^31 (d = 2^31 only when s rounds up
        // to x1: held at 2^31 − 1, still exact below).
        let u = s.wrapping_sub(node_x(n0)) as u64; // < w: exact
        let d = round_shr_to_u32(u, seg.sh).min((1 << 31) - 1);
        self.in_segment(&seg, node_y(n0), node_y(n1), d)
    }

    /// [`CurveRef::eval`] at the raw Q23.40 point `s`, out of line: the
    /// level reader evaluates its level curve and its volume table (at
    /// level · 2^32) through this one copy. A whole level on a curve on
    /// whole levels takes [`CurveRef::eval_whole`]'s search and offset in
    /// 32-bit words (the same value and status); both searches end in the
    /// one interpolation.
    #[inline(never)]
    pub(crate) fn eval_shared(&self, s: i64) -> CurveValue {
        let (hi, lo) = ((s >> 32) as i32, s as u32);
        // The segment, its nodes, and the offset: whole levels r, or the
        // shift's u = s − x0.
        let found = if self.whole && lo == 0 {
            self.locate(hi, node_level)
                .map(|(i, n0, n1)| (i, n0, n1, Ok(hi.wrapping_sub(node_level(n0)) as u32)))
        } else {
            self.locate(s, node_x)
                .map(|(i, n0, n1)| (i, n0, n1, Err(s.wrapping_sub(node_x(n0)) as u64)))
        };
        let (i, n0, n1, offset) = match found {
            Ok(segment) => segment,
            Err(end) => return end,
        };
        let seg = self.segment_constants(i);
        let d = match offset {
            // `eval_whole`'s offset: on whole levels sh is in 1..=32.
            Ok(r) => r.wrapping_shl(32 - u32::from(seg.sh).min(32)),
            // `eval`'s offset.
            Err(u) => round_shr_to_u32(u, seg.sh).min((1 << 31) - 1),
        };
        self.in_segment(&seg, node_y(n0), node_y(n1), d)
    }

    /// Whether `q`, of status `status` in [`CurveRef::eval`], lies within
    /// the curve's span extended by the span's width at each end: the
    /// readers' reach check, as [`in_reach`](crate::reader::in_reach)
    /// states it (the shifts strictly increase, so the low end is node 0's
    /// and only the end `q` passed needs a compare). Inlined into the
    /// readers: the nodes are read only on a reading out of range.
    ///
    /// The compares are on the distances, which are positive and exact as
    /// `u64` (x₀ < xₙ; below the range q < x₀, above it q > xₙ): q ≥ x₀ − w
    /// is x₀ − q ≤ w, and q ≤ xₙ + w is q − xₙ ≤ w, with the saturating
    /// bounds' result wherever x₀ − w or xₙ + w leaves the `i64` range
    /// (then every q is within), and no 64-bit saturation on the way.
    #[inline(always)]
    pub(crate) fn within_reach(&self, q: i64, status: CurveStatus) -> bool {
        let Some((first, last)) = self.ends() else {
            return true;
        };
        // The distance past the end `q` passed (positive there).
        let past = match status {
            CurveStatus::InRange => return true,
            CurveStatus::BelowRange => node_x(first).wrapping_sub(q),
            CurveStatus::AboveRange => q.wrapping_sub(node_x(last)),
        };
        past as u64 <= node_x(last).wrapping_sub(node_x(first)) as u64
    }

    /// [`CurveRef::eval`] at the whole level `v`, that is at
    /// `geometry::level_to_shift(v)` = v·2^32 on the axis, for a curve on
    /// whole levels ([`CurveRef::on_whole_levels`]; otherwise the general
    /// evaluation): the same value and status, bit for bit, with the
    /// search and the offset in 32-bit words (a node's level is its high
    /// word, and the offset's d is r·2^(32 − sh), exact, for r whole
    /// levels).
    #[inline(always)]
    pub fn eval_whole(&self, v: i32) -> CurveValue {
        if !self.whole {
            return self.eval(Shift::from_raw_q40(i64::from(v) << 32));
        }
        let (i, n0, n1) = match self.locate(v, node_level) {
            Ok(segment) => segment,
            Err(end) => return end,
        };
        let seg = self.segment_constants(i);
        // 0 ≤ r < the segment's width in levels < 2^(sh − 1), sh ≤ 32.
        let r = v.wrapping_sub(node_level(n0)) as u32;
        // On whole levels every segment's sh is in 1..=32 (validated), so
        // the shift amount is below 32; the wrapping shift only states it.
        let d = r.wrapping_shl(32 - u32::from(seg.sh).min(32));
        self.in_segment(&seg, node_y(n0), node_y(n1), d)
    }

    /// The value in the segment `seg` from y0 to y1 at d = (s − x0)·2^-sh
    /// rounded, d < 2^31: the interpolation, held between y0 and y1.
    #[inline(always)]
    fn in_segment(&self, seg: &Segment, y0: i32, y1: i32, d: u32) -> CurveValue {
        let rising = self.rising;
        // |y1 − y0| < 2^30 (validated): exact in u32.
        let span = y1.abs_diff(y0);
        let cubic = self.is_cubic();
        // One product and one rounding shift for both kinds. Linear: the
        // step |k|·d·2^-k_exp ≈ |Δy|·d/w' < 2^30 (fits after the shift).
        // Cubic: t = d/w' in Q16 (from Q30: 14 bits more).
        let q = round_shr_to_u32(
            mul_u32_wide(seg.k.unsigned_abs(), d),
            if cubic {
                seg.k_exp.saturating_add(14)
            } else {
                seg.k_exp
            },
        );
        let step: u32 = if !cubic {
            q
        } else {
            // 0 ≤ t ≤ 2^16.
            let t = q.min(1 << 16);
            // Horner in Q8 output units, each product rounded to Q8;
            // every accumulator fits i32 (Segment docs).
            let acc = seg.c2_q8.wrapping_add(mul_q16(seg.c3_q8, t));
            let acc = seg.c1_q8.wrapping_add(mul_q16(acc, t));
            // Q8 to whole units, rounded to nearest (ties up).
            let v = mul_q16(acc, t).wrapping_add(128) >> 8;
            // The step's sign is the table's direction (a monotone
            // cubic stays between y0 and y1); the other sign clamps
            // to y0.
            if rising {
                u32::try_from(v).unwrap_or(0)
            } else {
                u32::try_from(v.wrapping_neg()).unwrap_or(0)
            }
        };
        // Stay within the segment: y0 + step lies between y0 and y1.
        let step = step.min(span);
        let value = if rising {
            y0.wrapping_add_unsigned(step)
        } else {
            y0.wrapping_sub_unsigned(step)
        };
        CurveValue {
            value,
            status: CurveStatus::InRange,
        }
    }

    /// The stated error bound of [`CurveRef::eval`] at `s` against
    /// [`CurveRef::eval_f64`], in output units: 0.5 + 2^-28·|Δy| (linear),
    /// or 0.5 + 3·2^-9 + 2^-16·(|Δy| + |D0| + |D1|) (cubic), with the
    /// terms of the segment holding `s` (0.5 outside the table, where the
    /// value is a node's). Verification helper.
    pub fn error_bound(&self, s: Shift) -> f64 {
        let raw = s.raw_q40();
        let last = self.len().saturating_sub(1);
        if raw <= self.x(0) || raw >= self.x(last) {
            return 0.5;
        }
        let Ok((i, _, _)) = self.locate(raw, node_x) else {
            return 0.5;
        };
        let dy = (f64::from(self.y(i + 1)) - f64::from(self.y(i))).abs();
        let (d0, d1) = self.tangent_terms_q8(i).unwrap_or((0, 0));
        let (d0, d1) = (f64::from(d0) / 256.0, f64::from(d1) / 256.0);
        // Cubic: three Horner steps each round a Q8 value (≤ 2^-9 each),
        // and t is held to 16 bits.
        if self.is_cubic() {
            0.5 + 3.0 / 512.0 + 1.525_878_906_25e-5 * (dy + d0.abs() + d1.abs())
        } else {
            0.5 + 3.725_290_298_461_914e-9 * dy
        }
    }

    /// `f64` twin of [`CurveRef::eval`]: the same curve (same nodes, same
    /// tangent terms) evaluated in `f64`, unrounded, clamped the same way.
    pub fn eval_f64(&self, s: f64) -> f64 {
        let n = self.len();
        let xs = |i: usize| self.x(i) as f64 / 1_099_511_627_776.0;
        let last_i = n.saturating_sub(1);
        if s <= xs(0) {
            return f64::from(self.y(0));
        }
        if s >= xs(last_i) {
            return f64::from(self.y(last_i));
        }
        let mut i = 0;
        while i + 2 < n && xs(i + 1) <= s {
            i += 1;
        }
        let (x0, x1) = (xs(i), xs(i + 1));
        let (y0, y1) = (f64::from(self.y(i)), f64::from(self.y(i + 1)));
        let t = (s - x0) / (x1 - x0);
        if self.is_cubic() {
            let seg = self.segment_constants(i);
            let c = |q: i32| f64::from(q) / 256.0;
            y0 + t * (c(seg.c1_q8) + t * (c(seg.c2_q8) + t * c(seg.c3_q8)))
        } else {
            y0 + (y1 - y0) * t
        }
    }
}

#[cfg(any(test, feature = "design"))]
pub use owned::{pchip_derivatives, Curve};

/// Owned curves, built on the host from nodes (and derivatives): the
/// derivation of every segment's constants that the image stores.
#[cfg(any(test, feature = "design"))]
mod owned {
    use super::*;
    use crate::fixed::round_div_u128;

    /// A curve that owns its nodes and segment constants (about 2 KB),
    /// built on the host from nodes and, for a monotone cubic, node
    /// derivatives: the derivation the image's format stores the result
    /// of. Evaluated through its [`CurveRef`] ([`Curve::view`]), the same
    /// code the firmware runs on an image in flash. Design feature.
    #[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
    #[cfg_attr(feature = "defmt", derive(defmt::Format))]
    pub struct Curve {
        len: u8,
        cubic: bool,
        node_words: [u32; MAX_NODES * NODE_WORDS],
        seg_words: [u32; (MAX_NODES - 1) * CUBIC_SEGMENT_WORDS],
    }

    /// (mantissa, exponent) with mantissa = round(num · 2^e / den), |mantissa|
    /// in [2^30, 2^31) unless num is 0; `den` > 0, |num| < 2^31.
    pub(super) fn scaled_ratio(num: i64, den: u64) -> Option<(i32, u8)> {
        // Start where the quotient is still below 2^29, from the bit lengths
        // (n·2^e0/d < 2^(len n + e0 − len d + 1) = 2^29), so two or three
        // bit-serial 128-bit divisions do what one per exponent from 0 did.
        let bits = |x: u128| 128 - x.leading_zeros();
        let (n, d) = (u128::from(num.unsigned_abs()), u128::from(den));
        scaled_ratio_from(num, den, (28 + bits(d)).saturating_sub(bits(n)))
    }

    /// [`scaled_ratio`] by a search upward from exponent `e0` (at most the
    /// answer): the smallest e (at most 90) with num·2^e/den rounding into
    /// [2^30, 2^31), one division per exponent tried.
    pub(super) fn scaled_ratio_from(num: i64, den: u64, e0: u32) -> Option<(i32, u8)> {
        if num == 0 {
            return Some((0, 0));
        }
        let n = u128::from(num.unsigned_abs());
        let d = u128::from(den);
        let mut e = e0.min(90);
        let mut m = round_div_u128(n << e, d)?;
        while m < 1 << 30 && e < 90 {
            e += 1;
            m = round_div_u128(n << e, d)?;
        }
        if m >= 1 << 31 {
            // Rounding carried to 2^31: one bit less.
            e = e.checked_sub(1)?;
            m = round_div_u128(n << e, d)?;
        }
        let m = i32::try_from(m).ok()?;
        let e = u8::try_from(e).ok()?;
        Some((if num < 0 { -m } else { m }, e))
    }

    fn validate(nodes: &[Node]) -> Result<(), CurveError> {
        if nodes.len() < 2 {
            return Err(CurveError::TooFewNodes);
        }
        if nodes.len() > MAX_NODES {
            return Err(CurveError::TooManyNodes);
        }
        let (mut up, mut down) = (false, false);
        for w in nodes.windows(2) {
            if w[1].shift <= w[0].shift {
                return Err(CurveError::ShiftsNotIncreasing);
            }
            let dy = i64::from(w[1].value) - i64::from(w[0].value);
            up |= dy > 0;
            down |= dy < 0;
            if dy.unsigned_abs() >= 1 << 30 {
                return Err(CurveError::SegmentTooSteep);
            }
        }
        if up && down {
            return Err(CurveError::NotMonotone);
        }
        Ok(())
    }

    /// Validates a table, in the one order every constructor and
    /// [`Curve::check`] report errors in (derivative count, nodes, each
    /// segment's scale, derivative signs, cubic terms), and writes each
    /// segment's constants into `out` when given. Returns the interpolation.
    fn segments(
        nodes: &[Node],
        derivatives_q16: Option<&[i64]>,
        mut out: Option<&mut [Segment; MAX_NODES]>,
    ) -> Result<Interpolation, CurveError> {
        if derivatives_q16.is_some_and(|d| d.len() != nodes.len()) {
            return Err(CurveError::BadDerivatives);
        }
        validate(nodes)?;
        let interpolation = match derivatives_q16 {
            Some(_) => Interpolation::MonotoneCubic,
            None => Interpolation::Linear,
        };
        for (i, pair) in nodes.windows(2).enumerate() {
            if let [a, b] = pair {
                let seg = segment_of(*a, *b, interpolation)?;
                if let Some(slot) = out.as_deref_mut().and_then(|o| o.get_mut(i)) {
                    *slot = seg;
                }
            }
        }
        if let Some(ders) = derivatives_q16 {
            check_derivative_signs(nodes, ders)?;
            for (i, (pair, d)) in nodes.windows(2).zip(ders.windows(2)).enumerate() {
                if let ([a, b], [d0, d1]) = (pair, d) {
                    let (c1, c2, c3) = cubic_terms(*a, *b, *d0, *d1)?;
                    if let Some(slot) = out.as_deref_mut().and_then(|o| o.get_mut(i)) {
                        slot.c1_q8 = c1;
                        slot.c2_q8 = c2;
                        slot.c3_q8 = c3;
                    }
                }
            }
        }
        Ok(interpolation)
    }

    impl Curve {
        /// The curve of these nodes (linear when `derivatives_q16` is
        /// `None`).
        fn build(nodes: &[Node], derivatives_q16: Option<&[i64]>) -> Result<Self, CurveError> {
            let mut seg = [Segment::default(); MAX_NODES];
            let interpolation = segments(nodes, derivatives_q16, Some(&mut seg))?;
            let cubic = interpolation == Interpolation::MonotoneCubic;
            let mut c = Curve {
                len: nodes.len() as u8, // ≤ 64 after validation
                cubic,
                node_words: [0; MAX_NODES * NODE_WORDS],
                seg_words: [0; (MAX_NODES - 1) * CUBIC_SEGMENT_WORDS],
            };
            for (w, n) in c.node_words.chunks_exact_mut(NODE_WORDS).zip(nodes) {
                let x = n.shift.raw_q40() as u64;
                w.copy_from_slice(&[x as u32, (x >> 32) as u32, n.value as u32].map(u32::to_le));
            }
            let stride = c.stride();
            for (w, s) in c
                .seg_words
                .chunks_exact_mut(stride)
                .zip(&seg[..nodes.len() - 1])
            {
                w.copy_from_slice(&s.to_words()[..stride]);
            }
            Ok(c)
        }

        fn stride(&self) -> usize {
            if self.cubic {
                CUBIC_SEGMENT_WORDS
            } else {
                LINEAR_SEGMENT_WORDS
            }
        }

        /// The curve of stored words, validated as the firmware validates
        /// them ([`CurveRef::from_words`]): a curve read back from an image.
        pub fn from_words(
            nodes: &[u32],
            segs: &[u32],
            len: usize,
            cubic: bool,
        ) -> Result<Self, CurveError> {
            CurveRef::from_words(nodes, segs, len, cubic)?;
            let mut c = Curve {
                len: len as u8, // ≤ 64 after validation
                cubic,
                node_words: [0; MAX_NODES * NODE_WORDS],
                seg_words: [0; (MAX_NODES - 1) * CUBIC_SEGMENT_WORDS],
            };
            let (n, s) = (len * NODE_WORDS, (len - 1) * c.stride());
            c.node_words[..n].copy_from_slice(&nodes[..n]);
            c.seg_words[..s].copy_from_slice(&segs[..s]);
            Ok(c)
        }

        /// Whether [`Curve::linear`] (`derivatives_q16` `None`) or
        /// [`Curve::monotone_cubic`] would accept these nodes, with the
        /// same error, without building the curve.
        pub fn check(nodes: &[Node], derivatives_q16: Option<&[i64]>) -> Result<(), CurveError> {
            segments(nodes, derivatives_q16, None).map(|_| ())
        }

        /// A curve with straight segments.
        pub fn linear(nodes: &[Node]) -> Result<Self, CurveError> {
            Self::build(nodes, None)
        }

        /// A monotone cubic curve from nodes and their derivatives dy/ds in
        /// output units per unit shift (from [`pchip_derivatives`], as
        /// Q47.16: `derivatives_q16`).
        pub fn monotone_cubic(nodes: &[Node], derivatives_q16: &[i64]) -> Result<Self, CurveError> {
            Self::build(nodes, Some(derivatives_q16))
        }

        /// The curve as the firmware reads it: the same words, borrowed.
        pub fn view(&self) -> CurveRef<'_> {
            let stride = self.stride();
            let len = usize::from(self.len);
            let nodes = &self.node_words[..len * NODE_WORDS];
            let segs = &self.seg_words[..(len - 1) * stride];
            let mut v = CurveRef {
                nodes: bytemuck::cast_slice(nodes),
                linear: &[],
                cubic: &[],
                rising: true,
                whole: false,
            };
            if self.cubic {
                v.cubic = bytemuck::cast_slice(segs);
            } else {
                v.linear = bytemuck::cast_slice(segs);
            }
            v.rising = v.y(len - 1) >= v.y(0);
            v.whole = (0..len).all(|i| word(nodes, i * NODE_WORDS) == 0)
                && (0..len - 1).all(|i| (1..=32).contains(&v.segment_constants(i).sh));
            v
        }

        /// Number of nodes.
        pub fn len(&self) -> usize {
            usize::from(self.len)
        }

        /// Always false: a curve has at least two nodes.
        pub fn is_empty(&self) -> bool {
            self.len == 0
        }

        /// The interpolation in use.
        pub fn interpolation(&self) -> Interpolation {
            self.view().interpolation()
        }

        /// Whether the values rise along the table (last ≥ first).
        pub fn is_rising(&self) -> bool {
            self.view().is_rising()
        }

        /// Node `i`, if it exists.
        pub fn node(&self, i: usize) -> Option<Node> {
            self.view().node(i)
        }

        /// [`CurveRef::eval`].
        pub fn eval(&self, s: Shift) -> CurveValue {
            self.view().eval(s)
        }

        /// [`CurveRef::eval_f64`].
        pub fn eval_f64(&self, s: f64) -> f64 {
            self.view().eval_f64(s)
        }

        /// [`CurveRef::error_bound`].
        pub fn error_bound(&self, s: Shift) -> f64 {
            self.view().error_bound(s)
        }

        /// Whether the curve lies on whole levels
        /// ([`CurveRef::on_whole_levels`]).
        pub fn on_whole_levels(&self) -> bool {
            self.view().on_whole_levels()
        }
    }

    /// One segment's constants (module docs): the width shift and the slope's
    /// (linear) or 1/w's (cubic) mantissa.
    fn segment_of(a: Node, b: Node, interpolation: Interpolation) -> Result<Segment, CurveError> {
        let w = b.shift.raw_q40().abs_diff(a.shift.raw_q40());
        let sh = width_shift(w);
        let w_red = round_shr_u64(w, u32::from(sh)).max(1);
        let dy = i64::from(b.value) - i64::from(a.value);
        let (k, k_exp) = match interpolation {
            Interpolation::Linear => scaled_ratio(dy, w_red),
            // m = round(2^(30+e)/w'), so t = d·m·2^-e is d/w' in Q30.
            Interpolation::MonotoneCubic => scaled_ratio(1 << 30, w_red),
        }
        .ok_or(CurveError::SegmentTooSteep)?;
        Ok(Segment {
            sh,
            k,
            k_exp,
            c1_q8: 0,
            c2_q8: 0,
            c3_q8: 0,
        })
    }

    /// Derivatives must have the sign of the table's direction.
    fn check_derivative_signs(nodes: &[Node], derivatives_q16: &[i64]) -> Result<(), CurveError> {
        let rising = nodes.last().map(|l| l.value).unwrap_or(0)
            >= nodes.first().map(|f| f.value).unwrap_or(0);
        if derivatives_q16
            .iter()
            .any(|&d| (rising && d < 0) || (!rising && d > 0))
        {
            return Err(CurveError::BadDerivatives);
        }
        Ok(())
    }

    /// A cubic segment's Horner coefficients (c1, c2, c3) in Q8 output units
    /// from its end nodes and their derivatives dy/ds in Q47.16. The
    /// derivatives' signs are checked first ([`check_derivative_signs`]), so
    /// the coefficients fit `i32` ([`Segment`]); `SegmentTooSteep` if not.
    fn cubic_terms(
        a: Node,
        b: Node,
        d0_q16: i64,
        d1_q16: i64,
    ) -> Result<(i32, i32, i32), CurveError> {
        let w = i128::from(b.shift.raw_q40()) - i128::from(a.shift.raw_q40());
        // D = w · y' in Q8: w (Q40) · y' (Q16) · 2^-48, |D| < 2^21 units.
        let term = |d: i64| -> Result<i64, CurveError> {
            let r = (w * i128::from(d) + (1 << 47)) >> 48;
            match i64::try_from(r) {
                Ok(v) if v.unsigned_abs() < 1 << 29 => Ok(v),
                _ => Err(CurveError::SegmentTooSteep),
            }
        };
        let d0 = term(d0_q16)?;
        let d1 = term(d1_q16)?;
        let dy = (i64::from(b.value) - i64::from(a.value)) << 8;
        if dy.unsigned_abs() >= 1 << 29 {
            return Err(CurveError::SegmentTooSteep);
        }
        // Fritsch & Carlson (SIAM J. Numer. Anal. 17(2), 1980): with both
        // tangents between 0 and 3 steps the cubic is monotone, so it stays
        // between y0 and y1 and the stated bound holds without clamping. Two
        // Q8 units of slack for the rounding of stored derivatives;
        // Fritsch–Butland tangents are at most 3 (inside) and 2 (at the ends)
        // steps of either neighbouring segment.
        let limit = 3 * dy.unsigned_abs() + 2;
        if d0.unsigned_abs() > limit || d1.unsigned_abs() > limit {
            return Err(CurveError::BadDerivatives);
        }
        let fit = |v: i64| i32::try_from(v).map_err(|_| CurveError::SegmentTooSteep);
        Ok((fit(d0)?, fit(3 * dy - 2 * d0 - d1)?, fit(d0 + d1 - 2 * dy)?))
    }

    /// Node derivatives dy/ds of the monotone piecewise cubic (Fritsch &
    /// Butland 1984, as SciPy's `PchipInterpolator`): weighted harmonic means
    /// w1 = 2h_k + h_{k−1}, w2 = h_k + 2h_{k−1} at interior nodes, zero where the
    /// neighbouring secants differ in sign or either is zero, and the
    /// three-point shape-preserving formula at the ends (two nodes: the secant).
    /// `x` strictly increasing; returns `None` otherwise or when lengths differ
    /// or exceed [`MAX_NODES`]. Host and test helper (plain `f64`).
    pub fn pchip_derivatives(x: &[f64], y: &[f64]) -> Option<[f64; MAX_NODES]> {
        let n = x.len();
        if n != y.len() || !(2..=MAX_NODES).contains(&n) {
            return None;
        }
        let mut h = [0.0; MAX_NODES];
        let mut m = [0.0; MAX_NODES];
        for k in 0..n - 1 {
            h[k] = x[k + 1] - x[k];
            if h[k].partial_cmp(&0.0) != Some(core::cmp::Ordering::Greater) {
                return None;
            }
            m[k] = (y[k + 1] - y[k]) / h[k];
        }
        let mut d = [0.0; MAX_NODES];
        if n == 2 {
            d[0] = m[0];
            d[1] = m[0];
            return Some(d);
        }
        for k in 1..n - 1 {
            if m[k - 1] * m[k] <= 0.0 {
                d[k] = 0.0;
            } else {
                let w1 = 2.0 * h[k] + h[k - 1];
                let w2 = h[k] + 2.0 * h[k - 1];
                d[k] = (w1 + w2) / (w1 / m[k - 1] + w2 / m[k]);
            }
        }
        // numpy's sign: −1, 0 or 1.
        let sign = |v: f64| (v > 0.0) as i8 - (v < 0.0) as i8;
        let edge = |h0: f64, h1: f64, m0: f64, m1: f64| {
            let d = ((2.0 * h0 + h1) * m0 - h0 * m1) / (h0 + h1);
            if sign(d) != sign(m0) {
                return 0.0;
            }
            if sign(m0) != sign(m1) && d.abs() > 3.0 * m0.abs() {
                return 3.0 * m0;
            }
            d
        };
        d[0] = edge(h[0], h[1], m[0], m[1]);
        d[n - 1] = edge(h[n - 2], h[n - 3], m[n - 2], m[n - 3]);
        Some(d)
    }
}

/// `x / 2^sh` rounded to nearest, ties away from zero, as a `u32`, for
/// `x / 2^(sh − 1)` known to be below 2^32 (so a result below 2^31; `sh` in
/// 0..=95, larger gives 0). On a 32-bit core the shift is done on the two
/// words, never as a 64-bit library call, and the common shifts, 1..=32,
/// take one test. Exact under that condition; wraps (no panic) otherwise.
#[inline(always)]
fn round_shr_to_u32(x: u64, sh: u8) -> u32 {
    let (hi, lo) = ((x >> 32) as u32, x as u32);
    let sh = u32::from(sh);
    // t = x >> (sh − 1): the result with its half bit.
    let t = if sh.wrapping_sub(1) < 32 {
        // sh in 1..=32. At sh = 1, hi is 0 (t = x < 2^32), and the
        // wrapping shift by 32 leaves it 0.
        // (sh − 1 and 33 − sh lie in 0..=32: neither wraps.)
        lo.wrapping_shr(sh.wrapping_sub(1)) | hi.wrapping_shl(33u32.wrapping_sub(sh))
    } else if sh == 0 {
        return lo;
    } else if sh <= 64 {
        // sh in 33..=64 (0 and 1..=32 taken above): sh − 33 in 0..=31.
        hi.wrapping_shr(sh.wrapping_sub(33))
    } else {
        0
    };
    // t >> 1 < 2^31: adding the half bit cannot wrap.
    (t >> 1).wrapping_add(t & 1)
}

/// c·t·2^-16 rounded to nearest (ties up) for t ≤ 2^16: the Horner steps
/// of the cubic. From c's 16-bit halves, two 32-bit products (c's high
/// half times t is exact in i32 for |c| < 2^31, its low half times t
/// below 2^32): on a Cortex-M0 about a third of a 32 × 32 → 64-bit
/// product's instructions.
#[inline(always)]
fn mul_q16(c: i32, t: u32) -> i32 {
    let high = (c >> 16).wrapping_mul(t as i32);
    let low = ((c as u32 & 0xFFFF) * t + 0x8000) >> 16; // < 2^16 + 1
    high.wrapping_add(low as i32)
}

/// Signed × unsigned 32-bit product, exact in `i64` (the tests'
/// reference evaluation).
#[cfg(test)]
fn mul_i32_u32(a: i32, b: u32) -> i64 {
    let m = mul_u32_wide(a.unsigned_abs(), b);
    // |a| ≤ 2^31 and b < 2^32: m < 2^63, fits i64.
    let m = m as i64;
    if a < 0 {
        -m
    } else {
        m
    }
}

/// `x / 2^sh` rounded to nearest, ties away from zero, for `i64` (the
/// tests' reference evaluation).
#[cfg(test)]
fn round_shr_i64(x: i64, sh: u32) -> i64 {
    let r = round_shr_u64(x.unsigned_abs(), sh) as i64; // ≤ 2^63 / 2 for sh ≥ 1
    if x < 0 {
        -r
    } else {
        r
    }
}

#[cfg(test)]
mod tests {
    use super::owned::{scaled_ratio, scaled_ratio_from};
    use super::*;
    use proptest::prelude::*;

    fn node(s: f64, v: i32) -> Node {
        Node::new(Shift::from_f64(s).unwrap(), v)
    }

    fn pchip_curve(x: &[f64], y: &[i32]) -> Curve {
        let yf: Vec<f64> = y.iter().map(|&v| f64::from(v)).collect();
        let d = pchip_derivatives(x, &yf).unwrap();
        let nodes: Vec<Node> = x.iter().zip(y).map(|(&s, &v)| node(s, v)).collect();
        let dq: Vec<i64> = d[..x.len()]
            .iter()
            .map(|v| (v * 65_536.0).round() as i64)
            .collect();
        Curve::monotone_cubic(&nodes, &dq).unwrap()
    }

    /// docs/references.md, Monotone interpolation cases: SciPy 1.17.1 `PchipInterpolator`, computed; data
    /// sets A, B and D of that table. Checked on the derivatives (1e-9) and,
    /// through the f64 twin, on the interpolated values (1e-9 after scaling:
    /// the nodes are scaled by 1000 so the integer values are exact).
    #[test]
    fn pchip_matches_published_scipy_values() {
        // A: x=[0,1,2,3], y=[0,1,0,1]: d = [2, 0, 0, 2].
        let d = pchip_derivatives(&[0.0, 1.0, 2.0, 3.0], &[0.0, 1.0, 0.0, 1.0]).unwrap();
        assert_eq!(&d[..4], &[2.0, 0.0, 0.0, 2.0]);
        // B: y = x² on 0..4: d = [0, 1.5, 3.75, 5.8333333333, 8].
        let d = pchip_derivatives(&[0.0, 1.0, 2.0, 3.0, 4.0], &[0.0, 1.0, 4.0, 9.0, 16.0]).unwrap();
        for (got, want) in d[..5].iter().zip([0.0, 1.5, 3.75, 5.833_333_333_3, 8.0]) {
            assert!((got - want).abs() < 1e-9, "{got} {want}");
        }
        // D: non-uniform x=[1,2,4,5], y=[1,3,4,8]: d = [2.5, 0.857…, 0.972…, 5.1666…].
        let d = pchip_derivatives(&[1.0, 2.0, 4.0, 5.0], &[1.0, 3.0, 4.0, 8.0]).unwrap();
        for (got, want) in
            d[..4]
                .iter()
                .zip([2.5, 0.857_142_857_1, 0.972_972_973_0, 5.166_666_666_7])
        {
            assert!((got - want).abs() < 1e-9, "{got} {want}");
        }
        // Values of B at 0.5, 1.5, 2.5, 3.5 and of D at 1.5, 3, 4.5, first by
        // the cubic Hermite in f64 with these derivatives (1e-9), then by the
        // fixed-point curve on the same data scaled to integer units (x/10,
        // y·1e4): within half a unit plus the Q8 tangent rounding.
        let hermite = |x: &[f64], y: &[f64], q: f64| {
            let d = pchip_derivatives(x, y).unwrap();
            let i = (0..x.len() - 1).find(|&i| q <= x[i + 1]).unwrap();
            let h = x[i + 1] - x[i];
            let t = (q - x[i]) / h;
            let (t2, t3) = (t * t, t * t * t);
            y[i] * (2.0 * t3 - 3.0 * t2 + 1.0)
                + h * d[i] * (t3 - 2.0 * t2 + t)
                + y[i + 1] * (3.0 * t2 - 2.0 * t3)
                + h * d[i + 1] * (t3 - t2)
        };
        let (bx, by) = ([0.0, 1.0, 2.0, 3.0, 4.0], [0.0, 1.0, 4.0, 9.0, 16.0]);
        let b_curve = pchip_curve(
            &[0.0, 0.1, 0.2, 0.3, 0.4],
            &[0, 10_000, 40_000, 90_000, 160_000],
        );
        for (q, want) in [
            (0.5, 0.3125),
            (1.5, 2.21875),
            (2.5, 6.239_583_333_3),
            (3.5, 12.229_166_666_7),
        ] {
            assert!((hermite(&bx, &by, q) - want).abs() < 1e-9, "B at {q}");
            let fixed = f64::from(b_curve.eval(Shift::from_f64(q / 10.0).unwrap()).value);
            assert!((fixed - want * 1e4).abs() <= 0.51, "B at {q}: {fixed}");
        }
        let (dx, dy) = ([1.0, 2.0, 4.0, 5.0], [1.0, 3.0, 4.0, 8.0]);
        let d_curve = pchip_curve(&[0.1, 0.2, 0.4, 0.5], &[10_000, 30_000, 40_000, 80_000]);
        for (q, want) in [
            (1.5, 2.205_357_142_9),
            (3.0, 3.471_042_471_0),
            (4.5, 5.475_788_288_3),
        ] {
            assert!((hermite(&dx, &dy, q) - want).abs() < 1e-9, "D at {q}");
            let fixed = f64::from(d_curve.eval(Shift::from_f64(q / 10.0).unwrap()).value);
            assert!((fixed - want * 1e4).abs() <= 0.51, "D at {q}: {fixed}");
        }
        // A at 0.5, 1.5, 2.5: 0.75, 0.5, 0.25 (not monotone data: Hermite only).
        for (q, want) in [(0.5, 0.75), (1.5, 0.5), (2.5, 0.25)] {
            assert!((hermite(&[0.0, 1.0, 2.0, 3.0], &[0.0, 1.0, 0.0, 1.0], q) - want).abs() < 1e-9);
        }
    }

    /// Data set C (a step): all derivatives zero, no overshoot (the natural
    /// spline overshoots to 1.100); docs/references.md, Monotone interpolation cases.
    #[test]
    fn pchip_does_not_overshoot_a_step() {
        let x: Vec<f64> = (0..5).map(|i| f64::from(i) / 10.0).collect();
        let c = pchip_curve(&x, &[0, 0, 1000, 1000, 1000]);
        for (q, want) in [(0.05, 0), (0.15, 500), (0.25, 1000)] {
            assert_eq!(c.eval(Shift::from_f64(q).unwrap()).value, want);
        }
        let mut s = 0.0;
        while s < 0.4 {
            let v = c.eval(Shift::from_f64(s).unwrap()).value;
            assert!((0..=1000).contains(&v));
            s += 0.001;
        }
    }

    #[test]
    fn malformed_tables_each_have_an_error() {
        assert_eq!(Curve::linear(&[]), Err(CurveError::TooFewNodes));
        assert_eq!(Curve::linear(&[node(0.0, 1)]), Err(CurveError::TooFewNodes));
        let many: Vec<Node> = (0..65).map(|i| node(f64::from(i) * 0.01, i)).collect();
        assert_eq!(Curve::linear(&many), Err(CurveError::TooManyNodes));
        assert!(Curve::linear(&many[..64]).is_ok());
        assert_eq!(
            Curve::linear(&[node(0.1, 1), node(0.1, 2)]),
            Err(CurveError::ShiftsNotIncreasing)
        );
        assert_eq!(
            Curve::linear(&[node(0.2, 1), node(0.1, 2)]),
            Err(CurveError::ShiftsNotIncreasing)
        );
        assert_eq!(
            Curve::linear(&[node(0.0, 1), node(0.1, 3), node(0.2, 2)]),
            Err(CurveError::NotMonotone)
        );
        assert_eq!(
            Curve::linear(&[node(0.0, 0), node(0.1, 1 << 30)]),
            Err(CurveError::SegmentTooSteep)
        );
        assert_eq!(
            Curve::monotone_cubic(&[node(0.0, 0), node(0.1, 10)], &[1]),
            Err(CurveError::BadDerivatives)
        );
        assert_eq!(
            Curve::monotone_cubic(&[node(0.0, 0), node(0.1, 10)], &[1, -1]),
            Err(CurveError::BadDerivatives)
        );
        // Tangents up to three steps pass, beyond them the cubic would
        // overshoot its segment: refused. dy/ds of 300 per unit shift over
        // a 0.1-wide segment of step 10 is a tangent term of 30 units.
        let q16 = |d: f64| (d * 65_536.0).round() as i64;
        assert!(Curve::monotone_cubic(&[node(0.0, 0), node(0.1, 10)], &[q16(300.0), 0]).is_ok());
        assert_eq!(
            Curve::monotone_cubic(&[node(0.0, 0), node(0.1, 10)], &[q16(310.0), 0]),
            Err(CurveError::BadDerivatives)
        );
        assert_eq!(
            Curve::monotone_cubic(&[node(0.0, 0), node(0.1, 10)], &[0, q16(310.0)]),
            Err(CurveError::BadDerivatives)
        );
    }

    #[test]
    fn clamps_and_reports_outside_the_table() {
        let c = Curve::linear(&[node(-0.3, 500), node(-0.02, 5000)]).unwrap();
        let below = c.eval(Shift::from_raw_q40(i64::MIN));
        assert_eq!((below.value, below.status), (500, CurveStatus::BelowRange));
        let above = c.eval(Shift::from_raw_q40(i64::MAX));
        assert_eq!((above.value, above.status), (5000, CurveStatus::AboveRange));
        let edge = c.eval(Shift::from_f64(-0.3).unwrap());
        assert_eq!((edge.value, edge.status), (500, CurveStatus::InRange));
        let edge = c.eval(Shift::from_f64(-0.02).unwrap());
        assert_eq!((edge.value, edge.status), (5000, CurveStatus::InRange));
        // A flat segment gives its constant value.
        let flat = Curve::linear(&[node(0.0, 7), node(0.5, 7), node(1.0, 9)]).unwrap();
        assert_eq!(flat.eval(Shift::from_f64(0.25).unwrap()).value, 7);
        // Falling values work too.
        let falling = Curve::linear(&[node(0.0, 100), node(1.0, -100)]).unwrap();
        assert_eq!(falling.eval(Shift::from_f64(0.75).unwrap()).value, -50);
    }

    /// A random monotone table in the domain: 2..=64 nodes, shifts in
    /// [−0.9, 7], steps up to 2^20 output units.
    fn table() -> impl Strategy<Value = (Vec<Node>, bool)> {
        (2usize..=MAX_NODES, any::<bool>(), any::<u64>()).prop_map(|(n, rising, seed)| {
            let mut st = seed | 1;
            let mut next = move || {
                st ^= st << 13;
                st ^= st >> 7;
                st ^= st << 17;
                st
            };
            let mut xs: Vec<i64> = (0..n)
                .map(|_| {
                    Shift::from_f64(-0.9).unwrap().raw_q40()
                        + (next() % (8_800_000_000_000u64)) as i64
                })
                .collect();
            xs.sort_unstable();
            xs.dedup();
            let mut y = i64::from(next() as i32 / 4);
            let nodes: Vec<Node> = xs
                .iter()
                .map(|&x| {
                    let step = (next() % (1 << 18)) as i64 * if next() % 5 == 0 { 0 } else { 1 };
                    y = if rising {
                        (y + step).min(i32::MAX as i64)
                    } else {
                        (y - step).max(i32::MIN as i64)
                    };
                    Node::new(Shift::from_raw_q40(x), y as i32)
                })
                .collect();
            (nodes, rising)
        })
    }

    /// The evaluation as first written: `i64` throughout (64-bit shifts,
    /// `i64` products). [`Curve::eval`] now works in 32-bit words on a
    /// 32-bit core; the property test below holds it bit-identical to this.
    fn eval_reference(c: &Curve, s: Shift) -> CurveValue {
        let v = c.view();
        let x = |i: usize| v.x(i);
        let y = |i: usize| v.y(i);
        let s = s.raw_q40();
        let n = c.len();
        let last_i = n - 1;
        if s < x(0) {
            return CurveValue {
                value: y(0),
                status: CurveStatus::BelowRange,
            };
        }
        if s > x(last_i) {
            return CurveValue {
                value: y(last_i),
                status: CurveStatus::AboveRange,
            };
        }
        if s == x(last_i) {
            return CurveValue {
                value: y(last_i),
                status: CurveStatus::InRange,
            };
        }
        // A plain scan, independent of `Curve::segment`'s halving search.
        let i = (0..last_i).rev().find(|&i| x(i) <= s).unwrap();
        let seg = v.segment_constants(i);
        let (x0, y0, y1) = (x(i), y(i), y(i + 1));
        let d = round_shr_u64(s.abs_diff(x0), u32::from(seg.sh)).min((1 << 31) - 1) as u32;
        let delta = match c.interpolation() {
            Interpolation::Linear => round_shr_i64(mul_i32_u32(seg.k, d), u32::from(seg.k_exp)),
            Interpolation::MonotoneCubic => {
                let t = round_shr_u64(
                    mul_u32_wide(seg.k.unsigned_abs(), d),
                    u32::from(seg.k_exp) + 14,
                )
                .min(1 << 16) as i64;
                // Each product rounded to Q8 (floor of x + 1/2), then to units.
                let q8 = |c: i64| (c * t + (1 << 15)) >> 16;
                let acc = i64::from(seg.c2_q8) + q8(i64::from(seg.c3_q8));
                let acc = i64::from(seg.c1_q8) + q8(acc);
                (q8(acc) + 128) >> 8
            }
        };
        let (lo, hi) = if y0 <= y1 { (y0, y1) } else { (y1, y0) };
        CurveValue {
            value: (i64::from(y0) + delta).clamp(i64::from(lo), i64::from(hi)) as i32,
            status: CurveStatus::InRange,
        }
    }

    /// Tables at the edges of the fixed-point path: widths from one raw
    /// unit (sh = 0, small exponents) to 2^46, value steps up to 2^30 − 1
    /// (linear) or 2^21 − 1 (cubic), flat segments, either direction.
    fn edge_table() -> impl Strategy<Value = (Vec<Node>, Option<Vec<i64>>)> {
        stepped_table(false)
    }

    /// [`edge_table`]'s tables, or with `whole` tables on whole levels (x
    /// a multiple of 2^32, from level −2^24 up, steps of 1 to 2^26
    /// levels), as a volume table's.
    fn stepped_table(whole: bool) -> impl Strategy<Value = (Vec<Node>, Option<Vec<i64>>)> {
        (
            proptest::collection::vec(
                (
                    0u32..if whole { 27 } else { 47 },
                    any::<u64>(),
                    0u32..31,
                    any::<u32>(),
                    any::<bool>(),
                ),
                1..8,
            ),
            any::<i32>(),
            any::<bool>(),
            any::<bool>(),
            -(1i64 << 24)..(1 << 24),
        )
            .prop_map(move |(steps, y_start, rising, cubic, level0)| {
                let (mut x, unit) = if whole {
                    (level0 << 32, 32)
                } else {
                    (Shift::from_f64(-0.9).unwrap().raw_q40(), 0)
                };
                let mut y = i64::from(y_start);
                let max_bits = if cubic { 21 } else { 30 };
                let mut nodes = vec![Node::new(Shift::from_raw_q40(x), y_start)];
                for (w_bits, w, dy_bits, dy, flat) in steps {
                    x += (1 + (w % (1u64 << w_bits)) as i64) << unit;
                    let dy = if flat {
                        0
                    } else {
                        i64::from(dy % (1u32 << dy_bits.min(max_bits)))
                    };
                    y = if rising { y + dy } else { y - dy }
                        .clamp(i64::from(i32::MIN), i64::from(i32::MAX));
                    nodes.push(Node::new(Shift::from_raw_q40(x), y as i32));
                }
                let ders = cubic.then(|| {
                    let xf: Vec<f64> = nodes.iter().map(|n| n.shift.raw_q40() as f64).collect();
                    let yf: Vec<f64> = nodes.iter().map(|n| f64::from(n.value)).collect();
                    // dy/ds in Q16 per unit shift (2^40 raw units).
                    pchip_derivatives(&xf, &yf).unwrap()[..nodes.len()]
                        .iter()
                        .map(|d| (d * 65_536.0 * 1_099_511_627_776.0).round() as i64)
                        .collect()
                });
                (nodes, ders)
            })
    }

    proptest! {
        /// The word-wise rounding shift equals the 64-bit one wherever its
        /// condition holds (x / 2^(sh − 1) below 2^32).
        #[test]
        fn word_rounding_shift_equals_the_64_bit_one(x: u64, sh in 0u8..=96) {
            let fits = match sh {
                0 => x < 1 << 32,
                _ => u32::from(sh) > 64 || x >> (sh - 1) < 1 << 32,
            };
            if fits {
                prop_assert_eq!(u64::from(round_shr_to_u32(x, sh)), round_shr_u64(x, u32::from(sh)));
            }
        }

        #[test]
        fn word_rounding_shift_in_range(t in 0u64..(1 << 32), sh in 1u8..=64) {
            let x = t << (sh - 1);
            prop_assert_eq!(u64::from(round_shr_to_u32(x, sh)), round_shr_u64(x, u32::from(sh)));
        }
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(2000))]

        /// Linear: within 0.5 unit + the stated segment term of the f64 twin.
        #[test]
        fn linear_within_bound((nodes, _) in table(), q in 0.0f64..1.0) {
            prop_assume!(nodes.len() >= 2);
            let c = Curve::linear(&nodes).map_err(|e| TestCaseError::fail(format!("a valid table was refused: {e}")))?;
            let lo = nodes[0].shift.to_f64();
            let hi = nodes[nodes.len() - 1].shift.to_f64();
            let s = Shift::from_f64(lo + (hi - lo) * q).unwrap();
            let fixed = f64::from(c.eval(s).value);
            let float = c.eval_f64(s.to_f64());
            prop_assert!((fixed - float).abs() <= 0.5 + 2f64.powi(-28) * f64::from(1u32 << 20) + 1e-6, "{fixed} {float}");
        }

        /// Cubic: within the bound; monotone on monotone data; passes
        /// through the knots.
        #[test]
        fn cubic_within_bound_and_monotone((nodes, rising) in table(), qs in proptest::collection::vec(0.0f64..1.0, 1..20)) {
            prop_assume!(nodes.len() >= 2);
            let x: Vec<f64> = nodes.iter().map(|n| n.shift.to_f64()).collect();
            let y: Vec<f64> = nodes.iter().map(|n| f64::from(n.value)).collect();
            let d = pchip_derivatives(&x, &y).unwrap();
            let dq: Vec<i64> = d[..x.len()].iter().map(|v| (v * 65_536.0).round() as i64).collect();
            let Ok(c) = Curve::monotone_cubic(&nodes, &dq) else { return Ok(()) };
            for n in &nodes {
                prop_assert_eq!(c.eval(n.shift).value, n.value);
            }
            let (lo, hi) = (x[0], x[x.len() - 1]);
            let mut qs = qs;
            qs.sort_by(f64::total_cmp);
            let mut prev: Option<i32> = None;
            for q in qs {
                let s = Shift::from_f64(lo + (hi - lo) * q).unwrap();
                let v = c.eval(s).value;
                let float = c.eval_f64(s.to_f64());
                prop_assert!((f64::from(v) - float).abs() <= c.error_bound(s) + 1e-6, "{v} {float}");
                if let Some(p) = prev {
                    let ordered = if rising { v >= p } else { v <= p };
                    prop_assert!(ordered, "not monotone: {} then {}", p, v);
                }
                prev = Some(v);
            }
        }

        /// `check` accepts and refuses exactly what the constructors do.
        #[test]
        fn check_agrees_with_the_constructors(xs in proptest::collection::vec(any::<i64>(), 0..8), ys in proptest::collection::vec(any::<i32>(), 0..8), ds in proptest::collection::vec(any::<i64>(), 0..8), (nodes, _) in table()) {
            let random: Vec<Node> = xs.iter().zip(&ys).map(|(&x, &y)| Node::new(Shift::from_raw_q40(x), y)).collect();
            for n in [&random, &nodes] {
                prop_assert_eq!(Curve::check(n, None), Curve::linear(n).map(|_| ()));
                prop_assert_eq!(Curve::check(n, Some(&ds)), Curve::monotone_cubic(n, &ds).map(|_| ()));
                let zeros = vec![0i64; n.len()];
                prop_assert_eq!(Curve::check(n, Some(&zeros)), Curve::monotone_cubic(n, &zeros).map(|_| ()));
            }
        }

        /// The search that starts from the operands' bit lengths finds
        /// what the search from exponent 0 finds.
        #[test]
        fn scaled_ratio_from_bit_lengths_equals_the_stepwise_search(num in -(1i64 << 31)..(1i64 << 31), den in 1u64..=(1 << 32), small in 1u64..64) {
            prop_assert_eq!(scaled_ratio(num, den), scaled_ratio_from(num, den, 0));
            prop_assert_eq!(scaled_ratio(num, small), scaled_ratio_from(num, small, 0));
            prop_assert_eq!(scaled_ratio(1 << 30, den), scaled_ratio_from(1 << 30, den, 0));
        }

        #[test]
        fn eval_in_words_equals_the_i64_evaluation((nodes, ders) in edge_table(), qs in proptest::collection::vec((0.0f64..=1.0, any::<i64>(), -3i64..3), 1..16)) {
            let built = match &ders {
                Some(d) => Curve::monotone_cubic(&nodes, d),
                None => Curve::linear(&nodes),
            };
            let Ok(c) = built else { return Ok(()) };
            // What the host builds, the firmware's validation accepts, and
            // a segment's slope or reciprocal one unit off it refuses.
            let v = c.view();
            let (n, sg) = v.words();
            let cubic = ders.is_some();
            prop_assert_eq!(CurveRef::from_words(n, sg, v.len(), cubic), Ok(v));
            let mut bad = sg.to_vec();
            let stride = if cubic { CUBIC_SEGMENT_WORDS } else { LINEAR_SEGMENT_WORDS };
            let (_, pick, up) = qs[0];
            let at = (pick.unsigned_abs() as usize % (v.len() - 1)) * stride + 1;
            if bad[at] != 0 {
                bad[at] = (bad[at] as i32).wrapping_add(if up >= 0 { 1 } else { -1 }) as u32;
                prop_assert!(CurveRef::from_words(n, &bad, v.len(), cubic).is_err());
            }
            for (q, raw, nudge) in qs {
                // Inside a segment, at and beside nodes, and anywhere.
                let (lo, hi) = (nodes[0].shift.raw_q40(), nodes[nodes.len() - 1].shift.raw_q40());
                let inside = lo + ((hi - lo) as f64 * q) as i64;
                let near = nodes[(raw.unsigned_abs() % nodes.len() as u64) as usize].shift.raw_q40() + nudge;
                for s in [inside, near, raw] {
                    // The level reader's out-of-line copy too.
                    prop_assert_eq!(c.view().eval_shared(s), c.eval(Shift::from_raw_q40(s)), "at {}", s);
                    let s = Shift::from_raw_q40(s);
                    prop_assert_eq!(c.eval(s), eval_reference(&c, s), "at {:?}", s);
                }
            }
        }
        /// On a curve on whole levels, the 32-bit evaluation equals the
        /// general one at every level in and beside the table; a node off
        /// a whole level takes the table off the 32-bit path.
        #[test]
        fn whole_level_evaluation_equals_the_general_one((nodes, ders) in stepped_table(true), qs in proptest::collection::vec((0.0f64..=1.0, any::<i32>(), -3i32..3), 1..16)) {
            let built = match &ders {
                Some(d) => Curve::monotone_cubic(&nodes, d),
                None => Curve::linear(&nodes),
            };
            let Ok(c) = built else { return Ok(()) };
            prop_assert!(c.on_whole_levels());
            let level = |n: &Node| (n.shift.raw_q40() >> 32) as i32;
            let (lo, hi) = (level(&nodes[0]), level(&nodes[nodes.len() - 1]));
            for (q, raw, nudge) in qs {
                let inside = lo + (f64::from(hi - lo) * q) as i32;
                let near = level(&nodes[(raw.unsigned_abs() as usize) % nodes.len()]) + nudge;
                for v in [inside, near, raw, lo - 1, hi, hi + 1] {
                    let at = i64::from(v) << 32;
                    prop_assert_eq!(c.view().eval_whole(v), c.eval(Shift::from_raw_q40(at)), "at {}", v);
                    // The level reader's out-of-line evaluation, which takes
                    // the whole-level path here, and the general one just
                    // off the level.
                    prop_assert_eq!(c.view().eval_shared(at), c.eval(Shift::from_raw_q40(at)), "at {}", v);
                    let off_level = at.wrapping_add(i64::from(nudge));
                    prop_assert_eq!(c.view().eval_shared(off_level), c.eval(Shift::from_raw_q40(off_level)), "at {} + {}", v, nudge);
                }
            }
            let mut off = nodes.clone();
            let k = off.len() - 1;
            off[k] = Node::new(Shift::from_raw_q40(off[k].shift.raw_q40() + 1), off[k].value);
            if let Ok(c) = Curve::linear(&off) {
                prop_assert!(!c.on_whole_levels());
            }
        }

        /// The readers' inlined reach check equals `in_reach` on every
        /// reading out of range.
        #[test]
        fn within_reach_is_in_reach((nodes, _) in table(), raw: i64, near: i64) {
            prop_assume!(nodes.len() >= 2);
            let Ok(c) = Curve::linear(&nodes) else { return Ok(()) };
            let view = c.view();
            let (first, last) = (nodes[0].shift.raw_q40(), nodes[nodes.len() - 1].shift.raw_q40());
            let w = last.saturating_sub(first);
            let (lo, hi) = (first.saturating_sub(w), last.saturating_add(w));
            let ends = [lo, lo.saturating_sub(1), hi, hi.saturating_add(1), first.saturating_sub(1), last.saturating_add(1)];
            let span = w.saturating_mul(4).max(1);
            let nears = [first.saturating_add(near % span), last.saturating_add(near % span)];
            for q in [raw].into_iter().chain(nears).chain(ends) {
                let status = view.eval(Shift::from_raw_q40(q)).status;
                let want = status == CurveStatus::InRange || crate::reader::in_reach(q, &view);
                prop_assert_eq!(view.within_reach(q, status), want, "at {}", q);
            }
        }

        #[test]
        fn any_shift_is_safe((nodes, _) in table(), raw: i64) {
            prop_assume!(nodes.len() >= 2);
            let Ok(c) = Curve::linear(&nodes) else { return Ok(()) };
            let v = c.eval(Shift::from_raw_q40(raw));
            let (first, last) = (nodes[0].shift.raw_q40(), nodes[nodes.len() - 1].shift.raw_q40());
            let want = if raw < first { CurveStatus::BelowRange } else if raw > last { CurveStatus::AboveRange } else { CurveStatus::InRange };
            prop_assert_eq!(v.status, want);
        }
    }
}
