//! Presence detection: a threshold with hysteresis and debounce, turning a
//! filtered reading into *target present* / *target absent* and the events
//! between them.
//!
//! ## Rule
//!
//! Two thresholds and two debounce counts ([`DetectorConfig`]):
//!
//! - While [`Presence::Absent`], a sample **at or beyond the enter
//!   threshold** counts towards entering; `enter_samples` such samples in a
//!   row switch to [`Presence::Present`] and emit [`Event::Entered`].
//! - While [`Presence::Present`], a sample **at or beyond the leave
//!   threshold** counts towards leaving; `leave_samples` in a row switch to
//!   `Absent` and emit [`Event::Left`].
//! - Any other sample resets the count: the samples must be consecutive.
//!   The count restarts from zero after every switch.
//!
//! "Beyond" follows the [`Polarity`]: for [`Polarity::Rising`] a target
//! raises the reading (enter when x ≥ enter, leave when x ≤ leave, enter >
//! leave); for [`Polarity::Falling`] it lowers the reading, as a metal
//! target lowers L and so the shift (enter when x ≤ enter, leave when x ≥
//! leave, enter < leave). The gap between the thresholds is the hysteresis:
//! noise narrower than the gap cannot make the output chatter, and the
//! debounce keeps a few outliers from switching it. As a consequence two
//! events are always at least `enter_samples` (Left → Entered) or
//! `leave_samples` (Entered → Left) samples apart, and the first Entered
//! comes no earlier than the `enter_samples`-th sample.
//!
//! Comparisons only: works for any `T: Copy + Ord` (a
//! [`Shift`](crate::shift::Shift), an `i32` output value, …), exactly, with
//! no arithmetic on the samples. The detector starts `Absent`.
//!
//! **Not a safety-rated component.** A presence decision a person might rely
//! on for safety needs a rated device.
//!
//! ```
//! use lc_core::detector::{Detector, DetectorConfig, Event, Polarity, Presence};
//! use lc_core::shift::Shift;
//!
//! // A metal target lowers L: the shift falls. Enter at −2 %, leave at −1 %,
//! // three samples in a row to enter, two to leave.
//! let s = |x: f64| Shift::from_f64(x).unwrap();
//! let mut det = Detector::new(DetectorConfig {
//!     polarity: Polarity::Falling,
//!     enter_threshold: s(-0.02),
//!     leave_threshold: s(-0.01),
//!     enter_samples: 3,
//!     leave_samples: 2,
//! })
//! .unwrap();
//! let readings = [0.0, -0.025, -0.03, -0.015, -0.021, -0.022, -0.023, -0.012, -0.009, -0.005];
//! let events: Vec<_> = readings.iter().map(|&x| det.update(s(x))).collect();
//! assert_eq!(events[6], Some(Event::Entered)); // third −2 % sample in a row
//! assert_eq!(events[9], Some(Event::Left)); // second in a row at or above −1 %
//! assert_eq!(events.iter().flatten().count(), 2);
//! assert_eq!(det.presence(), Presence::Absent);
//! ```

use core::fmt;

/// Which way a target moves the reading.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Polarity {
    /// A target raises the reading: enter at x ≥ enter threshold, leave at
    /// x ≤ leave threshold; the enter threshold is the higher one.
    Rising,
    /// A target lowers the reading (a metal target lowering L): enter at
    /// x ≤ enter threshold, leave at x ≥ leave threshold; the enter
    /// threshold is the lower one.
    Falling,
}

/// Whether a target is there.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Presence {
    /// No target (the initial state).
    #[default]
    Absent,
    /// A target is there.
    Present,
}

/// A change of [`Presence`], reported by the sample that caused it.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Event {
    /// Absent → Present.
    Entered,
    /// Present → Absent.
    Left,
}

/// Why a detector could not be built.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum DetectorError {
    /// The thresholds leave no hysteresis for the polarity: `Rising` needs
    /// enter > leave, `Falling` needs enter < leave (strictly).
    ThresholdsNotOrdered,
    /// A debounce count is zero; at least one sample must decide.
    ZeroDebounce,
}

impl fmt::Display for DetectorError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            DetectorError::ThresholdsNotOrdered => {
                "thresholds not ordered: rising needs enter above leave, falling needs enter below leave"
            }
            DetectorError::ZeroDebounce => "debounce counts must be at least one sample",
        })
    }
}

