//! The live link's receiving side: a tolerant decoder of link format 1
//! (docs/link.md) and the listener built on it ([`listen`]).
//!
//! The [`Decoder`] takes bytes as they come, in pieces of any size, and
//! hands out every frame that checks; a chunk that does not is counted as
//! bad and dropped, sequence gaps are counted as dropped frames, and
//! nothing is ever fatal: any byte string is valid input.
//!
//! ```
//! use lc_core::counting::CountPair;
//! use lc_core::link::{Counts, Encoder, Record, Thermal};
//! use lc_host::link::{Decoder, Event};
//!
//! let mut enc = Encoder::new();
//! let counts = Counts { channel: 2, pair: CountPair::new(16_384, 139_000),
//!     companion: None, thermal: Thermal::None, ring_count: None };
//! let mut wire = Vec::new();
//! for _ in 0..3 {
//!     wire.extend_from_slice(enc.encode(&Record::Counts(counts)).as_bytes());
//! }
//! wire[40] ^= 0x10; // damage the second frame
//! let mut dec = Decoder::new();
//! let mut got = Vec::new();
//! dec.push(&wire, |e| if let Event::Frame { sequence, .. } = e { got.push(sequence) });
//! dec.finish(|_| {});
//! assert_eq!(got, [0, 2]);
//! assert_eq!((dec.stats().bad, dec.stats().dropped), (1, 1));
//! ```

pub mod listen;

use lc_core::link::{unstuff, FrameError, Record, MAX_BODY, MAX_FRAME};

/// What the decoder counted.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, serde::Serialize)]
pub struct LinkStats {
    /// Bytes received.
    pub bytes: u64,
    /// Frames accepted.
    pub frames: u64,
    /// Non-empty chunks that were not frames (docs/link.md, "Intact, bad
    /// and dropped frames").
    pub bad: u64,
    /// Sequence numbers missing between accepted frames of one run.
    pub dropped: u64,
}

/// What the decoder found.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Event {
    /// A frame that checks.
    Frame {
        /// Its sequence number.
        sequence: u16,
        /// Frames missing just before it (counted in [`LinkStats::dropped`]).
        dropped_before: u16,
        /// The record.
        record: Record,
    },
    /// A bad chunk, and why.
    Bad(FrameError),
}

/// The tolerant stream decoder.
#[derive(Clone, Debug, Default)]
pub struct Decoder {
    chunk: Vec<u8>,
    overlong: bool,
    last: Option<u16>,
    stats: LinkStats,
}

/// The longest chunk a frame of format 1 stuffs to.
const MAX_CHUNK: usize = MAX_FRAME - 1;

impl Decoder {
    /// A decoder at the start of a stream.
    pub fn new() -> Self {
        Self {
            chunk: Vec::with_capacity(MAX_CHUNK),
            ..Self::default()
        }
    }

    /// The counts so far.
    pub fn stats(&self) -> LinkStats {
        self.stats
    }

    /// Forgets the sequence run and any partial chunk without counting it,
    /// after the link was lost and reopened: what was missed meanwhile
    /// cannot be counted.
    pub fn reconnected(&mut self) {
        self.chunk.clear();
        self.overlong = false;
        self.last = None;
    }

    /// Feeds received bytes; `on` sees each frame and bad chunk in order.
    pub fn push(&mut self, bytes: &[u8], mut on: impl FnMut(Event)) {
        self.stats.bytes += bytes.len() as u64;
        for &b in bytes {
            if b == 0 {
                self.end_chunk(&mut on);
            } else if self.chunk.len() < MAX_CHUNK {
                self.chunk.push(b);
            } else {
                self.overlong = true;
            }
        }
    }

    /// Ends the stream: an unfinished chunk is a bad frame.
    pub fn finish(&mut self, mut on: impl FnMut(Event)) {
        if !self.chunk.is_empty() || self.overlong {
            self.stats.bad += 1;
            on(Event::Bad(FrameError::Stuffing));
        }
        self.chunk.clear();
        self.overlong = false;
    }

