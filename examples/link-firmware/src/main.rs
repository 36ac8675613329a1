//! A proximity unit that streams over its UART: the calibration image
//! validated in flash, a reader per channel, and per gate the count pair
//! and the unit's reading sent as link-format-1 frames (docs/link.md,
//! `lc_core::link`) to whoever listens (`lc-host listen`).
//!
//! On QEMU's `microbit` the nRF51 UART is connected to the host with
//! `-serial tcp:...` (`lc-host/tests/link_firmware.rs`, `run.sh`). The script:
//! 300 gates over two channels (the demo proximity image, a target
//! sweeping through the curve, the temperature drifting), with sensor
//! faults (a dead oscillator every 40th gate, a lost reference every 53rd)
//! and link faults injected on purpose: one frame corrupted, one not
//! sent, stray bytes between frames, one frame cut short. The firmware
//! prints over semihosting every reading it made (`reading SEQ CH CODE
//! VALUE SECONDARY Q40`), the count pairs whose frames it damaged
//! (`lost SEQ`), and what a listener must count (`expect bad N dropped M
//! frames K`).
//!
//! In a product: replace the script with the timer captures, keep one
//! `Encoder` for the link's life, and call `send` per record; a UART driver
//! of any HAL that implements `embedded_io::Write` takes the place of
//! [`Uart`].
//!
//! **Not a safety-rated component.**
#![no_std]
#![no_main]

mod common;

use common::{exit, Line};
use core::fmt::Write as _;
use core::hint::black_box;
use cortex_m_rt::entry;
use cortex_m_semihosting::hio;
use lc_core::counting::CountPair;
use lc_core::image::Image;
use lc_core::link::{Counts, Encoder, Hello, ReadingRecord, Record};
use lc_core::reader::{Input, ProximityReader};
use lc_core::temperature::CentiCelsius;

/// The unit's image (`lc-host calibrate` output), 4-byte aligned.
static IMAGE: &[u8] = lc_core::include_image!("../../firmware/data/demo-proximity.lcim");

/// Gates in the script.
const GATES: u32 = 300;
/// A hello every this many gates.
const HELLO_EVERY: u32 = 32;

/// The nRF51's UART0, polled: one byte at a time, waiting for TXDRDY.
struct Uart;

const UART: usize = 0x4000_2000;
const STARTTX: usize = UART + 0x008;
const EVENTS_TXDRDY: usize = UART + 0x11C;
const ENABLE: usize = UART + 0x500;
const PSELTXD: usize = UART + 0x50C;
const TXD: usize = UART + 0x51C;
const BAUDRATE: usize = UART + 0x524;

#[allow(unsafe_code)]
fn reg_write(addr: usize, v: u32) {
    // SAFETY: addresses of the nRF51 UART0's registers (nRF51 reference
    // manual, UART chapter), word aligned, mapped on this part.
    unsafe { core::ptr::write_volatile(addr as *mut u32, v) }
}

#[allow(unsafe_code)]
fn reg_read(addr: usize) -> u32 {
    // SAFETY: as in `reg_write`.
    unsafe { core::ptr::read_volatile(addr as *const u32) }
}

impl Uart {
    fn new() -> Self {
        reg_write(PSELTXD, 24); // the micro:bit's TX pin
        reg_write(BAUDRATE, 0x01D7_E000); // 115 200 baud
        reg_write(ENABLE, 4);
        reg_write(STARTTX, 1);
        Uart
    }
}

/// The UART stalled: TXDRDY never came.
#[derive(Debug)]
struct Stalled;

impl core::fmt::Display for Stalled {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        f.write_str("the UART never signalled a byte sent")
    }
}

impl core::error::Error for Stalled {}

impl embedded_io::Error for Stalled {
    fn kind(&self) -> embedded_io::ErrorKind {
        embedded_io::ErrorKind::TimedOut
    }
}

impl embedded_io::ErrorType for Uart {
    type Error = Stalled;
}

impl embedded_io::Write for Uart {
    fn write(&mut self, buf: &[u8]) -> Result<usize, Stalled> {
        for &b in buf {
            reg_write(EVENTS_TXDRDY, 0);
            reg_write(TXD, u32::from(b));
            let mut spins = 0u32;
            while reg_read(EVENTS_TXDRDY) == 0 {
                spins += 1;
                if spins > 1_000_000 {
                    return Err(Stalled);
                }
            }
        }
        Ok(buf.len())
    }

    fn flush(&mut self) -> Result<(), Stalled> {
        Ok(())
    }
}