impl core::error::Error for DetectorError {}

/// Thresholds and debounce counts of a [`Detector`].
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct DetectorConfig<T> {
    /// Which way a target moves the reading.
    pub polarity: Polarity,
    /// Samples at or beyond this value count towards entering.
    pub enter_threshold: T,
    /// Samples at or beyond this value (the other way) count towards
    /// leaving.
    pub leave_threshold: T,
    /// Consecutive samples beyond the enter threshold that switch to
    /// `Present`; at least 1.
    pub enter_samples: u16,
    /// Consecutive samples beyond the leave threshold that switch to
    /// `Absent`; at least 1.
    pub leave_samples: u16,
}

impl<T: Copy + Ord> DetectorConfig<T> {
    /// Checks the thresholds' order for the polarity and the debounce
    /// counts.
    pub fn validate(&self) -> Result<(), DetectorError> {
        let ordered = match self.polarity {
            Polarity::Rising => self.enter_threshold > self.leave_threshold,
            Polarity::Falling => self.enter_threshold < self.leave_threshold,
        };
        if !ordered {
            return Err(DetectorError::ThresholdsNotOrdered);
        }
        if self.enter_samples == 0 || self.leave_samples == 0 {
            return Err(DetectorError::ZeroDebounce);
        }
        Ok(())
    }
}

/// Hysteresis and debounce presence detector. See the
/// [module docs](self) for the rule.
///
/// The configuration's fields are held side by side with the state (no
/// padding between a nested configuration and the state): 16 bytes for
/// `Detector<i32>`, 24 for `Detector<u64>`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Detector<T> {
    enter_threshold: T,
    leave_threshold: T,
    /// Consecutive samples beyond the threshold that leads out of the
    /// current state; always below that state's debounce count.
    run: u16,
    enter_samples: u16,
    leave_samples: u16,
    presence: Presence,
    polarity: Polarity,
}

impl<T: Copy + Ord> Detector<T> {
    /// A detector in state `Absent`, after checking `config`.
    pub fn new(config: DetectorConfig<T>) -> Result<Self, DetectorError> {
        config.validate()?;
        Ok(Self::new_unchecked(config))
    }

    /// [`Detector::new`] of a configuration known to validate (the metal
    /// reader's, checked by the image's validation).
    #[inline]
    pub(crate) const fn new_unchecked(config: DetectorConfig<T>) -> Self {
        Self {
            enter_threshold: config.enter_threshold,
            leave_threshold: config.leave_threshold,
            enter_samples: config.enter_samples,
            leave_samples: config.leave_samples,
            run: 0,
            polarity: config.polarity,
            presence: Presence::Absent,
        }
    }

    /// Feeds one sample; returns the event when this sample switched the
    /// state.
    pub fn update(&mut self, x: T) -> Option<Event> {
        let (beyond, needed) = match self.presence {
            Presence::Absent => (
                match self.polarity {
                    Polarity::Rising => x >= self.enter_threshold,
                    Polarity::Falling => x <= self.enter_threshold,
                },
                self.enter_samples,
            ),
            Presence::Present => (
                match self.polarity {
                    Polarity::Rising => x <= self.leave_threshold,
                    Polarity::Falling => x >= self.leave_threshold,
                },
                self.leave_samples,
            ),
        };
        if !beyond {
            self.run = 0;
            return None;
        }
        // run < needed ≤ u16::MAX, so this never saturates.
        self.run = self.run.saturating_add(1);
        if self.run < needed {
            return None;
        }
        self.run = 0;
        let (presence, event) = match self.presence {
            Presence::Absent => (Presence::Present, Event::Entered),
            Presence::Present => (Presence::Absent, Event::Left),
        };
        self.presence = presence;
        Some(event)
    }
}

impl Detector<u32> {
    /// [`Detector::update`] of a detector built [`Polarity::Rising`] (the
    /// metal reader's), for a `u64` sample against the 32-bit thresholds
    /// (|shift − baseline| in Q23.40 against thresholds below 2^32),
    /// compared as `u64`: the same result as a `Detector<u64>` holding the
    /// same thresholds, in 8 bytes less, with the polarity's test left out.
    #[inline]
    pub(crate) fn update_rising_wide(&mut self, x: u64) -> Option<Event> {
        let beyond = match self.presence {
            Presence::Absent => x >= u64::from(self.enter_threshold),
            Presence::Present => x <= u64::from(self.leave_threshold),
        };
        self.advance(beyond)
    }
}

