//! Binary-coded analog multiplexers driven by `OutputPin`s.
//!
//! A multiplexer with `LINES` select lines has 2^`LINES` inputs; input k is
//! routed when line i carries bit i of k (line 0 the least significant).
//! [`BinaryMux`] drives the select lines only; [`EnabledMux`] adds an enable
//! line and switches break-before-make. `LINES` is checked at compile time
//! to lie in 1..=8 (2 to 256 inputs).

use super::select::{ChannelSelector, SelectError, SelectErrorKind};
use core::fmt;
use embedded_hal::digital::{OutputPin, PinState};

/// Why a multiplexer did not select an input.
///
/// `E` is the pins' error type. With the `defmt` feature this derives
/// `defmt::Format` when `E` implements it.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum MuxError<E> {
    /// The multiplexer has no such input; no line was touched.
    NoSuchInput,
    /// A select or enable line could not be driven.
    Pin(E),
}

impl<E: fmt::Display> fmt::Display for MuxError<E> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            MuxError::NoSuchInput => f.write_str("no such multiplexer input"),
            MuxError::Pin(e) => write!(f, "multiplexer line could not be driven: {e}"),
        }
    }
}

impl<E: core::error::Error + 'static> core::error::Error for MuxError<E> {
    fn source(&self) -> Option<&(dyn core::error::Error + 'static)> {
        match self {
            MuxError::NoSuchInput => None,
            MuxError::Pin(e) => Some(e),
        }
    }
}

impl<E: fmt::Debug> SelectError for MuxError<E> {
    #[inline]
    fn kind(&self) -> SelectErrorKind {
        match self {
            MuxError::NoSuchInput => SelectErrorKind::NoSuchInput,
            MuxError::Pin(_) => SelectErrorKind::Pin,
        }
    }
}

/// A binary-coded multiplexer: `LINES` select lines, 2^`LINES` inputs.
///
/// Input k is routed when line i carries bit i of k (line 0 the least
/// significant). `LINES` is checked at compile time to lie in 1..=8 (2 to
/// 256 inputs).
///
/// `select` drives every line, line 0 first, on every call. Without an
/// enable line, other inputs are routed for a moment while the lines change
/// (from input 1 to input 2 passes through 0 or 3); the scanner's settle
/// time covers that. Use [`EnabledMux`] where no other input may be routed
/// at all.
///
/// ```
/// use core::convert::Infallible;
/// use embedded_hal::digital::{ErrorType, OutputPin};
/// use lc_core::scanner::{BinaryMux, ChannelSelector};
///
/// /// A select line that remembers its level (your HAL's output pin).
/// #[derive(Default)]
/// struct Line(bool);
/// impl ErrorType for Line {
///     type Error = Infallible;
/// }
/// impl OutputPin for Line {
///     fn set_low(&mut self) -> Result<(), Infallible> {
///         self.0 = false;
///         Ok(())
///     }
///     fn set_high(&mut self) -> Result<(), Infallible> {
///         self.0 = true;
///         Ok(())
///     }
/// }
///
/// // A 4-input multiplexer: two select lines.
/// let mut mux = BinaryMux::new([Line::default(), Line::default()]);
/// assert_eq!(mux.input_count(), 4);
/// mux.select(2).unwrap();
/// let [a0, a1] = mux.release();
/// assert_eq!((a0.0, a1.0), (false, true));
/// ```
#[derive(Debug)]
pub struct BinaryMux<P, const LINES: usize> {
    lines: [P; LINES],
}

impl<P: OutputPin, const LINES: usize> BinaryMux<P, LINES> {
    /// The number of inputs, 2^`LINES`.
    pub const INPUTS: usize = {
        assert!(
            LINES >= 1 && LINES <= 8,
            "a BinaryMux has 1 to 8 select lines"
        );
        1 << LINES // LINES ≤ 8: no overflow
    };