/// The scripted measurement of gate `i`.
fn input_of(i: u32) -> Input {
    let ticks = if i % 40 == 39 {
        0
    } else {
        124_000 + (i * 37) % 15_000
    };
    let cycles = if i % 53 == 52 { 0 } else { 16_384 };
    Input {
        temperature: Some(CentiCelsius(2_350 + (i % 300) as i32)),
        ..Input::counts(CountPair::new(cycles, ticks))
    }
}

/// Link faults injected on purpose.
#[derive(Clone, Copy, PartialEq)]
enum Damage {
    None,
    /// One byte of the count-pair frame flipped.
    Corrupt,
    /// The reading frame not sent.
    Skip,
    /// Stray bytes (and a delimiter) before the count-pair frame.
    Stray,
    /// The count-pair frame cut short: it and the reading frame after it
    /// run together into one bad chunk.
    Cut,
}

fn damage_of(i: u32) -> Damage {
    match i {
        100 => Damage::Corrupt,
        150 => Damage::Skip,
        200 => Damage::Stray,
        250 => Damage::Cut,
        _ => Damage::None,
    }
}

#[entry]
fn main() -> ! {
    let Some(mut host) = hio::hstdout().ok() else {
        exit(false)
    };
    let mut say = |line: &Line| {
        let _ = host.write_all(line.as_bytes());
    };
    let Ok(image) = Image::new(black_box(IMAGE)) else {
        exit(false)
    };
    let Ok(reader) = ProximityReader::new(&image) else {
        exit(false)
    };
    let mut readers = [reader.clone(), reader];
    let mut uart = Uart::new();
    let mut enc = Encoder::new();
    let hello = Hello::new(b"DEMO-01-0007", image.crc());
    let (mut bad, mut dropped, mut frames, mut failed) = (0u32, 0u32, 0u32, false);
    // A delimiter first: ends whatever the listener caught before.
    let _ = embedded_io::Write::write(&mut uart, &[0]);
    for i in 0..GATES {
        if i % HELLO_EVERY == 0 {
            failed |= enc.send(&mut uart, &Record::Hello(hello)).is_err();
            frames += 1;
        }
        let ch = (i % 2) as u8;
        let input = input_of(i);
        let counts = Record::Counts(Counts::of_input(ch, &input));
        let seq = enc.next_sequence();
        let reading = readers[usize::from(ch)].read(&input);
        let rec = Record::Reading(ReadingRecord::of_reading(
            ch,
            seq,
            &lc_core::reader::Reading::Proximity(reading),
        ));
        let damage = damage_of(i);
        let frame = enc.encode(&counts);
        let bytes = frame.as_bytes();
        match damage {
            Damage::Corrupt => {
                // Flip a bit of a payload byte (never making a zero: the
                // frame stays one chunk and fails its CRC).
                let mut copy = [0u8; lc_core::link::MAX_FRAME];
                copy[..bytes.len()].copy_from_slice(bytes);
                copy[6] ^= if copy[6] == 0x40 { 0x20 } else { 0x40 };
                failed |= embedded_io::Write::write_all(&mut uart, &copy[..bytes.len()]).is_err();
                bad += 1;
                dropped += 1;
            }
            Damage::Stray => {
                failed |= embedded_io::Write::write_all(&mut uart, &[0x13, 0x37, 0xC0, 0]).is_err();
                failed |= embedded_io::Write::write_all(&mut uart, bytes).is_err();
                bad += 1;
                frames += 1;
            }
            Damage::Cut => {
                failed |=
                    embedded_io::Write::write_all(&mut uart, &bytes[..bytes.len() / 2]).is_err();
                bad += 1;
                dropped += 2;
            }
            _ => {
                failed |= embedded_io::Write::write_all(&mut uart, bytes).is_err();
                frames += 1;
            }
        }
        if matches!(damage, Damage::Corrupt | Damage::Cut) {
            let mut l = Line::new();
            let _ = writeln!(l, "lost {seq}");
            say(&l);
        }
        let rframe = enc.encode(&rec);
        match damage {
            Damage::Skip => dropped += 1,
            // Its bytes ran into the cut frame's chunk: sent, not received.
            _ => {
                failed |= embedded_io::Write::write_all(&mut uart, rframe.as_bytes()).is_err();
                if damage != Damage::Cut {
                    frames += 1;
                }
            }
        }
        let mut l = Line::new();
        let _ = writeln!(
            l,
            "reading {seq} {ch} {} {} - {}",
            lc_core::link::status_code(reading.status),
            reading.gap,
            reading.shift.raw_q40()
        );
        say(&l);
    }
    let mut l = Line::new();
    let _ = writeln!(l, "expect bad {bad} dropped {dropped} frames {frames}");
    say(&l);
    exit(!failed)
}