impl<T: Copy + Ord> Detector<T> {
    /// The debounce after the comparison: `beyond` counts towards the
    /// switch out of the current state.
    #[inline(always)]
    fn advance(&mut self, beyond: bool) -> Option<Event> {
        if !beyond {
            self.run = 0;
            return None;
        }
        let (needed, presence, event) = match self.presence {
            Presence::Absent => (self.enter_samples, Presence::Present, Event::Entered),
            Presence::Present => (self.leave_samples, Presence::Absent, Event::Left),
        };
        // run < needed ≤ u16::MAX, so this never wraps.
        let run = self.run.wrapping_add(1);
        if run < needed {
            self.run = run;
            return None;
        }
        self.run = 0;
        self.presence = presence;
        Some(event)
    }

    /// The current state.
    #[inline]
    pub const fn presence(&self) -> Presence {
        self.presence
    }

    /// Whether a target is present.
    #[inline]
    pub fn is_present(&self) -> bool {
        self.presence == Presence::Present
    }

    /// Consecutive samples so far towards the next switch (0 up to the
    /// debounce count minus one).
    #[inline]
    pub const fn pending_samples(&self) -> u16 {
        self.run
    }

    /// The configuration.
    #[inline]
    pub const fn config(&self) -> DetectorConfig<T> {
        DetectorConfig {
            polarity: self.polarity,
            enter_threshold: self.enter_threshold,
            leave_threshold: self.leave_threshold,
            enter_samples: self.enter_samples,
            leave_samples: self.leave_samples,
        }
    }