    /// A multiplexer on `lines`, line 0 the least significant bit. The
    /// lines are not driven until the first `select`.
    pub fn new(lines: [P; LINES]) -> Self {
        let _ = Self::INPUTS; // evaluates the compile-time check of LINES
        Self { lines }
    }

    /// The select lines, for reuse.
    pub fn release(self) -> [P; LINES] {
        self.lines
    }
}

impl<P: OutputPin, const LINES: usize> ChannelSelector for BinaryMux<P, LINES> {
    type Error = MuxError<P::Error>;

    #[inline]
    fn input_count(&self) -> usize {
        Self::INPUTS
    }

    fn select(&mut self, input: u8) -> Result<(), Self::Error> {
        if usize::from(input) >= Self::INPUTS {
            return Err(MuxError::NoSuchInput);
        }
        let mut bits = input;
        for line in self.lines.iter_mut() {
            line.set_state(PinState::from(bits & 1 == 1))
                .map_err(MuxError::Pin)?;
            bits >>= 1;
        }
        Ok(())
    }
}

/// A binary-coded multiplexer with an enable line: break-before-make.
///
/// `select` first disables the multiplexer, then drives the select lines,
/// then enables it, so no input other than the selected one is ever
/// routed. The enable pin must share the select lines' error type (as the
/// pins of one HAL usually do).
#[derive(Debug)]
pub struct EnabledMux<P, E, const LINES: usize> {
    mux: BinaryMux<P, LINES>,
    enable: E,
    active: PinState,
}

impl<P, E, const LINES: usize> EnabledMux<P, E, LINES>
where
    P: OutputPin,
    E: OutputPin<Error = P::Error>,
{
    /// A multiplexer on `lines` with its `enable` line, which enables the
    /// multiplexer at the level `active` (`PinState::Low` for the usual
    /// active-low enable input). No line is driven until the first
    /// `select` or `disable`.
    pub fn new(lines: [P; LINES], enable: E, active: PinState) -> Self {
        Self {
            mux: BinaryMux::new(lines),
            enable,
            active,
        }
    }

    /// Disable the multiplexer: no input routed.
    pub fn disable(&mut self) -> Result<(), MuxError<P::Error>> {
        self.enable.set_state(!self.active).map_err(MuxError::Pin)
    }

    /// The select lines and the enable line, for reuse.
    pub fn release(self) -> ([P; LINES], E) {
        (self.mux.release(), self.enable)
    }
}

