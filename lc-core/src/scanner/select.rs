//! The channel selector: the hardware boundary that routes one input to the
//! counter.
//!
//! [`ChannelSelector`] is the second small trait of the scanner. Its error
//! is the implementer's own type, and generic code asks it for a
//! [`SelectErrorKind`]. Implementations here: [`BinaryMux`](super::BinaryMux)
//! (select lines on `OutputPin`s), [`EnabledMux`](super::EnabledMux) (the
//! same with an enable line) and [`SingleInput`] (one coil wired straight to
//! the counter, nothing to switch).

use core::convert::Infallible;
use core::fmt;

/// What kind of failure a channel selector reports, for generic code.
///
/// New kinds may be added, so a `match` needs a wildcard arm.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum SelectErrorKind {
    /// The selector has no such input; nothing was switched.
    NoSuchInput,
    /// A select or enable line could not be driven; the selection is
    /// unknown until the next successful select.
    Pin,
    /// Any other failure; the implementer's error says more.
    Other,
}

impl fmt::Display for SelectErrorKind {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            SelectErrorKind::NoSuchInput => "no such multiplexer input",
            SelectErrorKind::Pin => "multiplexer line could not be driven",
            SelectErrorKind::Other => "channel selection failure",
        })
    }
}

impl core::error::Error for SelectErrorKind {}

/// An error of a [`ChannelSelector`]: any `Debug` type that can say which
/// [`SelectErrorKind`] it is.
pub trait SelectError: fmt::Debug {
    /// The kind of this error, for generic code.
    fn kind(&self) -> SelectErrorKind;
}

/// A selector whose errors are only kinds uses the kind itself as its error.
impl SelectError for SelectErrorKind {
    #[inline]
    fn kind(&self) -> SelectErrorKind {
        *self
    }
}

/// For selectors that cannot fail.
impl SelectError for Infallible {
    #[inline]
    fn kind(&self) -> SelectErrorKind {
        match *self {}
    }
}

/// Routes one of its inputs to the counter.
///
/// Inputs are numbered `0..input_count()`. Selecting an input outside that
/// range switches nothing and returns an error of kind
/// [`SelectErrorKind::NoSuchInput`]. A successful `select` has set the
/// switch; the signal may still need time to settle (the
/// [`Scanner`](super::Scanner) waits its settle time after every select).
///
/// ```
/// use lc_core::scanner::{ChannelSelector, SelectError, SelectErrorKind, SingleInput};
///
/// let mut direct = SingleInput;
/// assert_eq!(direct.input_count(), 1);
/// assert_eq!(direct.select(0), Ok(()));
/// assert_eq!(direct.select(1).unwrap_err().kind(), SelectErrorKind::NoSuchInput);
/// ```
pub trait ChannelSelector {
    /// The implementer's error type.
    type Error: SelectError;

    /// How many inputs the selector has.
    fn input_count(&self) -> usize;

    /// Route `input` to the counter.
    fn select(&mut self, input: u8) -> Result<(), Self::Error>;
}

/// A borrowed selector selects like the selector itself.
impl<T: ChannelSelector + ?Sized> ChannelSelector for &mut T {
    type Error = T::Error;

    #[inline]
    fn input_count(&self) -> usize {
        T::input_count(self)
    }

    #[inline]
    fn select(&mut self, input: u8) -> Result<(), Self::Error> {
        T::select(self, input)
    }
}

/// No multiplexer: one coil wired straight to the counter, input 0.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct SingleInput;

impl ChannelSelector for SingleInput {
    type Error = SelectErrorKind;

    #[inline]
    fn input_count(&self) -> usize {
        1
    }

    #[inline]
    fn select(&mut self, input: u8) -> Result<(), SelectErrorKind> {
        if input == 0 {
            Ok(())
        } else {
            Err(SelectErrorKind::NoSuchInput)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::vec::Vec;

    /// Generic over the selector, so `&mut T` is exercised as a selector.
    fn kinds_of<S: ChannelSelector>(mut s: S, inputs: &[u8]) -> Vec<Option<SelectErrorKind>> {
        inputs
            .iter()
            .map(|&i| s.select(i).err().map(|e| e.kind()))
            .collect()
    }

    #[test]
    fn single_input_has_only_input_zero() {
        let mut s = SingleInput;
        assert_eq!(s.input_count(), 1);
        let no = Some(SelectErrorKind::NoSuchInput);
        assert_eq!(kinds_of(&mut s, &[0, 1, 2, u8::MAX]), [None, no, no, no]);
        assert_eq!(s.select(0), Ok(()));
    }

    #[test]
    fn kinds_are_their_own_errors_and_say_what_failed() {
        for kind in [
            SelectErrorKind::NoSuchInput,
            SelectErrorKind::Pin,
            SelectErrorKind::Other,
        ] {
            assert_eq!(kind.kind(), kind);
            assert!(!format!("{kind}").is_empty());
        }
    }
}