    /// Back to `Absent` with no pending samples.
    #[inline]
    pub fn reset(&mut self) {
        self.presence = Presence::Absent;
        self.run = 0;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn rising(enter: i32, leave: i32, n_in: u16, n_out: u16) -> Detector<i32> {
        Detector::new(DetectorConfig {
            polarity: Polarity::Rising,
            enter_threshold: enter,
            leave_threshold: leave,
            enter_samples: n_in,
            leave_samples: n_out,
        })
        .unwrap()
    }

    /// Reference model, written independently: walk the samples keeping the
    /// last switch and test the window of the last `n` samples.
    fn reference(config: &DetectorConfig<i32>, xs: &[i32]) -> Vec<Option<Event>> {
        let beyond_enter = |x: i32| match config.polarity {
            Polarity::Rising => x >= config.enter_threshold,
            Polarity::Falling => x <= config.enter_threshold,
        };
        let beyond_leave = |x: i32| match config.polarity {
            Polarity::Rising => x <= config.leave_threshold,
            Polarity::Falling => x >= config.leave_threshold,
        };
        let mut present = false;
        let mut since = 0; // index of the first sample after the last switch
        let mut out = Vec::new();
        for i in 0..xs.len() {
            let n = usize::from(if present {
                config.leave_samples
            } else {
                config.enter_samples
            });
            let window_start = (i + 1).checked_sub(n);
            let switch = match window_start {
                Some(s) if s >= since => xs[s..=i].iter().all(|&x| {
                    if present {
                        beyond_leave(x)
                    } else {
                        beyond_enter(x)
                    }
                }),
                _ => false,
            };
            if switch {
                present = !present;
                since = i + 1;
                out.push(Some(if present { Event::Entered } else { Event::Left }));
            } else {
                out.push(None);
            }
        }
        out
    }

    #[test]
    fn construction_is_validated() {
        let ok = DetectorConfig {
            polarity: Polarity::Rising,
            enter_threshold: 10,
            leave_threshold: 5,
            enter_samples: 1,
            leave_samples: 1,
        };
        assert!(Detector::new(ok).is_ok());
        let equal = DetectorConfig {
            leave_threshold: 10,
            ..ok
        };
        assert_eq!(
            Detector::new(equal),
            Err(DetectorError::ThresholdsNotOrdered)
        );
        let falling_wrong = DetectorConfig {
            polarity: Polarity::Falling,
            ..ok
        };
        assert_eq!(
            Detector::new(falling_wrong),
            Err(DetectorError::ThresholdsNotOrdered)
        );
        let falling_ok = DetectorConfig {
            polarity: Polarity::Falling,
            enter_threshold: 5,
            leave_threshold: 10,
            ..ok
        };
        assert!(Detector::new(falling_ok).is_ok());
        assert_eq!(
            Detector::new(DetectorConfig {
                enter_samples: 0,
                ..ok
            }),
            Err(DetectorError::ZeroDebounce)
        );
        assert_eq!(
            Detector::new(DetectorConfig {
                leave_samples: 0,
                ..ok
            }),
            Err(DetectorError::ZeroDebounce)
        );
        assert!(!DetectorError::ZeroDebounce.to_string().is_empty());
        assert!(DetectorError::ThresholdsNotOrdered
            .to_string()
            .contains("falling"));
    }

    #[test]
    fn one_sample_debounce_switches_at_once() {
        let mut d = rising(10, 5, 1, 1);
        assert_eq!(d.presence(), Presence::Absent);
        assert_eq!(d.update(9), None);
        assert_eq!(d.update(10), Some(Event::Entered)); // at the threshold counts
        assert!(d.is_present());
        assert_eq!(d.update(6), None); // inside the hysteresis band
        assert_eq!(d.update(5), Some(Event::Left));
        assert_eq!(d.presence(), Presence::Absent);
    }

    #[test]
    fn debounce_is_exactly_n() {
        let mut d = rising(10, 5, 4, 3);
        for _ in 0..3 {
            assert_eq!(d.update(100), None);
        }
        assert_eq!(d.pending_samples(), 3);
        assert_eq!(d.update(100), Some(Event::Entered)); // the 4th
        assert_eq!(d.pending_samples(), 0);
        // Two low samples, one in the band (resets), then three low.
        assert_eq!(d.update(0), None);
        assert_eq!(d.update(0), None);
        assert_eq!(d.update(7), None);
        assert_eq!(d.pending_samples(), 0);
        assert_eq!(d.update(0), None);
        assert_eq!(d.update(0), None);
        assert_eq!(d.update(0), Some(Event::Left)); // the 3rd in a row
                                                    // N − 1 beyond, one short, N − 1 beyond: never enters.
        for _ in 0..5 {
            for _ in 0..3 {
                assert_eq!(d.update(i32::MAX), None);
            }
            assert_eq!(d.update(9), None);
        }
        assert_eq!(d.presence(), Presence::Absent);
    }

    #[test]
    fn noise_at_a_threshold_never_chatters() {
        // Noise of ±1 around the enter threshold with no debounce: one
        // entry, then the band keeps it in.
        let mut d = rising(10, 5, 1, 1);
        let events: Vec<_> = (0..1000)
            .filter_map(|i| d.update(if i % 2 == 0 { 9 } else { 11 }))
            .collect();
        assert_eq!(events, [Event::Entered]);
        // Alternating across both thresholds with debounce 2: never two in a
        // row on either side, so never a switch.
        let mut d = rising(10, 5, 2, 2);
        let events = (0..1000)
            .filter_map(|i| d.update(if i % 2 == 0 { 0 } else { 20 }))
            .count();
        assert_eq!(events, 0);
    }

    #[test]
    fn saturated_inputs_and_falling_polarity() {
        let mut d = Detector::new(DetectorConfig {
            polarity: Polarity::Falling,
            enter_threshold: i32::MIN,
            leave_threshold: i32::MAX,
            enter_samples: u16::MAX,
            leave_samples: 1,
        })
        .unwrap();
        for _ in 1..u16::MAX {
            assert_eq!(d.update(i32::MIN), None);
        }
        assert_eq!(d.update(i32::MIN), Some(Event::Entered));
        assert_eq!(d.update(i32::MAX - 1), None);
        assert_eq!(d.update(i32::MAX), Some(Event::Left));
        d.update(i32::MIN);
        d.reset();
        assert_eq!((d.presence(), d.pending_samples()), (Presence::Absent, 0));
        assert_eq!(d.config().leave_samples, 1);
    }

    fn config() -> impl Strategy<Value = DetectorConfig<i32>> {
        (any::<bool>(), -20i32..20, 1i32..10, 1u16..6, 1u16..6).prop_map(
            |(falling, a, gap, n_in, n_out)| {
                let (enter, leave) = if falling { (a, a + gap) } else { (a + gap, a) };
                DetectorConfig {
                    polarity: if falling {
                        Polarity::Falling
                    } else {
                        Polarity::Rising
                    },
                    enter_threshold: enter,
                    leave_threshold: leave,
                    enter_samples: n_in,
                    leave_samples: n_out,
                }
            },
        )
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(5_000))]