impl<P, E, const LINES: usize> ChannelSelector for EnabledMux<P, E, LINES>
where
    P: OutputPin,
    E: OutputPin<Error = P::Error>,
{
    type Error = MuxError<P::Error>;

    #[inline]
    fn input_count(&self) -> usize {
        self.mux.input_count()
    }

    fn select(&mut self, input: u8) -> Result<(), Self::Error> {
        if usize::from(input) >= self.mux.input_count() {
            return Err(MuxError::NoSuchInput);
        }
        self.disable()?;
        self.mux.select(input)?;
        self.enable.set_state(self.active).map_err(MuxError::Pin)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use core::cell::RefCell;
    use embedded_hal::digital::ErrorType;
    use std::rc::Rc;
    use std::vec::Vec;

    /// A line that logs (name, level) into a shared log and fails when its
    /// name is `fail_on`.
    struct Logged {
        name: char,
        log: Rc<RefCell<Vec<(char, bool)>>>,
        fails: bool,
    }

    #[derive(Debug, PartialEq)]
    struct Broken;

    impl embedded_hal::digital::Error for Broken {
        fn kind(&self) -> embedded_hal::digital::ErrorKind {
            embedded_hal::digital::ErrorKind::Other
        }
    }

    impl ErrorType for Logged {
        type Error = Broken;
    }

    impl OutputPin for Logged {
        fn set_low(&mut self) -> Result<(), Broken> {
            self.set(false)
        }
        fn set_high(&mut self) -> Result<(), Broken> {
            self.set(true)
        }
    }

    impl Logged {
        fn set(&mut self, high: bool) -> Result<(), Broken> {
            if self.fails {
                return Err(Broken);
            }
            self.log.borrow_mut().push((self.name, high));
            Ok(())
        }
    }

    fn lines<const N: usize>(log: &Rc<RefCell<Vec<(char, bool)>>>) -> [Logged; N] {
        core::array::from_fn(|i| Logged {
            name: char::from(b'0' + u8::try_from(i).unwrap()),
            log: Rc::clone(log),
            fails: false,
        })
    }

    #[test]
    fn every_input_sets_its_bits_line_zero_first() {
        let log = Rc::new(RefCell::new(Vec::new()));
        let mut mux = BinaryMux::new(lines::<3>(&log));
        assert_eq!(mux.input_count(), 8);
        for input in 0..8u8 {
            log.borrow_mut().clear();
            mux.select(input).unwrap();
            let expect: Vec<(char, bool)> = (0..3)
                .map(|bit| (char::from(b'0' + bit), (input >> bit) & 1 == 1))
                .collect();
            assert_eq!(*log.borrow(), expect, "input {input}");
        }
        log.borrow_mut().clear();
        assert_eq!(mux.select(8), Err(MuxError::NoSuchInput));
        assert_eq!(mux.select(u8::MAX), Err(MuxError::NoSuchInput));
        assert!(log.borrow().is_empty(), "no line touched for a bad input");
    }

    #[test]
    fn eight_lines_reach_every_u8_input() {
        let log = Rc::new(RefCell::new(Vec::new()));
        let mut mux = BinaryMux::new(lines::<8>(&log));
        assert_eq!(mux.input_count(), 256);
        mux.select(u8::MAX).unwrap();
        assert!(log.borrow().iter().all(|&(_, high)| high));
        assert_eq!(log.borrow().len(), 8);
    }

    #[test]
    fn enable_breaks_before_make() {
        let log = Rc::new(RefCell::new(Vec::new()));
        let enable = Logged {
            name: 'E',
            log: Rc::clone(&log),
            fails: false,
        };
        let mut mux = EnabledMux::new(lines::<2>(&log), enable, PinState::Low);
        assert_eq!(mux.input_count(), 4);
        mux.select(1).unwrap();
        assert_eq!(
            *log.borrow(),
            [('E', true), ('0', true), ('1', false), ('E', false)]
        );
        log.borrow_mut().clear();
        assert_eq!(mux.select(4), Err(MuxError::NoSuchInput));
        assert!(log.borrow().is_empty());
        mux.disable().unwrap();
        assert_eq!(*log.borrow(), [('E', true)]);
        let ([a0, _], e) = mux.release();
        assert_eq!((a0.name, e.name), ('0', 'E'));
    }

    #[test]
    fn a_failing_line_stops_the_switch_with_a_pin_error() {
        let log = Rc::new(RefCell::new(Vec::new()));
        let mut ls = lines::<2>(&log);
        ls[1].fails = true;
        let mut mux = BinaryMux::new(ls);
        let err = mux.select(3).unwrap_err();
        assert_eq!(err, MuxError::Pin(Broken));
        assert_eq!(err.kind(), SelectErrorKind::Pin);
        assert_eq!(*log.borrow(), [('0', true)]);
        assert_eq!(
            MuxError::<Broken>::NoSuchInput.kind(),
            SelectErrorKind::NoSuchInput
        );
    }

    #[test]
    fn errors_display_the_pin_error() {
        let e: MuxError<core::fmt::Error> = MuxError::Pin(core::fmt::Error);
        assert!(format!("{e}").starts_with("multiplexer line could not be driven: "));
        assert_eq!(
            format!("{}", MuxError::<core::fmt::Error>::NoSuchInput),
            "no such multiplexer input"
        );
        use core::error::Error;
        assert!(e.source().is_some());
    }
}