    fn end_chunk(&mut self, on: &mut impl FnMut(Event)) {
        if self.chunk.is_empty() && !self.overlong {
            return;
        }
        let result = if self.overlong {
            Err(FrameError::Length)
        } else {
            let mut body = [0u8; MAX_BODY];
            match unstuff(&self.chunk, &mut body) {
                Some(n) => Record::parse(&body[..n]),
                None => Err(FrameError::Stuffing),
            }
        };
        self.chunk.clear();
        self.overlong = false;
        match result {
            Ok((sequence, record)) => {
                let restart = matches!(record, Record::Hello(h) if h.start);
                let dropped_before = match self.last {
                    Some(p) if !restart => sequence.wrapping_sub(p).wrapping_sub(1),
                    _ => 0,
                };
                self.last = Some(sequence);
                self.stats.frames += 1;
                self.stats.dropped += u64::from(dropped_before);
                on(Event::Frame {
                    sequence,
                    dropped_before,
                    record,
                });
            }
            Err(e) => {
                self.stats.bad += 1;
                on(Event::Bad(e));
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use lc_core::counting::CountPair;
    use lc_core::link::{Counts, Encoder, Hello, Thermal};
    use proptest::prelude::*;

    fn counts(i: u32) -> Record {
        Record::Counts(Counts {
            channel: (i % 3) as u8,
            pair: CountPair::new(16_384, 139_000 + i),
            companion: None,
            thermal: Thermal::None,
            ring_count: None,
        })
    }

    #[test]
    fn sequence_wraps_and_restarts() {
        let mut enc = Encoder::new();
        let mut wire = Vec::new();
        wire.extend_from_slice(enc.encode(&Record::Hello(Hello::new(b"U1", 7))).as_bytes());
        for i in 0..70_000u32 {
            let f = enc.encode(&counts(i));
            // Every 1000th frame is lost.
            if i % 1000 != 999 {
                wire.extend_from_slice(f.as_bytes());
            }
        }
        // The unit resets: a new encoder, a start hello.
        let mut enc = Encoder::new();
        wire.extend_from_slice(enc.encode(&Record::Hello(Hello::new(b"U1", 7))).as_bytes());
        wire.extend_from_slice(enc.encode(&counts(0)).as_bytes());
        let mut dec = Decoder::new();
        // In pieces of 7 bytes.
        for piece in wire.chunks(7) {
            dec.push(piece, |_| {});
        }
        dec.finish(|_| {});
        let s = dec.stats();
        // The last lost frame (69 999) comes just before the restart: not
        // countable.
        assert_eq!(s.dropped, 69);
        assert_eq!(s.bad, 0);
        assert_eq!(s.frames, 1 + 70_000 - 70 + 2);
    }

    #[test]
    fn an_overlong_chunk_is_one_bad_frame() {
        let mut dec = Decoder::new();
        let mut wire = vec![5u8; 1000];
        wire.push(0);
        wire.extend_from_slice(Encoder::new().encode(&counts(1)).as_bytes());
        wire.extend_from_slice(&[9, 9]);
        let mut frames = 0;
        dec.push(&wire, |e| frames += matches!(e, Event::Frame { .. }) as u32);
        dec.finish(|_| {});
        assert_eq!((frames, dec.stats().bad), (1, 2));
    }

    proptest! {
        #[test]
        fn any_bytes_in_any_pieces(bytes in proptest::collection::vec(any::<u8>(), 0..600),
                                   cut in 1usize..50) {
            let mut dec = Decoder::new();
            let mut events = 0u64;
            for piece in bytes.chunks(cut) {
                dec.push(piece, |_| events += 1);
            }
            dec.finish(|_| events += 1);
            let s = dec.stats();
            prop_assert_eq!(s.frames + s.bad, events);
            prop_assert_eq!(s.bytes, bytes.len() as u64);
        }
    }
}