        /// The detector equals the reference model on arbitrary sequences.
        #[test]
        fn detector_equals_reference(config in config(), xs in prop::collection::vec(-40i32..40, 0..300)) {
            let mut d = Detector::new(config).unwrap();
            let got: Vec<_> = xs.iter().map(|&x| d.update(x)).collect();
            prop_assert_eq!(got, reference(&config, &xs));
        }

        /// `update_rising_wide` equals `update` of a rising `Detector<u64>`
        /// with the same thresholds, samples on both sides of 2^32 included.
        #[test]
        fn update_rising_wide_equals_update(config in config(), xs in prop::collection::vec(-40i32..40, 0..300), high: bool) {
            let config = DetectorConfig { polarity: Polarity::Rising, enter_threshold: config.enter_threshold.max(config.leave_threshold), leave_threshold: config.enter_threshold.min(config.leave_threshold) - 1, ..config };
            // Thresholds near 2^32 (or near 0), samples around them.
            let base: u32 = if high { u32::MAX - 64 } else { 64 };
            let at = |x: i32| base.wrapping_add_signed(x);
            let narrow = DetectorConfig { polarity: Polarity::Rising, enter_threshold: at(config.enter_threshold), leave_threshold: at(config.leave_threshold), enter_samples: config.enter_samples, leave_samples: config.leave_samples };
            let wide = DetectorConfig { polarity: Polarity::Rising, enter_threshold: u64::from(narrow.enter_threshold), leave_threshold: u64::from(narrow.leave_threshold), enter_samples: config.enter_samples, leave_samples: config.leave_samples };
            let mut a = Detector::new(narrow).unwrap();
            let mut b = Detector::new(wide).unwrap();
            for &x in &xs {
                let x = (u64::from(base) + 64).wrapping_add_signed(i64::from(x) * 3);
                prop_assert_eq!(a.update_rising_wide(x), b.update(x));
                prop_assert_eq!(a.presence(), b.presence());
                prop_assert_eq!(a.pending_samples(), b.pending_samples());
            }
        }

        /// Events alternate, the first is Entered, and they are never closer
        /// than the debounce allows: Entered no earlier than sample
        /// `enter_samples`, Left at least `leave_samples` after Entered and
        /// Entered at least `enter_samples` after Left.
        #[test]
        fn detector_never_toggles_faster_than_debounce(config in config(), xs in prop::collection::vec(-40i32..40, 0..300)) {
            let mut d = Detector::new(config).unwrap();
            let mut last: Option<(usize, Event)> = None;
            for (i, &x) in xs.iter().enumerate() {
                let Some(e) = d.update(x) else { continue };
                match (last, e) {
                    (None, Event::Entered) => prop_assert!(i + 1 >= usize::from(config.enter_samples)),
                    (Some((j, Event::Left)), Event::Entered) => prop_assert!(i - j >= usize::from(config.enter_samples)),
                    (Some((j, Event::Entered)), Event::Left) => prop_assert!(i - j >= usize::from(config.leave_samples)),
                    _ => prop_assert!(false, "events do not alternate: {:?} then {:?}", last, e),
                }
                prop_assert_eq!(d.is_present(), e == Event::Entered);
                last = Some((i, e));
            }
        }

        /// Any thresholds and samples: construction is a result, never a
        /// panic, and a sample strictly inside the hysteresis band never
        /// switches.
        #[test]
        fn detector_never_panics(enter: i32, leave: i32, n_in: u16, n_out: u16, falling: bool, xs in prop::collection::vec(any::<i32>(), 0..100)) {
            let config = DetectorConfig {
                polarity: if falling { Polarity::Falling } else { Polarity::Rising },
                enter_threshold: enter,
                leave_threshold: leave,
                enter_samples: n_in,
                leave_samples: n_out,
            };
            if let Ok(mut d) = Detector::new(config) {
                let (lo, hi) = (enter.min(leave), enter.max(leave));
                for &x in &xs {
                    let e = d.update(x);
                    if lo < x && x < hi {
                        prop_assert_eq!(e, None);
                    }
                }
            } else {
                prop_assert!(config.validate().is_err());
            }
        }
    }
}
